package fit

import (
	"math"
	"math/rand/v2"
	"reflect"
	"slices"
	"testing"
)

// thermometerPatterns are random patterns of cols thermometer columns of
// units units each (unit k of a column is on when the column's level is
// above k, so the 1s of a column come first), labelled by a noisy linear
// rule of the levels: 0/1 data like the encodings make, from a fixed seed.
func thermometerPatterns(rows, cols, units, classes int) (Patterns, []int) {
	rng := rand.New(rand.NewPCG(21, 22))
	p := Patterns{Width: cols * units, Values: make([]float64, rows*cols*units)}
	labels := make([]int, rows)
	for i := range rows {
		row := p.Row(i)
		score := rng.NormFloat64()
		for c := range cols {
			level := rng.IntN(units + 1)
			for k := range level {
				row[c*units+k] = 1
			}
			score += float64(level) * float64(c%3-1)
		}
		labels[i] = min(max(int(score/float64(units)+float64(classes)/2), 0), classes-1)
	}
	return p, labels
}

// The packed kernels equal dot and axpy on the dense row to the bit, for
// every width around dot's groups of four.
func TestBinaryKernelsMatchDense(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, width := range []int{1, 2, 3, 4, 5, 7, 8, 9, 13, 56} {
		p := Patterns{Width: width, Values: make([]float64, 50*width)}
		for i := range p.Values {
			if rng.IntN(3) == 0 {
				p.Values[i] = 1
			}
		}
		b, ok := PackBinary(p)
		if !ok {
			t.Fatalf("width %d: 0/1 patterns not packed", width)
		}
		for i := range p.Len() {
			w := randomVector(rng, width)
			w[0] = math.Copysign(0, -1) // a −0 weight
			if got, want := b.DotRow(i, w), dot(w, p.Row(i)); math.Float64bits(got) != math.Float64bits(want) {
				t.Fatalf("width %d row %d: DotRow %v, dot %v", width, i, got, want)
			}
			got, want := append([]float64(nil), w...), append([]float64(nil), w...)
			got[0], want[0] = 0, 0 // axpy keeps −0 only on the dense path; see BinaryPatterns
			b.AxpyRow(0.3, i, got)
			axpy(0.3, p.Row(i), want)
			for k := range got {
				if math.Float64bits(got[k]) != math.Float64bits(want[k]) {
					t.Fatalf("width %d row %d: AxpyRow differs at %d: %v, axpy %v", width, i, k, got[k], want[k])
				}
			}
			if row := b.RowTo(make([]float64, width), i); !reflect.DeepEqual(row, p.Row(i)) {
				t.Fatalf("width %d row %d: RowTo %v, want %v", width, i, row, p.Row(i))
			}
		}
	}
}

func TestPackBinaryRefuses(t *testing.T) {
	for _, tc := range []struct {
		name string
		p    Patterns
	}{
		{"a value not 0 or 1", Patterns{Width: 2, Values: []float64{0, 1, 1, 0.5}}},
		{"a 2", Patterns{Width: 1, Values: []float64{2}}},
		{"a minus zero", Patterns{Width: 2, Values: []float64{1, math.Copysign(0, -1)}}},
		{"no inputs", Patterns{Width: 0, Rows: 3}},
		{"too wide", Patterns{Width: maxBinaryWidth + 1, Values: make([]float64, maxBinaryWidth+1)}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if _, ok := PackBinary(tc.p); ok {
				t.Error("packed")
			}
			if _, ok := Compact(tc.p).(Patterns); !ok {
				t.Error("Compact did not keep the dense store")
			}
		})
	}
}

// Packing block by block with Append gives the store PackBinary gives the
// whole; a block that is not all 0/1 is refused and leaves the store as it
// was.
func TestAppendBinaryInBlocks(t *testing.T) {
	p, _ := thermometerPatterns(1000, 5, 7, 3)
	whole, ok := PackBinary(p)
	if !ok {
		t.Fatal("0/1 patterns not packed")
	}
	blocks, ok := NewBinaryPatterns(p.Width, 10)
	if !ok {
		t.Fatal("NewBinaryPatterns refused a valid width")
	}
	for from := 0; from < p.Len(); from += 333 {
		to := min(from+333, p.Len())
		if !blocks.Append(Patterns{Width: p.Width, Values: p.Values[from*p.Width : to*p.Width]}) {
			t.Fatalf("block from row %d refused", from)
		}
	}
	bad := slices.Clone(p.Values[:2*p.Width])
	bad[len(bad)-1] = 0.5
	if blocks.Append(Patterns{Width: p.Width, Values: bad}) {
		t.Error("a block holding 0.5 was packed")
	}
	if blocks.Append(Patterns{Width: p.Width + 1, Values: make([]float64, p.Width+1)}) {
		t.Error("a block of another width was packed")
	}
	if !reflect.DeepEqual(blocks.rows, whole.rows) || !slices.Equal(blocks.active, whole.active) {
		t.Errorf("%d rows packed in blocks differ from PackBinary's %d", blocks.Len(), whole.Len())
	}
	for _, width := range []int{0, maxBinaryWidth + 1} {
		if _, ok := NewBinaryPatterns(width, 1); ok {
			t.Errorf("NewBinaryPatterns accepted width %d", width)
		}
	}
}

