package separate

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"slices"

	"deltafit/fit"
)

// Verdict is the answer for one split.
type Verdict string

const (
	Separable    Verdict = "separable"
	NotSeparable Verdict = "not separable"
	// Undecided means neither answer passed verification; Result.Reason
	// says why. It is never a guess.
	Undecided Verdict = "undecided (numerical)"
	// TooManyInputs means the input dimension is over Options.MaxInputs,
	// so the hull program was not solved; Result.Reason names both.
	TooManyInputs Verdict = "undecided (too many inputs)"
)

// MaxInputs is the default cap on the input dimension D for which the hull
// program is solved. The dense simplex works on D+2 rows and its time grows
// about as D⁴: one split of 1000 rows took 0.9 s at D = 128, 6 s at 192,
// 27 s at 256 and 528 s at 512 on two cores, one of 2000 rows 74 s at 256
// (BenchmarkSeparateWidth), one of 20,000 rows 5 s at 128. At the cap a
// split of a few thousand rows takes about a second, which leaves room for
// many splits, retries and harder data under a minute.
const MaxInputs = 128

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
}

// Witness is a hyperplane that puts every positive row strictly on its
// positive side (w·x + b > 0) and every negative row strictly on the other.
type Witness struct {
	Weights []float64 `json:"weights"` // one per input
	Bias    float64   `json:"bias"`
	// Margin is the smallest distance of a row to the hyperplane,
	// min |w·x + b| / ‖w‖₂, recomputed by VerifyWitness.
	Margin float64 `json:"margin"`
	// Rows is the number of rows VerifyWitness checked.
	Rows int `json:"rows_checked"`
}

// Result is the verified answer for one split.
type Result struct {
	Verdict     Verdict
	Certificate *Certificate // when NotSeparable
	Witness     *Witness     // when Separable
	// Reason says why the answer is Undecided.
	Reason string
	// Distance is the L1 distance between the convex hulls of the two
	// sides that the linear program found (0 when they meet).
	Distance float64
}

// Options tunes Separate. The zero value is ready to use.
type Options struct {
	// Seed seeds the tiny perturbation used to step off a degenerate
	// vertex when reading the hyperplane off the linear program.
	Seed uint64
	// MaxInputs caps the input dimension (default MaxInputs): above it the
	// hull program is not solved and the verdict is TooManyInputs, unless
	// a pattern on both sides proves the split not separable at once.
	MaxInputs int
}

// Separate decides whether the positive rows and the negative rows of p
// (0-based pattern indexes) can be split by a hyperplane, and returns the
// verified proof. Rows on neither side are ignored; a row on both sides is
// an error. It does not modify p.
func Separate(p fit.Store, positive, negative []int, opts Options) (*Result, error) {
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
	if limit := cmp.Or(opts.MaxInputs, MaxInputs); p.Inputs() > limit {
		return &Result{Verdict: TooManyInputs, Reason: fmt.Sprintf(
			"not solved: %d inputs are over the cap of %d for the exact linear program, whose time grows about as the fourth power of the inputs",
			p.Inputs(), limit)}, nil
	}
	cert, w, distance, err := search(p, pos.rows, neg.rows, opts.Seed)
	switch {
	case err != nil:
		return &Result{Verdict: Undecided, Reason: err.Error(), Distance: distance}, nil
	case cert != nil:
		return verified(p, positive, negative, &Result{Verdict: NotSeparable, Certificate: cert, Distance: distance})
	}
	return verified(p, positive, negative, &Result{Verdict: Separable, Witness: w, Distance: distance})
}

// Working set sizes: below wholeProgram distinct rows the hull program
// takes every row at once; above, it starts from startRows rows per side.
const (
	wholeProgram = 1000
	startRows    = 250
)

