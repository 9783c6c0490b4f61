package separate

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
)

// Points is a row-major matrix of rows in one space: Width coordinates per
// row, row i at Values[i*Width:(i+1)*Width].
type Points struct {
	Width  int
	Values []float64
	// Rows is the number of rows when Width is 0 (rows with no
	// coordinates); it is ignored otherwise.
	Rows int
}

// Len returns the number of rows.
func (p Points) Len() int {
	if p.Width <= 0 {
		return p.Rows
	}
	return len(p.Values) / p.Width
}

// Row returns row i; the slice aliases Values. It panics if i is out of
// range.
func (p Points) Row(i int) []float64 {
	return p.Values[i*p.Width : (i+1)*p.Width : (i+1)*p.Width]
}

// Verdict is the answer for one split.
type Verdict string

const (
	Separable    Verdict = "separable"
	NotSeparable Verdict = "not separable"
	// Undecided means neither answer passed verification; Result.Reason
	// says why. It is never a guess.
	Undecided Verdict = "undecided (numerical)"
	// OutOfBudget means the solver spent its pivot budget before it found
	// a proof; Result.Reason says what it had learned.
	OutOfBudget Verdict = "undecided (budget)"
	// OutOfTime means the context ended (a wall-clock timeout) before a
	// proof was found.
	OutOfTime Verdict = "undecided (timeout)"
	// TooManyInputs means more inputs vary on the split's rows than
	// Options.MaxInputs, so the hull program was not solved.
	TooManyInputs Verdict = "undecided (too many inputs)"
)

// Decided reports whether v is an answer (separable or not), not one of
// the undecided verdicts.
func (v Verdict) Decided() bool { return v == Separable || v == NotSeparable }

// MaxInputs is the default cap on the inputs that vary on a split's rows
// (the hull program has that many rows plus two). The basis inverse is
// dense: at the cap it holds 514² values (2 MiB) and each pivot costs
// about 0.3 million multiply-adds besides pricing; the pivot budget, not
// the cap, bounds the time.
const MaxInputs = 512

// DefaultBudget is the default number of simplex pivots one split may
// spend. A pivot costs about m² multiply-adds for m varying inputs plus a
// pass over the working set: about 1 ms at m = 512 on two shared cores
// (BenchmarkSeparateDegenerate), so the default keeps a split to a few
// seconds even at the input cap. The splits of the open datasets of
// testdata/open took at most 900 pivots with the default encoding (the
// search for a smaller certificate included), and about 2600 with
// thermometer:24 (mlc_churn, 359 inputs); the degenerate 0/1 split of
// 2000 rows and 512 inputs of the benchmark needs about 9000.
const DefaultBudget = 5_000

// ErrEmptySide is returned when a split has no rows on one side.
var ErrEmptySide = errors.New("separate: a side of the split has no rows")

// Certificate proves that no hyperplane separates two sets of rows: weights
// on rows of each side, non-negative and summing to 1 per side, whose
// weighted means coincide, so the convex hulls of the sides intersect.
type Certificate struct {
	// Rows are 1-based row numbers (pattern index i is row i+1), positive
	// side first, each side in ascending order.
	Rows []int `json:"rows"`
	// Positive marks the rows of the positive side.
	Positive []bool `json:"positive"`
	// Weights are the convex weights of the rows, aligned with Rows.
	Weights []float64 `json:"weights"`
	// Residual is ‖Σλx − Σμx‖∞ recomputed by VerifyCertificate.
	Residual float64 `json:"residual"`
	// Point is the common point of the two hulls, Σλx over the positive
	// rows, in the coordinates of the space.
	Point []float64 `json:"common_point"`
	// Minimal is true when no row can be dropped: the weights are the only
	// ones that balance these rows (their columns (x, 1, 0) and (−x, 0, 1)
	// are linearly independent), so there are at most inputs + 2 of them.
	Minimal bool `json:"minimal"`
	// Values are the coordinates of each row, aligned with Rows. Check
	// fills them (and rewrites Point) in the data's own units; Separate
	// leaves them nil.
	Values [][]float64 `json:"values,omitempty"`
}

// Witness is a hyperplane that puts every positive row strictly on its
// positive side (w·x + b > 0) and every negative row strictly on the other.
type Witness struct {
	// Weights has one weight per coordinate of the space; coordinates that
	// do not vary on the split's rows get 0.
	Weights []float64 `json:"weights"`
	Bias    float64   `json:"bias"`
	// Margin is the smallest Euclidean distance of a row to the
	// hyperplane in the coordinates of the space, min |w·x + b| / ‖w‖₂,
	// recomputed by VerifyWitness.
	Margin float64 `json:"margin"`
	// Rows is the number of rows VerifyWitness checked.
	Rows int `json:"rows_checked"`
	// Constant are the coordinates (0-based) that are the same on every
	// row of the split: they cannot tell the sides apart, and their weight
	// is 0. Other weights may be 0 too.
	Constant []int `json:"constant_inputs"`
	// DataWeights and DataBias are the same hyperplane in the data's own
	// units, for a space that standardizes its columns (Check fills them
	// in the raw space): w_j/sd_j and b − Σ w_j·mean_j/sd_j.
	DataWeights []float64 `json:"data_weights,omitempty"`
	DataBias    *float64  `json:"data_bias,omitempty"`
}

