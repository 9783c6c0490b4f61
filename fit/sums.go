package fit

import (
	"errors"
	"fmt"

	"gonum.org/v1/gonum/mat"
)

// The statistics below are sums over rows, so each can be computed on
// shards of the rows and the shards' sums merged: the sum over all rows is
// the merged sum, up to the round-off of another order of addition. They
// are the building blocks of a fit spread over machines.

// Correlation sums x̃x̃ᵀ over rows, x̃ = [x, 1]: R, the matrix whose
// eigenvalues bound a stable learning rate, is the sum over the row count.
type Correlation struct {
	Inputs int
	Rows   int
	Sum    []float64 // (Inputs+1)², row-major; both triangles are kept
	RowMax float64   // the largest ‖x̃‖² of the rows
}

// NewCorrelation returns an empty sum for patterns of inputs values.
func NewCorrelation(inputs int) *Correlation {
	return &Correlation{Inputs: inputs, Sum: make([]float64, (inputs+1)*(inputs+1))}
}

// AddRows adds rows (0-based indices of p; nil means all) to the sum. It
// panics if p's patterns are not c.Inputs long.
func (c *Correlation) AddRows(p Store, rows []int) {
	if p.Inputs() != c.Inputs {
		panic(fmt.Sprintf("fit: Correlation of %d inputs given patterns of %d", c.Inputs, p.Inputs()))
	}
	d := c.Inputs + 1
	buf, row := make([]float64, c.Inputs), make([]float64, d)
	add := func(i int) {
		x := p.RowTo(buf, i)
		// ‖x̃‖² summed as the trainer's spectrum sums it, so that RowMax
		// is the same to the last bit.
		copy(row, x)
		row[c.Inputs] = 1
		c.RowMax = max(c.RowMax, dot(row, row))
		for a := range d {
			xa := 1.0
			if a < c.Inputs {
				xa = x[a]
			}
			row := c.Sum[a*d : (a+1)*d]
			axpy(xa, x, row[:c.Inputs])
			row[c.Inputs] += xa
		}
		c.Rows++
	}
	if rows == nil {
		for i := range p.Len() {
			add(i)
		}
		return
	}
	for _, i := range rows {
		add(i)
	}
}

// Merge adds the sum of other rows.
func (c *Correlation) Merge(other *Correlation) error {
	if other.Inputs != c.Inputs {
		return fmt.Errorf("fit: cannot merge correlation sums of %d and %d inputs", other.Inputs, c.Inputs)
	}
	c.Rows += other.Rows
	axpy(1, other.Sum, c.Sum)
	c.RowMax = max(c.RowMax, other.RowMax)
	return nil
}

// Spectrum returns the sizes that bound a stable learning rate on the
// rows summed: λmax of R, its trace and the largest ‖x̃‖². Bias-only
// patterns (no inputs) have R = [1].
func (c *Correlation) Spectrum() (Spectrum, error) {
	if c.Inputs == 0 {
		return Spectrum{LambdaMax: 1, TraceR: 1, RowMax: 1}, nil
	}
	var eigen mat.EigenSym
	if !eigen.Factorize(c.Mean(), false) {
		return Spectrum{}, errors.New("fit: eigendecomposition of the input correlation matrix failed")
	}
	values := eigen.Values(nil) // ascending
	return Spectrum{LambdaMax: values[len(values)-1], TraceR: c.Trace(), RowMax: c.RowMax}, nil
}

// Mean returns R = Sum / Rows.
func (c *Correlation) Mean() *mat.SymDense {
	d := c.Inputs + 1
	r := mat.NewSymDense(d, nil)
	for a := range d {
		for b := a; b < d; b++ {
			r.SetSym(a, b, c.Sum[a*d+b]/float64(max(1, c.Rows)))
		}
	}
	return r
}

// Trace returns the trace of R.
func (c *Correlation) Trace() float64 {
	d, t := c.Inputs+1, 0.0
	for a := range d {
		t += c.Sum[a*d+a]
	}
	return t / float64(max(1, c.Rows))
}

// EpochSums are an epoch's measurement summed over rows: the squared misses
// of every unit and the misclassified rows. EpochStats is their mean.
type EpochSums struct {
	Rows   int
	Units  int
	Loss   float64 // Σ over rows and units of (t − y)²
	Errors int
}

// Merge adds the sums of other rows.
func (s *EpochSums) Merge(other EpochSums) {
	s.Rows += other.Rows
	s.Units = max(s.Units, other.Units)
	s.Loss += other.Loss
	s.Errors += other.Errors
}

// Stats returns the epoch's statistics: the loss as a mean over rows and
// units.
func (s EpochSums) Stats(epoch int) EpochStats {
	return EpochStats{Epoch: epoch, Loss: s.Loss / float64(max(1, s.Rows*s.Units)), Errors: s.Errors}
}

// UpdateSums are the sums a full-batch epoch applies: for each output unit
// j, Σ signal_j · x over rows and Σ signal_j, with signal_j =
// Rule.Signal(t_j, y_j) computed with fixed weights. The batch step adds
// rate/N times them to the weights and biases.
type UpdateSums struct {
	Rows    int
	Weights []float64 // units × inputs, row-major
	Biases  []float64 // one per unit
}

// SumUpdates returns the update sums and the epoch sums of net's rule over
// rows (0-based indices of p; nil means all) with the weights net holds.
// classes[i] is the class of row i of p. It neither modifies net nor p.
func SumUpdates(net *Network, rule Rule, p Store, classes, rows []int) (UpdateSums, EpochSums) {
	units := len(net.Weights)
	u := UpdateSums{Weights: make([]float64, units*net.Inputs), Biases: make([]float64, units)}
	e := EpochSums{Units: units}
	outputs := make([]float64, units)
	buf := make([]float64, net.Inputs)
	add := func(i int) {
		x, c := p.RowTo(buf, i), classes[i]
		if net.classify(x, outputs) != c {
			e.Errors++
		}
		for j, y := range outputs {
			t := net.Off
			if (units == 1 && c == 1) || (units > 1 && c == j) {
				t = net.On
			}
			signal := rule.Signal(t, y)
			axpy(signal, x, u.Weights[j*net.Inputs:(j+1)*net.Inputs])
			u.Biases[j] += signal
			e.Loss += (t - y) * (t - y)
		}
		u.Rows++
		e.Rows++
	}
	if rows == nil {
		for i := range p.Len() {
			add(i)
		}
	} else {
		for _, i := range rows {
			add(i)
		}
	}
	return u, e
}

// Merge adds the sums of other rows.
func (u *UpdateSums) Merge(other UpdateSums) error {
	if len(other.Weights) != len(u.Weights) || len(other.Biases) != len(u.Biases) {
		return fmt.Errorf("fit: cannot merge update sums of %d and %d weights", len(other.Weights), len(u.Weights))
	}
	u.Rows += other.Rows
	axpy(1, other.Weights, u.Weights)
	axpy(1, other.Biases, u.Biases)
	return nil
}
