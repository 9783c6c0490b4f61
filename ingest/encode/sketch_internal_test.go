package encode

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// sample returns n seeded values with many ties: normal values rounded to
// two decimals, and a run of one repeated value.
func sample(n int, seed uint64) []float64 {
	rng := rand.New(rand.NewPCG(seed, 7))
	values := make([]float64, n)
	for i := range values {
		if rng.IntN(10) == 0 {
			values[i] = 0.5
			continue
		}
		values[i] = math.Round(rng.NormFloat64()*100) / 100
	}
	return values
}

// countBelow and countAtOrBelow count exactly in sorted values.
func countBelow(sorted []float64, x float64) int {
	i, _ := slices.BinarySearch(sorted, x)
	return i
}

// checkBound checks the sketch's bound against exact counts on sorted:
// for each probe x, the sketch's count of values ≤ x is within
// ErrorBound of the exact count, and the bound is at most H·n/Capacity.
func checkBound(t *testing.T, s *Sketch, sorted []float64) {
	t.Helper()
	n := len(sorted)
	r := s.ranks()
	if r.len() != n || s.Count != n {
		t.Fatalf("sketch stands for %d values (count %d), want %d", r.len(), s.Count, n)
	}
	if s.Min != sorted[0] || s.Max != sorted[n-1] {
		t.Errorf("extremes %v %v, want %v %v", s.Min, s.Max, sorted[0], sorted[n-1])
	}
	worst := 0
	probes := []float64{math.Inf(-1), math.Inf(1)}
	for i := 0; i < n; i += max(1, n/2000) {
		probes = append(probes, sorted[i], math.Nextafter(sorted[i], math.Inf(-1)))
	}
	for _, x := range probes {
		worst = max(worst, abs(r.atOrBelow(x)-countAtOrBelow(sorted, x)))
	}
	if float64(worst) > s.ErrorBound {
		t.Errorf("a count is off by %d, over the bound %v", worst, s.ErrorBound)
	}
	levels := 0
	for h := range s.Levels {
		if h > 0 {
			levels = h // levels below the top one were compacted
		}
	}
	// The derivation in the Sketch doc: E ≤ H·n/Capacity.
	if limit := float64(levels) * float64(n) / float64(s.Capacity); s.ErrorBound > limit {
		t.Errorf("ErrorBound %v over H·n/k = %v", s.ErrorBound, limit)
	}
	// A quantile's exact rank is within the bound of its target rank
	// (at(i) has at least i+1 values at or below it in the sketch, at(i+1)
	// at most i+1 below it, each count within the bound of the exact one).
	for k := 1; k < 20; k++ {
		q := float64(k) / 20
		c := quantile(r, q)
		i := int(q * float64(n-1))
		if got := countAtOrBelow(sorted, c); float64(got) < float64(i+1)-s.ErrorBound {
			t.Errorf("q=%v: cut %v has %d values at or below, want at least %v", q, c, got, float64(i+1)-s.ErrorBound)
		}
		if got := countBelow(sorted, c); float64(got) > float64(i+1)+s.ErrorBound {
			t.Errorf("q=%v: cut %v has %d values below, want at most %v", q, c, got, float64(i+1)+s.ErrorBound)
		}
	}
}

func abs(x int) int {
	if x < 0 {
		return -x
	}
	return x
}

// The bound holds against exact counts on a seeded sample with ties, for
// a sketch filled value by value and for one merged from unequal shards.
func TestSketchBound(t *testing.T) {
	const n = 200_000
	values := sample(n, 1)
	sorted := slices.Sorted(slices.Values(values))
	for _, capacity := range []int{64, 256, 1024} {
		one := NewSketch(capacity)
		for _, v := range values {
			one.Add(v)
		}
		if one.Exact() {
			t.Fatalf("capacity %d: sketch of %d values is exact", capacity, n)
		}
		checkBound(t, one, sorted)

		merged := NewSketch(capacity)
		for _, cut := range [][2]int{{0, 10}, {10, 70_000}, {70_000, 70_001}, {70_001, n}} {
			shard := NewSketch(capacity)
			for _, v := range values[cut[0]:cut[1]] {
				shard.Add(v)
			}
			if err := merged.Merge(shard); err != nil {
				t.Fatal(err)
			}
		}
		checkBound(t, merged, sorted)
		t.Logf("capacity %d: rank error bound %.5f (one), %.5f (merged)", capacity, one.RankError(), merged.RankError())
	}
}

// Until the first compaction the sketch's quantiles are those of the
// values themselves, bit for bit.
func TestSketchExactUntilFull(t *testing.T) {
	values := sample(1000, 2)
	s := NewSketch(1000)
	for _, v := range values {
		s.Add(v)
	}
	if !s.Exact() || s.RankError() != 0 {
		t.Fatal("a sketch holding all its values is not exact")
	}
	sorted := sortedValues(slices.Sorted(slices.Values(values)))
	for bins := 2; bins <= 12; bins++ {
		if got, want := quantileCuts(s.ranks(), bins), quantileCuts(sorted, bins); !slices.Equal(got, want) {
			t.Errorf("bins %d: cuts %v, want %v", bins, got, want)
		}
	}
	s.Add(0)
	if s.Exact() {
		t.Error("a sketch past its capacity claims to be exact")
	}
}

// Sketches are deterministic: the same values in the same order give the
// same sketch.
func TestSketchDeterministic(t *testing.T) {
	values := sample(50_000, 3)
	a, b := NewSketch(128), NewSketch(128)
	for _, v := range values {
		a.Add(v)
		b.Add(v)
	}
	if !slices.EqualFunc(a.Levels, b.Levels, slices.Equal[[]float64]) || a.ErrorBound != b.ErrorBound {
		t.Error("two sketches of the same values differ")
	}
	if err := a.Merge(NewSketch(64)); err == nil {
		t.Error("merged sketches of different capacities")
	}
}
