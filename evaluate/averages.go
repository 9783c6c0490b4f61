package evaluate

import "math"

// Averaged is precision, recall and F1 averaged over the classes of a
// confusion table in one of three ways (Confusion.Micro, Macro, Weighted).
type Averaged struct {
	Recall    float64 `json:"recall"`
	Precision float64 `json:"precision"`
	F1        float64 `json:"f1"`
}

// Micro pools the counts of every class before dividing: right predictions
// over all predictions (precision) and over all rows (recall). With one
// predicted class per row both are the accuracy, and so is F1.
func (c *Confusion) Micro() Averaged {
	correct, total := float64(c.correct()), float64(c.Total())
	// Σ predicted = Σ support = total: every row is predicted once.
	precision, recall := ratio(correct, total), ratio(correct, total)
	return Averaged{Recall: recall, Precision: precision, F1: ratio(2*precision*recall, precision+recall)}
}

// Macro is the plain mean of each class's figure over the classes that
// occur in the truth or in the predictions, as MacroF1 counts them; so its
// F1 is MacroF1. A class never predicted has precision 0, one with no rows
// recall 0 (the package convention), and both count in the mean.
func (c *Confusion) Macro() Averaged {
	metrics := c.PerClass()
	occurs := func(m ClassMetrics) bool { return m.Support > 0 || m.Predicted > 0 }
	return Averaged{
		Recall:    meanOver(metrics, func(m ClassMetrics) (float64, bool) { return m.Recall, occurs(m) }),
		Precision: meanOver(metrics, func(m ClassMetrics) (float64, bool) { return m.Precision, occurs(m) }),
		F1:        meanOver(metrics, func(m ClassMetrics) (float64, bool) { return m.F1, occurs(m) }),
	}
}

// Weighted is the mean of each class's figure weighted by its rows (its
// support), so that a class counts as often as it occurs. Its recall is the
// accuracy.
func (c *Confusion) Weighted() Averaged {
	var a Averaged
	total := 0
	for _, m := range c.PerClass() {
		w := float64(m.Support)
		a.Recall += w * m.Recall
		a.Precision += w * m.Precision
		a.F1 += w * m.F1
		total += m.Support
	}
	n := float64(total)
	return Averaged{Recall: ratio(a.Recall, n), Precision: ratio(a.Precision, n), F1: ratio(a.F1, n)}
}

// Matthews returns the Matthews correlation coefficient of the table in
// its multi-class form (Gorodkin 2004, the R_K statistic): the correlation
// between the one-hot coded truth and predictions,
//
//	MCC = (c·s − Σ_k p_k t_k) / √((s² − Σ_k p_k²)(s² − Σ_k t_k²)),
//
// with c the right predictions, s the rows, t_k the rows of class k and
// p_k the rows predicted as k. For two classes it is Matthews' (1975)
// coefficient, the phi coefficient of the 2×2 table. It lies in [−1, 1]
// and is 0 when a denominator factor is 0 (all rows of one class, or all
// predicted as one), by the package convention.
func (c *Confusion) Matthews() float64 {
	support, predicted := c.RowTotals(), c.ColTotals()
	s := float64(c.Total())
	var pt, pp, tt float64
	for k := range support {
		t, p := float64(support[k]), float64(predicted[k])
		pt += p * t
		pp += p * p
		tt += t * t
	}
	cov := float64(c.correct())*s - pt
	den := (s*s - pp) * (s*s - tt)
	if den <= 0 {
		return 0
	}
	return cov / math.Sqrt(den)
}

// Interval is a two-sided confidence interval.
type Interval struct {
	Low  float64 `json:"low"`
	High float64 `json:"high"`
}

// Z95 is the standard normal quantile of a two-sided 95% interval,
// Φ⁻¹(0.975).
const Z95 = 1.959963984540054

// Wilson returns Wilson's (1927) score interval for a proportion of
// successes out of n trials at normal quantile z (Z95 for 95%): the
// proportions p₀ for which |p̂ − p₀| ≤ z·√(p₀(1−p₀)/n),
//
//	(p̂ + z²/2n ± z·√(p̂(1−p̂)/n + z²/4n²)) / (1 + z²/n).
//
// Unlike the normal-approximation interval it stays within [0, 1] and is
// not empty at p̂ = 0 or 1 (Newcombe 1998). It returns [0, 1] for n ≤ 0.
func Wilson(successes, n int, z float64) Interval {
	if n <= 0 {
		return Interval{Low: 0, High: 1}
	}
	fn := float64(n)
	p := float64(successes) / fn
	z2 := z * z
	den := 1 + z2/fn
	center := (p + z2/(2*fn)) / den
	half := z * math.Sqrt(p*(1-p)/fn+z2/(4*fn*fn)) / den
	return Interval{Low: math.Max(0, center-half), High: math.Min(1, center+half)}
}

// AccuracyInterval returns the 95% Wilson interval of the table's accuracy,
// taking its rows as independent trials. Over repeated cross-validation a
// row counts once per repeat, so the interval is narrower than the data
// warrant; read it for one repeat.
func (c *Confusion) AccuracyInterval() Interval {
	return Wilson(c.correct(), c.Total(), Z95)
}
