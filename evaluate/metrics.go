package evaluate

import "math"

// ClassMetrics holds one class's scores read from a confusion table.
type ClassMetrics struct {
	Label     string  `json:"label"`
	Support   int     `json:"support"`   // rows of this true class
	Predicted int     `json:"predicted"` // rows predicted as this class
	Recall    float64 `json:"recall"`    // correct / support
	Precision float64 `json:"precision"` // correct / predicted
	F1        float64 `json:"f1"`        // harmonic mean of precision and recall
}

// ratio returns num/den, or 0 when den is 0 (the package convention).
func ratio(num, den float64) float64 {
	if den == 0 {
		return 0
	}
	return num / den
}

// Accuracy returns the fraction of rows predicted as their true class.
func (c *Confusion) Accuracy() float64 {
	return ratio(float64(c.correct()), float64(c.Total()))
}

// PerClass returns precision, recall, F1, support and predicted count for
// every class, in label order. F1 is 2·correct/(support + predicted), which
// equals the harmonic mean of precision and recall and is 0 when both are.
func (c *Confusion) PerClass() []ClassMetrics {
	support := c.RowTotals()
	predicted := c.ColTotals()
	metrics := make([]ClassMetrics, len(c.Labels))
	for i, label := range c.Labels {
		correct := float64(c.Matrix[i][i])
		metrics[i] = ClassMetrics{
			Label:     label,
			Support:   support[i],
			Predicted: predicted[i],
			Recall:    ratio(correct, float64(support[i])),
			Precision: ratio(correct, float64(predicted[i])),
			F1:        ratio(2*correct, float64(support[i]+predicted[i])),
		}
	}
	return metrics
}

// BalancedAccuracy returns the mean recall over the classes with
// support > 0, or 0 for an empty table.
func (c *Confusion) BalancedAccuracy() float64 {
	return meanOver(c.PerClass(), func(m ClassMetrics) (float64, bool) {
		return m.Recall, m.Support > 0
	})
}

// MacroF1 returns the mean F1 over the classes that occur in the truth or
// in the predictions (support > 0 or predicted > 0), or 0 for an empty
// table.
func (c *Confusion) MacroF1() float64 {
	return meanOver(c.PerClass(), func(m ClassMetrics) (float64, bool) {
		return m.F1, m.Support > 0 || m.Predicted > 0
	})
}

// meanOver averages value(m) over the classes for which value reports true.
func meanOver(metrics []ClassMetrics, value func(ClassMetrics) (float64, bool)) float64 {
	sum, n := 0.0, 0
	for _, m := range metrics {
		if v, ok := value(m); ok {
			sum += v
			n++
		}
	}
	return ratio(sum, float64(n))
}

// Kappa returns Cohen's (1960) κ = (p_o − p_e)/(1 − p_e). It is 1 when the
// chance agreement p_e is 1 (one class only, always predicted: perfect
// agreement) and 0 for an empty table.
func (c *Confusion) Kappa() float64 {
	total := float64(c.Total())
	if total == 0 {
		return 0
	}
	// Scaled by total²: κ = (total·correct − Σ row·col) / (total² − Σ row·col).
	support, predicted := c.RowTotals(), c.ColTotals()
	chance := 0.0
	for i := range support {
		chance += float64(support[i]) * float64(predicted[i])
	}
	den := total*total - chance
	if den == 0 {
		return 1
	}
	return (total*float64(c.correct()) - chance) / den
}

// MeanSD returns the mean and the sample standard deviation (divisor n−1)
// of xs. The standard deviation is 0 when len(xs) < 2, and both are 0 when
// xs is empty.
func MeanSD(xs []float64) (mean, sd float64) {
	if len(xs) == 0 {
		return 0, 0
	}
	for _, x := range xs {
		mean += x
	}
	mean /= float64(len(xs))
	if len(xs) < 2 {
		return mean, 0
	}
	// Two passes: sum squared deviations from the mean, less the rounding
	// error of the first pass (the corrected two-pass algorithm).
	var squares, deviations float64
	for _, x := range xs {
		d := x - mean
		squares += d * d
		deviations += d
	}
	n := float64(len(xs))
	variance := (squares - deviations*deviations/n) / (n - 1)
	return mean, math.Sqrt(variance)
}

// Majority returns the most frequent class in classes, the lowest index on
// a tie; so 0 when classes is empty. It returns -1 when numClasses < 1, and
// panics if a class is outside [0, numClasses).
func Majority(classes []int, numClasses int) int {
	if numClasses < 1 {
		return -1
	}
	counts := make([]int, numClasses)
	for _, class := range classes {
		counts[class]++
	}
	best := 0
	for class, count := range counts {
		if count > counts[best] {
			best = class
		}
	}
	return best
}
