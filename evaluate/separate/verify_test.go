package separate

import (
	"context"
	"strings"
	"testing"
)

func TestVerifyCertificateRejects(t *testing.T) {
	// XOR (Minsky & Papert 1969): ½(0,1) + ½(1,0) = ½(0,0) + ½(1,1), by hand.
	p, classes := truthTable(t, "xor.csv")
	pos, neg := split(classes, 1)
	valid := func() *Certificate {
		return &Certificate{Rows: []int{2, 3, 1, 4}, Positive: []bool{true, true, false, false}, Weights: []float64{0.5, 0.5, 0.5, 0.5}}
	}
	if residual, err := VerifyCertificate(p, pos, neg, valid()); err != nil || residual != 0 {
		t.Fatalf("the hand-made certificate: residual %v, err %v; want 0, nil", residual, err)
	}
	for _, tc := range []struct {
		name   string
		change func(c *Certificate)
		want   string
	}{
		{"means apart", func(c *Certificate) { c.Weights = []float64{0.9, 0.1, 0.5, 0.5} }, "residual"},
		{"weights do not sum to 1", func(c *Certificate) { c.Weights[0] = 0.6 }, "sum to"},
		{"negative weight", func(c *Certificate) { c.Weights[2], c.Weights[3] = -0.5, 1.5 }, "non-negative"},
		{"row on the wrong side", func(c *Certificate) { c.Positive[0] = false }, "not a row of its side"},
		{"row outside the split", func(c *Certificate) { c.Rows[0] = 9 }, "not a row of its side"},
		{"misaligned", func(c *Certificate) { c.Weights = c.Weights[:3] }, "weights"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c := valid()
			tc.change(c)
			_, err := VerifyCertificate(p, pos, neg, c)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error %v, want one mentioning %q", err, tc.want)
			}
		})
	}
}

func TestVerifyWitnessRejects(t *testing.T) {
	// AND (Minsky & Papert 1969): x1 + x2 − 1.5 is positive only on (1,1),
	// by hand; its margin is 0.5/√2.
	p, classes := truthTable(t, "and.csv")
	pos, neg := split(classes, 1)
	margin, rows, err := VerifyWitness(p, pos, neg, &Witness{Weights: []float64{1, 1}, Bias: -1.5})
	if err != nil || rows != 4 || margin < 0.35355339059327373-1e-15 || margin > 0.35355339059327373+1e-15 { // 0.5/√2, rounding of one division
		t.Fatalf("margin %v rows %d err %v; want 0.5/√2, 4, nil", margin, rows, err)
	}
	for _, tc := range []struct {
		name string
		w    Witness
		want string
	}{
		{"or's hyperplane", Witness{Weights: []float64{1, 1}, Bias: -0.5}, "row 2 on the wrong side"},
		{"through a row", Witness{Weights: []float64{1, 1}, Bias: -2}, "row 4 on the wrong side"},
		{"zero weights", Witness{Weights: []float64{0, 0}, Bias: 1}, "zero or not finite"},
		{"wrong width", Witness{Weights: []float64{1}, Bias: 1}, "1 weights for 2 inputs"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, _, err := VerifyWitness(p, pos, neg, &tc.w)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error %v, want one mentioning %q", err, tc.want)
			}
		})
	}
}

func TestCheckInputs(t *testing.T) {
	t.Run("encoded xor", func(t *testing.T) {
		// Minsky & Papert 1969: XOR is not separable, whatever the monotone
		// re-encoding of each input.
		d := readDataset(t, "xor.csv", "y")
		r, err := Check(context.Background(), d, CheckOptions{Seed: 1})
		if err != nil {
			t.Fatal(err)
		}
		if len(r.Splits) != 1 || r.Splits[0].Verdict != NotSeparable || r.Splits[0].Separable == nil || *r.Splits[0].Separable {
			t.Fatalf("splits %+v, want one, not separable", r.Splits)
		}
		if s := r.Splits[0]; s.Positive != "1" || s.Negative != "0" {
			t.Errorf("split %s against %s, want 1 against 0", s.Positive, s.Negative)
		}
	})
	t.Run("unknown space", func(t *testing.T) {
		if _, err := ParseSpace("latent"); err == nil || !strings.HasPrefix(err.Error(), "separate: ") {
			t.Errorf("error %v, want one starting separate:", err)
		}
	})
	t.Run("empty side", func(t *testing.T) {
		p, _ := truthTable(t, "xor.csv")
		if _, err := Separate(context.Background(), p, nil, []int{0}, Options{}); err != ErrEmptySide {
			t.Errorf("error %v, want ErrEmptySide", err)
		}
	})
	t.Run("row on both sides", func(t *testing.T) {
		p, _ := truthTable(t, "xor.csv")
		if _, err := Separate(context.Background(), p, []int{0, 1}, []int{1}, Options{}); err == nil || !strings.Contains(err.Error(), "both sides") {
			t.Errorf("error %v, want one about a row on both sides", err)
		}
	})
}

func TestDeterministic(t *testing.T) {
	// Common practice: same data and seed, same bits.
	d := readDataset(t, "iris.csv", "species")
	a, err := Check(context.Background(), d, CheckOptions{Space: Raw, Pairs: true, Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	b, _ := Check(context.Background(), d, CheckOptions{Space: Raw, Pairs: true, Seed: 3})
	for i := range a.Splits {
		x, y := a.Splits[i], b.Splits[i]
		if x.Verdict != y.Verdict || x.Distance != y.Distance || (x.Witness != nil && (x.Witness.Bias != y.Witness.Bias || x.Witness.Margin != y.Witness.Margin)) ||
			(x.Certificate != nil && x.Certificate.Residual != y.Certificate.Residual) {
			t.Errorf("split %d differs between runs: %+v vs %+v", i, x, y)
		}
	}
}