// Result is the verified answer for one split.
type Result struct {
	Verdict     Verdict
	Certificate *Certificate // when NotSeparable
	Witness     *Witness     // when Separable
	// Reason says why the answer is undecided, and what was learned.
	Reason string
	// Distance is the L1 distance between the convex hulls of the two
	// sides that the linear program found (0 when they meet, and when no
	// program was needed).
	Distance float64
	// Pivots is the number of simplex pivots spent.
	Pivots int
}

// Options tunes Separate. The zero value is ready to use.
type Options struct {
	// Seed seeds the order of the error-correction passes and the
	// perturbation of the simplex.
	Seed uint64
	// MaxInputs caps the inputs that vary on the split's rows (default
	// MaxInputs): above it the hull program is not solved and the verdict
	// is TooManyInputs, unless a pattern on both sides proves the split
	// not separable at once.
	MaxInputs int
	// Budget caps the simplex pivots (default DefaultBudget; negative:
	// no cap). Past it the verdict is OutOfBudget.
	Budget int
}

// Separate decides whether the positive rows and the negative rows of p
// (0-based pattern indexes) can be split by a hyperplane, and returns the
// verified proof. Rows on neither side are ignored; a row on both sides is
// an error. It does not modify p. When ctx ends, the verdict is OutOfTime.
//
// It collapses repeated patterns (a pattern on both sides is at once a
// certificate of two rows), leaves out the coordinates that do not vary on
// the split's rows, tries error-correction passes over the rows for a
// witness (Rosenblatt 1958), and only then solves the hull program.
func Separate(ctx context.Context, p Points, positive, negative []int, opts Options) (*Result, error) {
	if len(positive) == 0 || len(negative) == 0 {
		return nil, ErrEmptySide
	}
	if err := checkRows(p, positive, negative); err != nil {
		return nil, err
	}
	pos, neg := uniquePatterns(p, positive), uniquePatterns(p, negative)
	if c := sharedPattern(p, pos, neg); c != nil {
		return verified(p, positive, negative, &Result{Verdict: NotSeparable, Certificate: c})
	}
	if err := ctx.Err(); err != nil {
		return &Result{Verdict: OutOfTime, Reason: "the timeout passed before this split was started"}, nil
	}
	active := varying(p, pos.rows, neg.rows)
	if limit := cmpOr(opts.MaxInputs, MaxInputs); len(active) > limit {
		return &Result{Verdict: TooManyInputs, Reason: fmt.Sprintf(
			"not solved: %d inputs vary on the rows of the split, over the cap of %d for the exact linear program",
			len(active), limit)}, nil
	}
	pass := correctErrors(p, active, pos.rows, neg.rows, opts.Seed)
	if pass.errors == 0 {
		w := pass.witness(p, pos.rows, neg.rows)
		w.Constant = constantInputs(p.Width, active)
		return verified(p, positive, negative, &Result{Verdict: Separable, Witness: w})
	}
	budget := &pivotBudget{limit: opts.Budget}
	switch {
	case opts.Budget == 0:
		budget.limit = DefaultBudget
	case opts.Budget < 0:
		budget.limit = 0
	}
	s := newHullSearch(ctx, p, active, budget, opts.Seed)
	cert, w, err := s.run(pos.rows, neg.rows)
	res := &Result{Distance: s.distance, Pivots: budget.pivots}
	switch {
	case errors.Is(err, errBudget):
		res.Verdict = OutOfBudget
		res.Reason = fmt.Sprintf("the budget of %d pivots ran out (raise it with --budget); %s", budget.limit, s.learned(pass, len(pos.rows)+len(neg.rows)))
		return res, nil
	case errors.Is(err, context.DeadlineExceeded), errors.Is(err, context.Canceled):
		res.Verdict = OutOfTime
		res.Reason = fmt.Sprintf("the timeout passed after %d pivots; %s", budget.pivots, s.learned(pass, len(pos.rows)+len(neg.rows)))
		return res, nil
	case err != nil:
		res.Verdict, res.Reason = Undecided, err.Error()
		return res, nil
	case cert != nil:
		cert = shrinkCertificate(ctx, p, active, pos.rows, neg.rows, reduceCertificate(p, active, cert), budget, opts.Seed)
		res.Verdict, res.Certificate, res.Pivots = NotSeparable, cert, budget.pivots
		return verified(p, positive, negative, res)
	}
	w.Constant = constantInputs(p.Width, active)
	res.Verdict, res.Witness = Separable, w
	return verified(p, positive, negative, res)
}

func cmpOr(v, fallback int) int {
	if v == 0 {
		return fallback
	}
	return v
}

