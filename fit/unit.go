package fit

import (
	"fmt"
	"math"
	"strconv"
)

// Unit is the activation of the output units.
type Unit int

const (
	// Logistic units output 1/(1+e^(−z)) of their net input z. The zero
	// value, and so the default.
	Logistic Unit = iota
	// Linear units output their net input z = w·x + b.
	Linear
)

var unitNames = [...]string{Logistic: "logistic", Linear: "linear"}

// ParseUnit returns the unit named s: "logistic" or "linear".
func ParseUnit(s string) (Unit, error) {
	for u, name := range unitNames {
		if s == name {
			return Unit(u), nil
		}
	}
	return 0, fmt.Errorf("fit: unknown unit %q (want logistic or linear)", s)
}

// String returns the unit's name, or "Unit(N)" for an unknown value.
func (u Unit) String() string {
	if u.valid() {
		return unitNames[u]
	}
	return "Unit(" + strconv.Itoa(int(u)) + ")"
}

// MarshalText encodes the unit as its name, so JSON holds "logistic" or
// "linear".
func (u Unit) MarshalText() ([]byte, error) {
	if !u.valid() {
		return nil, fmt.Errorf("fit: unknown unit %d", int(u))
	}
	return []byte(unitNames[u]), nil
}

// UnmarshalText decodes a unit from its name.
func (u *Unit) UnmarshalText(text []byte) error {
	parsed, err := ParseUnit(string(text))
	if err != nil {
		return err
	}
	*u = parsed
	return nil
}

func (u Unit) valid() bool { return u >= 0 && int(u) < len(unitNames) }

// activate returns the unit's output for net input z.
func (u Unit) activate(z float64) float64 {
	if u == Linear {
		return z
	}
	return 1 / (1 + math.Exp(-z))
}
