package fit

import "fmt"

// Rule is a learning rule. For output unit j and a pattern x, training
// changes the weights by Δw_ij = rate · Signal(t_j, y_j) · x_i and the
// bias by rate · Signal(t_j, y_j), where t_j = Target(member) and y_j is
// the unit's output.
type Rule interface {
	// Name is the rule's name, as RuleByName takes it.
	Name() string
	// Target is the output unit's target when the pattern is (member) or
	// is not of the unit's class. Target(true) must exceed Target(false).
	Target(member bool) float64
	// Signal is the factor of the update for target and output.
	Signal(target, output float64) float64
}

// OutputUnit is implemented by a Rule that needs one kind of output unit
// whatever Options.Unit says; Train then uses that unit.
type OutputUnit interface {
	OutputUnit() Unit
}

// OnePass is implemented by a Rule whose update does not depend on the
// weights: each epoch adds the same change again, so more epochs only scale
// the weights and leave every decision as it was. Train makes one pass for
// such a rule, and its automatic rate is 1/N, which makes the weights the
// mean update over the patterns (for Hebbian, the mean target-input
// correlation) however many patterns there are.
type OnePass interface {
	OnePass() bool
}

// Delta is the delta rule (Widrow & Hoff 1960, LMS): targets 1 and 0,
// signal t − y.
type Delta struct{}

// Name returns "delta".
func (Delta) Name() string { return "delta" }

// Target returns 1 for a member of the unit's class, 0 otherwise.
func (Delta) Target(member bool) float64 {
	if member {
		return 1
	}
	return 0
}

// Signal returns target − output.
func (Delta) Signal(target, output float64) float64 { return target - output }

// Hebbian is Hebb's rule (Hebb 1949) with bipolar targets +1 and −1, so
// that non-members shape the weights too. Its signal is the target alone;
// since the update ignores the output, its outputs are always linear.
type Hebbian struct{}

// Name returns "hebbian".
func (Hebbian) Name() string { return "hebbian" }

// Target returns +1 for a member of the unit's class, −1 otherwise.
func (Hebbian) Target(member bool) float64 {
	if member {
		return 1
	}
	return -1
}

// Signal returns target.
func (Hebbian) Signal(target, _ float64) float64 { return target }

// OutputUnit returns Linear.
func (Hebbian) OutputUnit() Unit { return Linear }

// OnePass returns true: the Hebbian update ignores the weights.
func (Hebbian) OnePass() bool { return true }

// RuleByName returns the rule named name: "delta" or "hebbian".
func RuleByName(name string) (Rule, error) {
	for _, rule := range []Rule{Delta{}, Hebbian{}} {
		if rule.Name() == name {
			return rule, nil
		}
	}
	return nil, fmt.Errorf("fit: unknown rule %q (want delta or hebbian)", name)
}
