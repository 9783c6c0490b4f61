package fit

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"slices"
	"testing"
)

// writeDisk writes p and classes to a DiskStore file in t's temp dir.
func writeDisk(t testing.TB, p Patterns, classes []int, numClasses, blockRows int, packed bool) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "patterns.dfp")
	w, err := CreateDiskStore(path, p.Width, numClasses, blockRows, packed)
	if err != nil {
		t.Fatal(err)
	}
	for i, c := range classes {
		if err := w.Append(p.Row(i), c); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	return path
}

func openDisk(t *testing.T, path string, cacheBlocks int) *DiskStore {
	t.Helper()
	s, err := OpenDiskStore(path, cacheBlocks)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { s.Close() })
	return s
}

// float32Rounded returns p with every value rounded to float32, as a
// float32 disk store holds it.
func float32Rounded(p Patterns) Patterns {
	values := make([]float64, len(p.Values))
	for i, v := range p.Values {
		values[i] = float64(float32(v))
	}
	return Patterns{Width: p.Width, Values: values}
}

func sameNetwork(a, b *Network) bool {
	return slices.EqualFunc(a.Weights, b.Weights, slices.Equal) && slices.Equal(a.Biases, b.Biases)
}

// A disk store gives back the rows and labels written, packed or float32.
func TestDiskStoreRoundTrip(t *testing.T) {
	bits, bitClasses := thermometerPatterns(1000, 5, 7, 3)
	rows, species := readIris(t)
	dense := standardized(rows)
	for _, tc := range []struct {
		name    string
		p       Patterns
		classes []int
		packed  bool
	}{
		{"packed", bits, bitClasses, true},
		{"float32", dense, species, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			want := tc.p
			if !tc.packed {
				want = float32Rounded(tc.p)
			}
			s := openDisk(t, writeDisk(t, tc.p, tc.classes, 3, 64, tc.packed), 2)
			if s.Len() != want.Len() || s.Inputs() != want.Width || s.Packed() != tc.packed || s.BlockRows() != 64 {
				t.Fatalf("store of %d×%d, packed %v, blocks of %d", s.Len(), s.Inputs(), s.Packed(), s.BlockRows())
			}
			classes, err := s.Classes()
			if err != nil {
				t.Fatal(err)
			}
			for i := range want.Len() {
				if !slices.Equal(s.RowTo(nil, i), want.Row(i)) || int(classes[i]) != tc.classes[i] {
					t.Fatalf("row %d: %v class %d, want %v class %d", i, s.RowTo(nil, i), classes[i], want.Row(i), tc.classes[i])
				}
			}
			if err := s.Err(); err != nil {
				t.Fatal(err)
			}
		})
	}
}

// A fit on a disk store equals, bit for bit, the fit on the same patterns
// in memory with the same block order: packed rows against BinaryPatterns,
// float32 rows against the float32-rounded dense patterns. Small blocks and
// a cache of two blocks make the trainer and the parallel measurement
// evict each other's blocks.
func TestDiskStoreFitsAsMemory(t *testing.T) {
	bits, bitClasses := thermometerPatterns(3000, 6, 7, 3)
	packed, _ := PackBinary(bits)
	rows, species := readIris(t)
	dense := standardized(rows)
	for _, tc := range []struct {
		name    string
		p       Patterns
		memory  Store
		classes []int
		packed  bool
	}{
		{"packed", bits, packed, bitClasses, true},
		{"float32", dense, float32Rounded(dense), species, false},
	} {
		for _, opts := range []Options{
			{Epochs: 5, Seed: 3},
			{Epochs: 5, Seed: 3, L2: 1e-3, LastIterate: true},
			{Epochs: 3, Seed: 4, Batch: true},
			{Rule: Hebbian{}},
		} {
			opts.Block, opts.Workers, opts.Stop = 37, 2, []Converger{}
			t.Run(tc.name, func(t *testing.T) {
				s := openDisk(t, writeDisk(t, tc.p, tc.classes, 3, opts.Block, tc.packed), 2)
				classes, err := s.Classes()
				if err != nil {
					t.Fatal(err)
				}
				want, err := Train(tc.memory, tc.classes, 3, opts)
				if err != nil {
					t.Fatal(err)
				}
				got, err := TrainBytesContext(context.Background(), s, classes, 3, opts)
				if err != nil {
					t.Fatal(err)
				}
				if err := s.Err(); err != nil {
					t.Fatal(err)
				}
				if !sameNetwork(got.Network, want.Network) || !slices.Equal(got.History, want.History) {
					t.Errorf("%+v: disk fit differs from the fit in memory", opts)
				}
			})
		}
	}
}