// verified runs the independent check on r's proof; a proof that fails it
// turns the result into Undecided with the reason. It fills the common
// point of a certificate.
func verified(p Points, positive, negative []int, r *Result) (*Result, error) {
	var err error
	switch {
	case r.Certificate != nil:
		r.Certificate.Residual, err = VerifyCertificate(p, positive, negative, r.Certificate)
		if err == nil {
			r.Certificate.Point = commonPoint(p, r.Certificate)
		}
	case r.Witness != nil:
		r.Witness.Margin, r.Witness.Rows, err = VerifyWitness(p, positive, negative, r.Witness)
	}
	if err != nil {
		return &Result{Verdict: Undecided, Reason: err.Error(), Distance: r.Distance, Pivots: r.Pivots}, nil
	}
	return r, nil
}

// commonPoint is Σλx over the positive rows of c.
func commonPoint(p Points, c *Certificate) []float64 {
	point := make([]float64, p.Width)
	for i, row := range c.Rows {
		if c.Positive[i] {
			for j, v := range p.Row(row - 1) {
				point[j] += c.Weights[i] * v
			}
		}
	}
	return point
}

func checkRows(p Points, positive, negative []int) error {
	n := p.Len()
	side := make(map[int]bool, len(positive))
	for _, r := range positive {
		if r < 0 || r >= n {
			return fmt.Errorf("separate: row index %d out of range [0,%d)", r, n)
		}
		side[r] = true
	}
	for _, r := range negative {
		if r < 0 || r >= n {
			return fmt.Errorf("separate: row index %d out of range [0,%d)", r, n)
		}
		if side[r] {
			return fmt.Errorf("separate: row %d is on both sides of the split", r+1)
		}
	}
	for _, rows := range [][]int{positive, negative} {
		for _, r := range rows {
			for j, v := range p.Row(r) {
				if math.IsNaN(v) || math.IsInf(v, 0) {
					return fmt.Errorf("separate: row %d input %d is not finite (%v)", r+1, j+1, v)
				}
			}
		}
	}
	return nil
}

// patternSet is the distinct patterns of one side: the first row of each,
// ascending, and how many rows share it.
type patternSet struct {
	rows   []int
	copies []int
	first  map[string]int // pattern key → first row
}

func uniquePatterns(p Points, rows []int) patternSet {
	s := patternSet{first: make(map[string]int, len(rows))}
	sorted := slices.Clone(rows)
	slices.Sort(sorted)
	index := map[string]int{}
	for _, r := range sorted {
		k := patternKey(p.Row(r))
		if i, seen := index[k]; seen {
			s.copies[i]++
			continue
		}
		index[k] = len(s.rows)
		s.first[k] = r
		s.rows = append(s.rows, r)
		s.copies = append(s.copies, 1)
	}
	return s
}

// sharedPattern returns the two-row certificate of a pattern found on
// both sides, the first such in row order, or nil.
func sharedPattern(p Points, pos, neg patternSet) *Certificate {
	for _, r := range pos.rows {
		if q, ok := neg.first[patternKey(p.Row(r))]; ok {
			return &Certificate{Rows: []int{r + 1, q + 1}, Positive: []bool{true, false}, Weights: []float64{1, 1}, Minimal: true}
		}
	}
	return nil
}

// patternKey is a map key equal for bit-identical patterns.
func patternKey(row []float64) string {
	b := make([]byte, 0, 8*len(row))
	for _, v := range row {
		if v == 0 {
			v = 0 // −0 and +0 are the same input
		}
		u := math.Float64bits(v)
		b = append(b, byte(u), byte(u>>8), byte(u>>16), byte(u>>24), byte(u>>32), byte(u>>40), byte(u>>48), byte(u>>56))
	}
	return string(b)
}

// varying returns the coordinates whose value is not the same on every
// row of pos and neg. The others cannot tell the sides apart: a witness
// gives them weight 0, and the weighted means of a certificate agree on
// them whatever the weights.
func varying(p Points, pos, neg []int) []int {
	first := p.Row(pos[0])
	var active []int
	for j := 0; j < p.Width; j++ {
		for _, rows := range [][]int{pos, neg} {
			if slices.ContainsFunc(rows, func(r int) bool { return p.Row(r)[j] != first[j] }) {
				active = append(active, j)
				break
			}
		}
	}
	return active
}

// constantInputs is the coordinates below width that are not active.
func constantInputs(width int, active []int) []int {
	constant := []int{}
	for j := 0; j < width; j++ {
		if !slices.Contains(active, j) {
			constant = append(constant, j)
		}
	}
	return constant
}

// scale is the largest magnitude of an input of the rows, at least 1.
func scale(p Points, rows ...[]int) float64 {
	s := 1.0
	for _, side := range rows {
		for _, r := range side {
			for _, v := range p.Row(r) {
				s = max(s, math.Abs(v))
			}
		}
	}
	return s
}

func dot(a, b []float64) float64 {
	s := 0.0
	for i, v := range a {
		s += v * b[i]
	}
	return s
}
