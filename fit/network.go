package fit

import (
	"errors"
	"fmt"
	"math"
)

// ErrInvalidNetwork is wrapped by the errors of Validate.
var ErrInvalidNetwork = errors.New("fit: invalid network")

// Network is a trained single layer of output units.
//
// It has one output unit per class when Classes > 2, and one unit, which
// fires for class index 1, when Classes == 2. On and Off are the rule's
// targets for members and non-members; the decision of a one-unit network
// depends on them.
type Network struct {
	Rule    string      `json:"rule"`
	Unit    Unit        `json:"unit"`
	Inputs  int         `json:"inputs"`
	Classes int         `json:"classes"`
	On      float64     `json:"on"`
	Off     float64     `json:"off"`
	Weights [][]float64 `json:"weights"` // one row per output unit, Inputs long
	Biases  []float64   `json:"biases"`  // one per output unit
}

// unitCount returns the number of output units for classes classes.
func unitCount(classes int) int {
	if classes == 2 {
		return 1
	}
	return classes
}

// output returns unit j's output for pattern x.
func (n *Network) output(j int, x []float64) float64 {
	return n.Unit.activate(dot(n.Weights[j], x) + n.Biases[j])
}

func (n *Network) checkInputs(x []float64) {
	if len(x) != n.Inputs {
		panic(fmt.Sprintf("fit: pattern of %d inputs for a network of %d", len(x), n.Inputs))
	}
}

// OutputsTo stores the output of each unit for pattern x in dst, reusing
// dst if it is big enough, and returns it. It panics if len(x) != Inputs.
func (n *Network) OutputsTo(dst, x []float64) []float64 {
	n.checkInputs(x)
	dst = resize(dst, len(n.Weights))
	n.classify(x, dst)
	return dst
}

// ScoresTo stores one score per class for pattern x in dst, reusing dst
// if it is big enough, and returns it. With one unit per class the scores
// are the outputs; with a single unit of output y they are (On+Off−y, y),
// so that class 1 wins exactly when y > (On+Off)/2. It panics if
// len(x) != Inputs.
func (n *Network) ScoresTo(dst, x []float64) []float64 {
	n.checkInputs(x)
	dst = resize(dst, n.Classes)
	if len(n.Weights) != 1 {
		n.classify(x, dst)
		return dst
	}
	y := n.output(0, x)
	dst[0], dst[1] = n.On+n.Off-y, y
	return dst
}

// Classify returns the class of pattern x: the arg max of its scores, ties
// going to the lowest class index. It panics if len(x) != Inputs.
func (n *Network) Classify(x []float64) int {
	n.checkInputs(x)
	var buf [16]float64 // outputs of up to 16 units without allocating
	outputs := buf[:0]
	if len(n.Weights) <= len(buf) {
		outputs = buf[:len(n.Weights)]
	} else {
		outputs = make([]float64, len(n.Weights))
	}
	return n.classify(x, outputs)
}

// classify stores the unit outputs for x in outputs, one per unit, and
// returns the class they decide.
func (n *Network) classify(x, outputs []float64) int {
	for j := range n.Weights {
		outputs[j] = n.output(j, x)
	}
	return n.decide(outputs)
}

// decide returns the class that the unit outputs decide: a single unit of
// output y scores the classes (On+Off−y, y); one unit per class scores each
// class with its output. Decide then picks.
func (n *Network) decide(outputs []float64) int {
	if len(outputs) == 1 {
		scores := [2]float64{n.On + n.Off - outputs[0], outputs[0]}
		return Decide(scores[:])
	}
	return Decide(outputs)
}

// Decide returns the class that scores choose: the arg max, ties going to
// the lowest class index. It is the one place a class is decided, for
// training, cross-validation and prediction alike.
func Decide(scores []float64) int {
	best := 0
	for j, s := range scores {
		if s > scores[best] {
			best = j
		}
	}
	return best
}

// Validate reports whether the network's dimensions agree and all its
// numbers are finite, as needed before using a network read from a file.
// Its errors wrap ErrInvalidNetwork.
func (n *Network) Validate() error {
	invalid := func(format string, args ...any) error {
		return fmt.Errorf("%w: %s", ErrInvalidNetwork, fmt.Sprintf(format, args...))
	}
	switch {
	case !n.Unit.valid():
		return invalid("unknown unit %d", int(n.Unit))
	case n.Inputs < 0:
		return invalid("negative input count %d", n.Inputs)
	case n.Classes < 2:
		return invalid("%d classes, want at least 2", n.Classes)
	case !finite(n.On) || !finite(n.Off) || n.On <= n.Off:
		return invalid("targets on %v, off %v: want finite with on > off", n.On, n.Off)
	}
	units := unitCount(n.Classes)
	if len(n.Weights) != units {
		return invalid("%d weight rows for %d classes, want %d", len(n.Weights), n.Classes, units)
	}
	if len(n.Biases) != units {
		return invalid("%d biases for %d classes, want %d", len(n.Biases), n.Classes, units)
	}
	for j, row := range n.Weights {
		if len(row) != n.Inputs {
			return invalid("weight row %d has %d values, want %d", j, len(row), n.Inputs)
		}
		for i, w := range row {
			if !finite(w) {
				return invalid("weight %d of unit %d is %v", i, j, w)
			}
		}
		if !finite(n.Biases[j]) {
			return invalid("bias of unit %d is %v", j, n.Biases[j])
		}
	}
	return nil
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// resize returns dst with length n, reusing its storage if it is big enough.
func resize(dst []float64, n int) []float64 {
	if cap(dst) < n {
		return make([]float64, n)
	}
	return dst[:n]
}