// Bad files are errors, not panics; values a packed store cannot hold are
// refused when written.
func TestDiskStoreRefuses(t *testing.T) {
	bits, classes := thermometerPatterns(100, 2, 3, 2)
	path := writeDisk(t, bits, classes, 2, 16, true)
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	for name, bad := range map[string][]byte{
		"truncated": data[:len(data)-1],
		"magic":     append([]byte("NOTASTOR"), data[8:]...),
		"short":     data[:10],
	} {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, bad, 0o600); err != nil {
			t.Fatal(err)
		}
		if s, err := OpenDiskStore(p, 0); err == nil {
			s.Close()
			t.Errorf("%s: opened", name)
		}
	}
	w, err := CreateDiskStore(filepath.Join(dir, "w"), 2, 2, 4, true)
	if err != nil {
		t.Fatal(err)
	}
	defer w.Abort()
	if err := w.Append([]float64{1, 0.5}, 0); err == nil {
		t.Error("a packed store took 0.5")
	}
	if err := w.Append([]float64{1, math.Copysign(0, -1)}, 0); err == nil {
		t.Error("a packed store took −0")
	}
	f, err := CreateDiskStore(filepath.Join(dir, "f"), 1, 2, 4, false)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Abort()
	if err := f.Append([]float64{1e300}, 0); err == nil {
		t.Error("a float32 store took 1e300")
	}
}

// The block order visits every pattern once per epoch, a block's rows
// together, the blocks and the rows within them in orders that change
// with the epoch; a block of at least every pattern is the full shuffle
// to the bit; byte labels train as int labels.
func TestBlockOrder(t *testing.T) {
	rows, species := readIris(t)
	p := standardized(rows)
	const block = 16
	rec := &updateLog{}
	if _, err := Train(p, species, 3, Options{Epochs: 3, Block: block, Seed: 9, Recorder: rec, Stop: []Converger{}}); err != nil {
		t.Fatal(err)
	}
	n := p.Len()
	var firstBlocks [][]int
	for epoch := 1; epoch <= 3; epoch++ {
		visits := rec.rows[(epoch-1)*n : epoch*n]
		if !slices.Equal(slices.Sorted(slices.Values(visits)), identity(n)) {
			t.Fatalf("epoch %d does not visit every pattern once", epoch)
		}
		var blocks []int
		for start := 0; start < n; {
			b := visits[start] / block
			size := min(block, n-b*block)
			for _, r := range visits[start : start+size] {
				if r/block != b {
					t.Fatalf("epoch %d: row %d inside the visit of block %d", epoch, r, b)
				}
			}
			blocks = append(blocks, b)
			start += size
		}
		firstBlocks = append(firstBlocks, blocks)
	}
	if slices.Equal(firstBlocks[0], firstBlocks[1]) && slices.Equal(firstBlocks[1], firstBlocks[2]) {
		t.Error("the block order is the same every epoch")
	}
	full, err := Train(p, species, 3, Options{Epochs: 4, Seed: 9})
	if err != nil {
		t.Fatal(err)
	}
	whole, err := Train(p, species, 3, Options{Epochs: 4, Seed: 9, Block: n})
	if err != nil {
		t.Fatal(err)
	}
	if !sameNetwork(full.Network, whole.Network) {
		t.Error("a block of every pattern differs from the full shuffle")
	}
	bytes := make([]uint8, n)
	for i, c := range species {
		bytes[i] = uint8(c)
	}
	fromBytes, err := TrainBytesContext(context.Background(), p, bytes, 3, Options{Epochs: 4, Seed: 9})
	if err != nil {
		t.Fatal(err)
	}
	if !sameNetwork(full.Network, fromBytes.Network) {
		t.Error("byte labels train differently from int labels")
	}
	if _, err := Train(p, species, 3, Options{Block: -1}); err == nil {
		t.Error("a negative block was taken")
	}
}

type updateLog struct{ rows []int }

func (u *updateLog) RecordEpoch(EpochStats) error { return nil }
func (u *updateLog) RecordUpdate(up *Update)      { u.rows = append(u.rows, up.Row) }

// Any file opens with an error or reads without a panic: a bad block is
// an error of Err, a bad label one of Classes.
func FuzzOpenDiskStore(f *testing.F) {
	bits, classes := thermometerPatterns(20, 2, 3, 2)
	for _, packed := range []bool{true, false} {
		data, err := os.ReadFile(writeDisk(f, bits, classes, 2, 8, packed))
		if err != nil {
			f.Fatal(err)
		}
		f.Add(data)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		path := filepath.Join(t.TempDir(), "store")
		if err := os.WriteFile(path, data, 0o600); err != nil {
			t.Fatal(err)
		}
		s, err := OpenDiskStore(path, 1)
		if err != nil {
			return
		}
		defer s.Close()
		if s.Len() > 1<<12 || s.Inputs() > 1<<12 {
			return // a well-formed header of a size the fuzzer cannot have written
		}
		s.Classes()
		w := make([]float64, s.Inputs())
		for i := range s.Len() {
			s.RowTo(nil, i)
			s.DotRow(i, w)
			s.AxpyRow(1, i, w)
		}
	})
}
