package fit

import (
	"math"
	"math/rand/v2"
	"reflect"
	"slices"
	"testing"
)

// copyingStore keeps its rows to itself and writes them into dst, as a
// float32 or disk store would.
type copyingStore struct{ dense Patterns }

func (s copyingStore) Len() int    { return s.dense.Len() }
func (s copyingStore) Inputs() int { return s.dense.Width }
func (s copyingStore) RowTo(dst []float64, i int) []float64 {
	dst = resize(dst, s.dense.Width)
	copy(dst, s.dense.Row(i))
	return dst
}

// kernelStore offers RowKernels that count their calls. It sums with the
// package's own kernels, so training through it must match the dense
// store bit for bit.
type kernelStore struct {
	dense      Patterns
	dots, adds *int
}

func (s kernelStore) Len() int                             { return s.dense.Len() }
func (s kernelStore) Inputs() int                          { return s.dense.Width }
func (s kernelStore) RowTo(dst []float64, i int) []float64 { return s.dense.Row(i) }
func (s kernelStore) DotRow(i int, w []float64) float64 {
	*s.dots++
	return dot(w, s.dense.Row(i))
}
func (s kernelStore) AxpyRow(alpha float64, i int, y []float64) {
	*s.adds++
	axpy(alpha, s.dense.Row(i), y)
}

func TestSubsetEqualsCopiedRows(t *testing.T) {
	p, _ := noisyPatterns(40, 3, 2)
	for _, tc := range []struct {
		name string
		rows []int
	}{
		{"ascending", []int{0, 1, 5, 39}},
		{"any order", []int{7, 3, 22, 3, 0}}, // a row may repeat
		{"empty", []int{}},
		{"every row", func() []int {
			all := make([]int, p.Len())
			for i := range all {
				all[i] = i
			}
			return all
		}()},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var copied []float64
			for _, r := range tc.rows {
				copied = append(copied, p.Row(r)...)
			}
			want := Patterns{Width: p.Width, Values: copied}
			for _, view := range []Store{Subset(p, tc.rows), Subset(copyingStore{p}, tc.rows)} {
				if view.Len() != len(tc.rows) || view.Inputs() != p.Width {
					t.Fatalf("view of %d×%d, want %d×%d", view.Len(), view.Inputs(), len(tc.rows), p.Width)
				}
				buf := make([]float64, p.Width)
				for i := range tc.rows {
					if got := view.RowTo(buf, i); !slices.Equal(got, want.Row(i)) {
						t.Errorf("view row %d = %v, copied row %v", i, got, want.Row(i))
					}
				}
			}
		})
	}
	t.Run("view of a view", func(t *testing.T) {
		outer := Subset(p, []int{9, 8, 7, 6})
		inner := Subset(outer, []int{3, 1})
		if got := inner.RowTo(nil, 0); !slices.Equal(got, p.Row(6)) {
			t.Errorf("row 0 of the inner view = %v, want pattern 6 %v", got, p.Row(6))
		}
		if got := inner.RowTo(nil, 1); !slices.Equal(got, p.Row(8)) {
			t.Errorf("row 1 of the inner view = %v, want pattern 8 %v", got, p.Row(8))
		}
	})
	t.Run("out of range panics", func(t *testing.T) {
		defer func() {
			if recover() == nil {
				t.Error("Subset took row 40 of 40 patterns")
			}
		}()
		Subset(p, []int{0, 40})
	})
}

// Training reads patterns only through Store: a view, a store that copies
// and a store with its own kernels must all train exactly as the dense
// store holding the same rows.
func TestTrainOnAnyStore(t *testing.T) {
	rows, species := readIris(t)
	p := standardized(rows)
	rng := rand.New(rand.NewPCG(3, 4))
	picked := rng.Perm(p.Len())[:100]
	var copied []float64
	classes := make([]int, len(picked))
	for i, r := range picked {
		copied = append(copied, p.Row(r)...)
		classes[i] = species[r]
	}
	dense := Patterns{Width: p.Width, Values: copied}
	for _, opts := range []Options{
		{Seed: 3, Epochs: 20, KeepGoing: true},
		{Batch: true, Unit: Linear, Epochs: 20, KeepGoing: true},
		{Rule: Hebbian{}},
	} {
		want, err := Train(dense, classes, 3, opts)
		if err != nil {
			t.Fatal(err)
		}
		var dots, adds int
		for _, tc := range []struct {
			name  string
			store Store
		}{
			{"view", Subset(p, picked)},
			{"copying", copyingStore{dense}},
			{"kernels", kernelStore{dense, &dots, &adds}},
			{"view of kernels", Subset(kernelStore{p, &dots, &adds}, picked)},
		} {
			t.Run(modeName(opts.Batch)+"/"+tc.name, func(t *testing.T) {
				dots, adds = 0, 0
				got, err := Train(tc.store, classes, 3, opts)
				if err != nil {
					t.Fatal(err)
				}
				if !reflect.DeepEqual(got, want) {
					t.Error("result differs from the dense store's")
				}
				if _, ok := tc.store.(RowKernels); ok && (dots == 0 || adds == 0) {
					t.Errorf("kernels called %d and %d times: the trainer did not use them", dots, adds)
				}
			})
		}
	}
}

func TestCheckStoreRowByRow(t *testing.T) {
	p := Patterns{Width: 2, Values: []float64{0, 1, 2, math.Inf(1), 4, 5}}
	_, err := Train(copyingStore{p}, []int{0, 1, 0}, 2, Options{})
	if err == nil || err.Error() != "fit: pattern 1 input 1 is not finite (+Inf)" {
		t.Errorf("error %v, want the non-finite input named", err)
	}
	_, err = Train(copyingStore{p}, []int{0, 1}, 2, Options{})
	if err == nil || err.Error() != "fit: 3 patterns but 2 class labels" {
		t.Errorf("error %v, want the count mismatch", err)
	}
}
