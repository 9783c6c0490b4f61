package fit

import (
	"encoding/json"
	"errors"
	"math"
	"reflect"
	"slices"
	"strings"
	"testing"
)

func TestDecision(t *testing.T) {
	oneUnitDelta := &Network{Rule: "delta", Unit: Linear, Inputs: 1, Classes: 2, On: 1, Off: 0,
		Weights: [][]float64{{2}}, Biases: []float64{-0.5}}
	oneUnitHebbian := &Network{Rule: "hebbian", Unit: Linear, Inputs: 1, Classes: 2, On: 1, Off: -1,
		Weights: [][]float64{{1}}, Biases: []float64{-0.25}}
	oneUnitLogistic := &Network{Rule: "delta", Unit: Logistic, Inputs: 1, Classes: 2, On: 1, Off: 0,
		Weights: [][]float64{{1}}, Biases: []float64{0}}
	threeUnits := &Network{Rule: "delta", Unit: Linear, Inputs: 2, Classes: 3, On: 1, Off: 0,
		Weights: [][]float64{{1, 0}, {0, 1}, {1, 1}}, Biases: []float64{0, 0, -1}}
	// The expected values are worked by hand from the definitions in the package doc:
	// one unit of output y scores (On+Off−y, y); several units score their outputs;
	// the class is the arg max, ties to the lowest index.
	for _, tc := range []struct {
		name    string
		net     *Network
		x       []float64
		outputs []float64
		scores  []float64
		class   int
	}{
		{"one unit above the midpoint", oneUnitDelta, []float64{0.6}, []float64{0.7}, []float64{0.3, 0.7}, 1},
		{"one unit below the midpoint", oneUnitDelta, []float64{0.1}, []float64{-0.3}, []float64{1.3, -0.3}, 0},
		{"one unit on the midpoint ties to class 0", oneUnitDelta, []float64{0.5}, []float64{0.5}, []float64{0.5, 0.5}, 0},
		{"bipolar targets, midpoint 0, above", oneUnitHebbian, []float64{0.5}, []float64{0.25}, []float64{-0.25, 0.25}, 1},
		{"bipolar targets, midpoint 0, below", oneUnitHebbian, []float64{0}, []float64{-0.25}, []float64{0.25, -0.25}, 0},
		{"logistic of 0 is 1/2, a tie", oneUnitLogistic, []float64{0}, []float64{0.5}, []float64{0.5, 0.5}, 0},
		{"three units, first wins", threeUnits, []float64{1, 0}, []float64{1, 0, 0}, []float64{1, 0, 0}, 0},
		{"three units, second wins", threeUnits, []float64{0, 2}, []float64{0, 2, 1}, []float64{0, 2, 1}, 1},
		{"three units, third wins", threeUnits, []float64{3, 3}, []float64{3, 3, 5}, []float64{3, 3, 5}, 2},
		{"three units, three-way tie to the lowest", threeUnits, []float64{1, 1}, []float64{1, 1, 1}, []float64{1, 1, 1}, 0},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if err := tc.net.Validate(); err != nil {
				t.Fatal(err)
			}
			// 1e-15: one multiply-add per value; the logistic of 0 is exact.
			close := func(got, want []float64) bool {
				return slices.EqualFunc(got, want, func(a, b float64) bool { return math.Abs(a-b) <= 1e-15 })
			}
			if got := tc.net.OutputsTo(nil, tc.x); !close(got, tc.outputs) {
				t.Errorf("outputs %v, want %v", got, tc.outputs)
			}
			if got := tc.net.ScoresTo(nil, tc.x); !close(got, tc.scores) {
				t.Errorf("scores %v, want %v", got, tc.scores)
			}
			if got := tc.net.Classify(tc.x); got != tc.class {
				t.Errorf("class %d, want %d", got, tc.class)
			}
		})
	}
}

func TestToReusesDst(t *testing.T) {
	net := &Network{Unit: Linear, Inputs: 2, Classes: 3, On: 1, Weights: [][]float64{{1, 0}, {0, 1}, {1, 1}}, Biases: []float64{0, 0, 0}}
	buf := make([]float64, 0, 8)
	if got := net.OutputsTo(buf, []float64{1, 2}); &got[0] != &buf[:1][0] || len(got) != 3 {
		t.Error("OutputsTo did not reuse a big enough dst")
	}
	if got := net.ScoresTo(buf[:1], []float64{1, 2}); &got[0] != &buf[:1][0] || len(got) != 3 {
		t.Error("ScoresTo did not reuse a big enough dst")
	}
	if got := net.ScoresTo(make([]float64, 1), []float64{1, 2}); len(got) != 3 {
		t.Errorf("ScoresTo into a short dst gave %d scores, want 3", len(got))
	}
}