// search solves the hull program on a growing working set of rows. When the
// hulls of the working set meet, their certificate holds for the whole
// split (a subset's hull lies inside the whole hull). When they are apart,
// the direction read off the program is tried on every row; the rows on
// the wrong side of its hyperplane, the worst first, join the working set,
// which grows strictly until the direction separates every row. distance
// is the hull distance of the last working set.
func search(p fit.Store, pos, neg []int, seed uint64) (cert *Certificate, w *Witness, distance float64, err error) {
	workPos, workNeg := pos, neg
	if len(pos)+len(neg) > wholeProgram {
		workPos, workNeg = spread(pos, startRows), spread(neg, startRows)
	}
	inWork := map[int]bool{}
	for _, r := range append(slices.Clone(workPos), workNeg...) {
		inWork[r] = true
	}
	grow := max(p.Inputs()+2, 50)
	buf := make([]float64, p.Inputs())
	for {
		h, err := solveHullRetry(p, workPos, workNeg, seed)
		if err != nil {
			return nil, nil, 0, err
		}
		if h.distance <= zeroDistance(p) {
			return h.certificate(), nil, h.distance, nil
		}
		weights, err := h.direction(p, seed)
		if err != nil {
			return nil, nil, h.distance, err
		}
		// The working set's hyperplane sits midway between its sides.
		low, high := scoreRange(p, weights, workPos, workNeg)
		if !(low > high) {
			return nil, nil, h.distance, fmt.Errorf("separate: the direction read off the hull program does not separate its own rows (least positive score %g, greatest negative %g)", low, high)
		}
		cut := (low + high) / 2
		lowAll, highAll := scoreRange(p, weights, pos, neg)
		if lowAll > highAll {
			return nil, &Witness{Weights: weights, Bias: -(lowAll + highAll) / 2}, h.distance, nil
		}
		added := 0
		for k, side := range [][]int{pos, neg} {
			var wrong []int
			var depth []float64
			for _, r := range side {
				s := dot(weights, p.RowTo(buf, r)) - cut
				if k == 1 {
					s = -s
				}
				if s <= 0 && !inWork[r] {
					wrong = append(wrong, r)
					depth = append(depth, s)
				}
			}
			order := make([]int, len(wrong))
			for i := range order {
				order[i] = i
			}
			slices.SortStableFunc(order, func(a, b int) int { return cmp.Compare(depth[a], depth[b]) })
			for _, i := range order[:min(grow, len(order))] {
				inWork[wrong[i]] = true
				if k == 0 {
					workPos = append(workPos, wrong[i])
				} else {
					workNeg = append(workNeg, wrong[i])
				}
				added++
			}
		}
		if added == 0 {
			return nil, nil, h.distance, errors.New("separate: the working set stopped growing before its hyperplane separated every row")
		}
	}
}

// spread returns at most n of rows, evenly spaced.
func spread(rows []int, n int) []int {
	if len(rows) <= n {
		return slices.Clone(rows)
	}
	picked := make([]int, n)
	for i := range picked {
		picked[i] = rows[i*len(rows)/n]
	}
	return picked
}

// scoreRange returns the least score w·x of the positive rows and the
// greatest of the negative rows.
func scoreRange(p fit.Store, weights []float64, pos, neg []int) (low, high float64) {
	low, high = math.Inf(1), math.Inf(-1)
	buf := make([]float64, p.Inputs())
	for _, r := range pos {
		low = min(low, dot(weights, p.RowTo(buf, r)))
	}
	for _, r := range neg {
		high = max(high, dot(weights, p.RowTo(buf, r)))
	}
	return low, high
}

// verified runs the independent check on r's proof; a proof that fails it
// turns the result into Undecided with the reason.
func verified(p fit.Store, positive, negative []int, r *Result) (*Result, error) {
	var err error
	switch {
	case r.Certificate != nil:
		r.Certificate.Residual, err = VerifyCertificate(p, positive, negative, r.Certificate)
	case r.Witness != nil:
		r.Witness.Margin, r.Witness.Rows, err = VerifyWitness(p, positive, negative, r.Witness)
	}
	if err != nil {
		return &Result{Verdict: Undecided, Reason: err.Error(), Distance: r.Distance}, nil
	}
	return r, nil
}

func checkRows(p fit.Store, positive, negative []int) error {
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
	buf := make([]float64, p.Inputs())
	for i := range n {
		for j, v := range p.RowTo(buf, i) {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return fmt.Errorf("separate: row %d input %d is not finite (%v)", i+1, j+1, v)
			}
		}
	}
	return nil
}

// patternSet is the distinct patterns of one side: the first row of each.
type patternSet struct {
	rows  []int
	first map[string]int // pattern key → first row
}

func uniquePatterns(p fit.Store, rows []int) patternSet {
	s := patternSet{first: make(map[string]int, len(rows))}
	sorted := slices.Clone(rows)
	slices.Sort(sorted)
	buf := make([]float64, p.Inputs())
	for _, r := range sorted {
		k := patternKey(p.RowTo(buf, r))
		if _, seen := s.first[k]; !seen {
			s.first[k] = r
			s.rows = append(s.rows, r)
		}
	}
	return s
}

// sharedPattern returns the two-row certificate of a pattern found on
// both sides, the first such in row order, or nil.
func sharedPattern(p fit.Store, pos, neg patternSet) *Certificate {
	buf := make([]float64, p.Inputs())
	for _, r := range pos.rows {
		if q, ok := neg.first[patternKey(p.RowTo(buf, r))]; ok {
			return &Certificate{Rows: []int{r + 1, q + 1}, Positive: []bool{true, false}, Weights: []float64{1, 1}}
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

// scale is the largest magnitude of an input, at least 1.
func scale(p fit.Store) float64 {
	s := 1.0
	buf := make([]float64, p.Inputs())
	for i := range p.Len() {
		for _, v := range p.RowTo(buf, i) {
			s = max(s, math.Abs(v))
		}
	}
	return s
}

// zeroDistance is the hull distance below which the hulls are taken to
// meet and a certificate is read off: well above the rounding of the
// simplex solves, well below any distance real data shows.
func zeroDistance(p fit.Store) float64 { return 1e-9 * scale(p) * float64(max(1, p.Inputs())) }