// Training on the packed store, or on a view of it, gives the dense
// store's Result to the bit, in every mode.
func TestBinaryTrainsAsDense(t *testing.T) {
	p, labels := thermometerPatterns(2*measureChunk+57, 5, 7, 3)
	b, ok := PackBinary(p)
	if !ok {
		t.Fatal("0/1 patterns not packed")
	}
	trainsAsDense(t, p, b, labels)
}

// trainsAsDense checks that training on store, and on a view of it, gives
// the Result training on the dense patterns p gives, to the bit, in every
// mode; store holds p's patterns, of three classes.
func trainsAsDense(t *testing.T, p Patterns, store Store, labels []int) {
	t.Helper()
	rows := rand.New(rand.NewPCG(7, 8)).Perm(p.Len())[:3000]
	for _, tc := range []struct {
		name string
		opts Options
	}{
		{"online averaged", Options{Seed: 1, Epochs: 6, KeepGoing: true}},
		{"online last iterate linear", Options{Seed: 2, Epochs: 4, Unit: Linear, LastIterate: true, KeepGoing: true}},
		{"online decay and l2", Options{Seed: 3, Epochs: 5, Decay: 0.1, L2: 0.01, KeepGoing: true}},
		{"online holdout", Options{Seed: 4, Epochs: 5, Holdout: 0.2}},
		{"batch", Options{Batch: true, Unit: Linear, Epochs: 8, KeepGoing: true}},
		{"hebbian", Options{Rule: Hebbian{}}},
		{"default stop rules", Options{Seed: 5}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			want, err := Train(p, labels, 3, tc.opts)
			if err != nil {
				t.Fatal(err)
			}
			got, err := Train(store, labels, 3, tc.opts)
			if err != nil {
				t.Fatal(err)
			}
			if resultDigest(got) != resultDigest(want) || !reflect.DeepEqual(got, want) {
				t.Errorf("the result on %T differs from the dense store's", store)
			}
			viewWant, err := Train(Subset(p, rows), pick(labels, rows), 3, tc.opts)
			if err != nil {
				t.Fatal(err)
			}
			viewGot, err := Train(Subset(store, rows), pick(labels, rows), 3, tc.opts)
			if err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(viewGot, viewWant) {
				t.Errorf("the result on a view of %T differs from the dense view's", store)
			}
		})
	}
}

// The truth tables, 0/1 inputs, train on the packed store to the pinned
// digests of the dense store (TestTrainPinned).
func TestBinaryKeepsPins(t *testing.T) {
	if testing.Short() {
		t.Skip("long: 100000 epochs")
	}
	xor, xorLabels := readTruthTable(t, "xor.csv")
	and, andLabels := readTruthTable(t, "and.csv")
	for _, tc := range []struct {
		name   string
		p      Patterns
		labels []int
		opts   Options
		pinned string
	}{
		{"xor converges", xor, xorLabels, Options{Unit: Linear, Batch: true, Epochs: 100000}, "80e08e7af1a5bbfb2cbe4559e590c6ee3f163a301e54d65eb80919f5b96cbf84"},
		{"and zero errors", and, andLabels, Options{Seed: 1}, "511daf471ca3d1531cb9ad9dd9e68e04a3cef552cb10fa24d8df5c4fbb12a659"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			b, ok := PackBinary(tc.p)
			if !ok {
				t.Fatal("truth table not packed")
			}
			res, err := Train(b, tc.labels, 2, tc.opts)
			if err != nil {
				t.Fatal(err)
			}
			if got := resultDigest(res); got != tc.pinned {
				t.Errorf("digest %s, want the dense pin %s", got, tc.pinned)
			}
		})
	}
}