func TestValidate(t *testing.T) {
	valid := func() *Network {
		return &Network{Rule: "delta", Unit: Logistic, Inputs: 2, Classes: 3, On: 1, Off: 0,
			Weights: [][]float64{{1, 2}, {3, 4}, {5, 6}}, Biases: []float64{0, 0, 0}}
	}
	for _, tc := range []struct {
		name   string
		mutate func(*Network)
		ok     bool
	}{
		{"valid", func(*Network) {}, true},
		{"valid two classes, one unit", func(n *Network) { n.Classes, n.Weights, n.Biases = 2, n.Weights[:1], n.Biases[:1] }, true},
		{"valid bias only", func(n *Network) { n.Inputs, n.Weights = 0, [][]float64{{}, {}, {}} }, true},
		{"two classes, three units", func(n *Network) { n.Classes = 2 }, false},
		{"one class", func(n *Network) { n.Classes = 1 }, false},
		{"missing weight row", func(n *Network) { n.Weights = n.Weights[:2] }, false},
		{"short weight row", func(n *Network) { n.Weights[1] = n.Weights[1][:1] }, false},
		{"missing bias", func(n *Network) { n.Biases = n.Biases[:2] }, false},
		{"negative inputs", func(n *Network) { n.Inputs = -1 }, false},
		{"NaN weight", func(n *Network) { n.Weights[2][1] = math.NaN() }, false},
		{"infinite weight", func(n *Network) { n.Weights[0][0] = math.Inf(-1) }, false},
		{"NaN bias", func(n *Network) { n.Biases[1] = math.NaN() }, false},
		{"NaN target", func(n *Network) { n.On = math.NaN() }, false},
		{"targets upside down", func(n *Network) { n.On, n.Off = 0, 1 }, false},
		{"unknown unit", func(n *Network) { n.Unit = 7 }, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			net := valid()
			tc.mutate(net)
			err := net.Validate()
			if tc.ok != (err == nil) {
				t.Fatalf("Validate = %v, want ok %v", err, tc.ok)
			}
			if err != nil && !errors.Is(err, ErrInvalidNetwork) {
				t.Errorf("error %v does not wrap ErrInvalidNetwork", err)
			}
		})
	}
}

func TestNetworkJSONRoundTrip(t *testing.T) {
	and, labels := readTruthTable(t, "and.csv")
	result, err := Train(and, labels, 2, Options{Unit: Linear})
	if err != nil {
		t.Fatal(err)
	}
	data, err := json.Marshal(result.Network)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(data), `"unit":"linear"`) || !strings.Contains(string(data), `"rule":"delta"`) {
		t.Errorf("JSON %s lacks the unit or rule by name", data)
	}
	var back Network
	if err := json.Unmarshal(data, &back); err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(&back, result.Network) { // encoding/json round-trips float64 exactly
		t.Errorf("round trip gave %+v, want %+v", back, *result.Network)
	}
	if err := back.Validate(); err != nil {
		t.Error(err)
	}
	if err := json.Unmarshal([]byte(`{"unit":"sigmoid"}`), &back); err == nil {
		t.Error("unknown unit name decoded without error")
	}
	if _, err := json.Marshal(Network{Unit: 5}); err == nil {
		t.Error("unknown unit encoded without error")
	}
}

func TestParseUnit(t *testing.T) {
	for _, tc := range []struct {
		in   string
		want Unit
		ok   bool
	}{
		{"logistic", Logistic, true},
		{"linear", Linear, true},
		{"Linear", 0, false},
		{"", 0, false},
		{"tanh", 0, false},
	} {
		t.Run(tc.in, func(t *testing.T) {
			got, err := ParseUnit(tc.in)
			if (err == nil) != tc.ok || got != tc.want {
				t.Fatalf("ParseUnit(%q) = %v, %v", tc.in, got, err)
			}
			if tc.ok && got.String() != tc.in {
				t.Errorf("String() = %q, want %q", got.String(), tc.in)
			}
		})
	}
	if s := Unit(4).String(); s != "Unit(4)" {
		t.Errorf("String of an unknown unit = %q", s)
	}
}

func TestRules(t *testing.T) {
	for _, tc := range []struct {
		name       string
		on, off    float64
		signal     float64 // Signal(target 1, output 0.25)
		linearOnly bool
	}{
		{"delta", 1, 0, 0.75, false}, // Widrow & Hoff 1960: targets 1/0, signal t − y
		{"hebbian", 1, -1, 1, true},  // Hebb 1949 with bipolar targets: signal t
	} {
		t.Run(tc.name, func(t *testing.T) {
			rule, err := RuleByName(tc.name)
			if err != nil {
				t.Fatal(err)
			}
			if rule.Name() != tc.name || rule.Target(true) != tc.on || rule.Target(false) != tc.off || rule.Signal(1, 0.25) != tc.signal {
				t.Errorf("rule %q: targets %v/%v, signal %v", rule.Name(), rule.Target(true), rule.Target(false), rule.Signal(1, 0.25))
			}
			fixed, ok := rule.(OutputUnit)
			if ok != tc.linearOnly || (ok && fixed.OutputUnit() != Linear) {
				t.Errorf("OutputUnit: %v, want linear only %v", ok, tc.linearOnly)
			}
		})
	}
	if _, err := RuleByName("perceptron"); err == nil {
		t.Error("unknown rule found")
	}
}
