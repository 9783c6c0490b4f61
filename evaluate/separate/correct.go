package separate

import (
	"math"
	"math/rand/v2"
)

// correctionPasses is the most passes of the error-correction procedure
// before the hull program takes over. On data separable with a wide
// margin it finds a witness in a few passes (Novikoff 1962: at most
// (R/γ)² corrections); on data that is not separable it never stops by
// itself, and each pass costs one look at every distinct row.
const correctionPasses = 25

// correction is the outcome of the error-correction passes: the hyperplane
// that misplaced the fewest distinct rows at the end of a pass (the
// "pocket", Gallant 1990), over the full width.
type correction struct {
	weights []float64
	bias    float64
	errors  int // distinct rows it misplaces (or puts on the hyperplane)
}

// correctErrors runs the perceptron's error-correction procedure
// (Rosenblatt 1958) on the distinct rows pos (target +1) and neg (−1) over
// the coordinates active, with a bias, visiting the rows in a seeded order
// each pass: w += y·x and b += y on each row with y(w·x + b) ≤ 0.
func correctErrors(p Points, active, pos, neg []int, seed uint64) correction {
	type example struct {
		row    int
		target float64
	}
	examples := make([]example, 0, len(pos)+len(neg))
	for _, r := range pos {
		examples = append(examples, example{r, 1})
	}
	for _, r := range neg {
		examples = append(examples, example{r, -1})
	}
	// Compact rows: the active coordinates only.
	x := make([]float64, len(examples)*len(active))
	for e, ex := range examples {
		row := p.Row(ex.row)
		for k, j := range active {
			x[e*len(active)+k] = row[j]
		}
	}
	w := make([]float64, len(active))
	bias := 0.0
	best := correction{errors: math.MaxInt}
	misplaced := func() int {
		n := 0
		for e, ex := range examples {
			if ex.target*(dot(w, x[e*len(active):(e+1)*len(active)])+bias) <= 0 {
				n++
			}
		}
		return n
	}
	rng := rand.New(rand.NewPCG(seed, 0x70617373))
	order := make([]int, len(examples))
	for i := range order {
		order[i] = i
	}
	for pass := 0; pass < correctionPasses; pass++ {
		rng.Shuffle(len(order), func(i, j int) { order[i], order[j] = order[j], order[i] })
		for _, e := range order {
			ex := examples[e]
			xe := x[e*len(active) : (e+1)*len(active)]
			if ex.target*(dot(w, xe)+bias) <= 0 {
				for k, v := range xe {
					w[k] += ex.target * v
				}
				bias += ex.target
			}
		}
		if n := misplaced(); n < best.errors {
			best.errors, best.bias = n, bias
			best.weights = make([]float64, p.Width)
			for k, j := range active {
				best.weights[j] = w[k]
			}
			if n == 0 {
				break
			}
		}
	}
	return best
}

// witness turns a hyperplane that misplaces no row into a witness with the
// threshold midway between the sides: the least positive score and the
// greatest negative one.
func (c correction) witness(p Points, pos, neg []int) *Witness {
	low, high := scoreRange(p, c.weights, pos, neg)
	return &Witness{Weights: c.weights, Bias: -(low + high) / 2}
}

// scoreRange returns the least score w·x of the positive rows and the
// greatest of the negative rows.
func scoreRange(p Points, weights []float64, pos, neg []int) (low, high float64) {
	low, high = math.Inf(1), math.Inf(-1)
	for _, r := range pos {
		low = min(low, dot(weights, p.Row(r)))
	}
	for _, r := range neg {
		high = max(high, dot(weights, p.Row(r)))
	}
	return low, high
}
