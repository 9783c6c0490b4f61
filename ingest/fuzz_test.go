package ingest_test

import (
	"bytes"
	"encoding/json"
	"errors"
	"math"
	"strings"
	"sync/atomic"
	"testing"
	"unicode/utf8"

	"github.com/apache/arrow-go/v18/arrow/memory"

	"deltafit/ingest"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// checkError fails unless err is a *DataError or an "ingest: " error.
func checkError(t *testing.T, err error) {
	t.Helper()
	var de *tabular.DataError
	if !errors.As(err, &de) && !strings.HasPrefix(err.Error(), "ingest: ") {
		t.Fatalf("error %q (%T) is neither a *DataError nor an ingest error", err, err)
	}
}

var fuzzFormats = []ingest.Format{ingest.FormatAuto, ingest.FormatCSV, ingest.FormatArrow, ingest.FormatParquet}

// fuzzTable reads data as the format and batch size chosen by mode, and
// checks the reader's invariants: no panic, a positioned or ingest error,
// every Arrow byte released, and a table whose columns are all Rows long
// with finite numbers and valid UTF-8 text.
func fuzzTable(t *testing.T, data []byte, mode uint8) *tabular.Table {
	mem := memory.NewCheckedAllocator(memory.NewGoAllocator())
	peak := &peakAllocator{Allocator: mem}
	opts := ingest.ReadOptions{Format: fuzzFormats[mode%4], BatchRows: 1 + int(mode>>2)%5, Allocator: peak}
	sniffedArrow := bytes.HasPrefix(data, []byte("ARROW1")) || bytes.HasPrefix(data, []byte{0xff, 0xff, 0xff, 0xff})
	if opts.Format == ingest.FormatArrow || opts.Format == ingest.FormatAuto && sniffedArrow {
		// Arrow memory is bounded by the input: no buffer decompresses to
		// more than 32768 times its bytes (a Zstandard RLE block, 4 bytes
		// for 128 KiB, RFC 8878 §3.1.1.2), plus room for the batch.
		defer func() {
			if limit := 32768*int64(len(data)) + 16<<20; peak.peak.Load() > limit {
				t.Fatalf("%d bytes of input made the reader hold %d bytes of Arrow memory", len(data), peak.peak.Load())
			}
		}()
	}
	// Every reader releases all it allocated, the Arrow file reader too:
	// it reads messages as slices of the file (ipc.NewMappedFileReader),
	// so arrow-go's file reader, which does not release a message whose
	// batch fails to load, allocates none.
	defer mem.AssertSize(t, 0)
	table, err := ingest.ReadTable("fuzz", bytes.NewReader(data), opts)
	if err != nil {
		checkError(t, err)
		return nil
	}
	if table.Rows <= 0 {
		t.Fatalf("a table of %d rows without an error", table.Rows)
	}
	for _, c := range table.Columns {
		if c.Len() != table.Rows || (c.Missing != nil && len(c.Missing) != table.Rows) {
			t.Fatalf("column %q has %d values for %d rows", c.Name, c.Len(), table.Rows)
		}
		if !utf8.ValidString(c.Name) {
			t.Fatalf("column name %q is not UTF-8", c.Name)
		}
		for i := 0; i < table.Rows; i++ {
			switch c.Kind {
			case tabular.Categorical:
				if !utf8.ValidString(c.Text[i]) || len(c.Text[i]) > ingest.MaxCellBytes {
					t.Fatalf("column %q row %d: bad text %q", c.Name, i+1, c.Text[i])
				}
			case tabular.Numeric, tabular.Boolean:
				if v := c.Numbers[i]; math.IsNaN(v) || math.IsInf(v, 0) {
					t.Fatalf("column %q row %d holds %v", c.Name, i+1, v)
				}
			default:
				t.Fatalf("column %q has kind %v", c.Name, c.Kind)
			}
		}
	}
	return table
}

// FuzzReadTable feeds arbitrary bytes to the readers and kind inference.
// The seed corpus in testdata/fuzz/FuzzReadTable holds the malformed files
// of testdata/bad and a good one.
func FuzzReadTable(f *testing.F) {
	f.Add([]byte("a,b,y\n1,x,p\n2,y,q\n"), uint8(0))
	f.Fuzz(func(t *testing.T, data []byte, mode uint8) {
		fuzzTable(t, data, mode)
	})
}

var fuzzNumeric = []string{"thermometer", "onehot", "threshold", "zscore", "minmax", "hybrid"}

// FuzzPlan fits an encoding plan on the first half of a table's rows and
// encodes all of them. Invariants: no panic; errors are positioned or
// ingest errors; a fitted plan passes its own file check, also after a
// JSON round trip; every unit is in [0,1] except zscore's, which are
// finite.
func FuzzPlan(f *testing.F) {
	f.Add([]byte("a,b,c,y\n1,x,true,p\n2,y,false,q\n,z,,p\n"), uint8(0), uint8(3))
	f.Fuzz(func(t *testing.T, data []byte, method, arg uint8) {
		table := fuzzTable(t, data, 1) // CSV: the plan, not the reader, is under test
		if table == nil {
			return
		}
		opts := encode.Options{
			Numeric:     encode.Encoding{Method: fuzzNumeric[int(method)%len(fuzzNumeric)], Bins: 2 + int(arg)%10},
			Categorical: encode.Encoding{Method: encode.OneHot, Min: 1 + int(arg)%3},
		}
		if opts.Numeric.Method == encode.Threshold && arg%2 == 1 {
			cut := float64(arg) / 10
			opts.Numeric.Cut = &cut
		}
		train := make([]int, 0, table.Rows)
		for i := 0; i < (table.Rows+1)/2; i++ {
			train = append(train, i)
		}
		plan, err := encode.FitPlan(table.Columns, train, opts)
		if err != nil {
			checkError(t, err)
			return
		}
		if err := plan.Validate(); err != nil {
			t.Fatalf("a fitted plan fails its own check: %v", err)
		}
		b, err := json.Marshal(plan)
		if err != nil {
			t.Fatal(err)
		}
		var back encode.Plan
		if err := json.Unmarshal(b, &back); err != nil {
			t.Fatalf("plan JSON does not read back: %v", err)
		}
		if err := back.Validate(); err != nil {
			t.Fatalf("plan read back fails its check: %v", err)
		}
		cols, err := back.Bind(table)
		if err != nil {
			t.Fatalf("a plan does not bind to the table it was fitted on: %v", err)
		}
		width := back.Width()
		values, _ := back.EncodeTo(nil, cols, nil)
		if len(values) != width*table.Rows {
			t.Fatalf("%d values for %d rows of width %d", len(values), table.Rows, width)
		}
		for k, v := range values {
			f := feature(&back, k%width)
			if f.Method == encode.ZScore || (f.Method == encode.Hybrid && k%width == unitStart(&back, k%width)) {
				if math.IsNaN(v) || math.IsInf(v, 0) {
					t.Fatalf("zscore unit of %q is %v", f.Column, v)
				}
				continue
			}
			if !(v >= 0 && v <= 1) {
				t.Fatalf("unit %d of %q (%s) is %v, outside [0,1]", k%width, f.Column, f.Method, v)
			}
		}
	})
}

// unitStart returns the first input unit of the feature that unit i
// belongs to.
func unitStart(p *encode.Plan, i int) int {
	start := 0
	for k := range p.Features {
		w := p.Features[k].Width()
		if i < start+w {
			return start
		}
		start += w
	}
	return start
}

// feature returns the feature that input unit i belongs to.
func feature(p *encode.Plan, i int) *encode.Feature {
	for k := range p.Features {
		w := p.Features[k].Width()
		if i < w {
			return &p.Features[k]
		}
		i -= w
	}
	return nil
}

// peakAllocator records the most Arrow memory outstanding at once.
type peakAllocator struct {
	memory.Allocator
	now, peak atomic.Int64
}

func (a *peakAllocator) add(n int64) {
	now := a.now.Add(n)
	for {
		peak := a.peak.Load()
		if now <= peak || a.peak.CompareAndSwap(peak, now) {
			return
		}
	}
}

func (a *peakAllocator) Allocate(size int) []byte {
	a.add(int64(size))
	return a.Allocator.Allocate(size)
}

func (a *peakAllocator) Reallocate(size int, b []byte) []byte {
	a.add(int64(size - len(b)))
	return a.Allocator.Reallocate(size, b)
}

func (a *peakAllocator) Free(b []byte) {
	a.add(-int64(len(b)))
	a.Allocator.Free(b)
}

// FuzzReadArrow feeds Arrow IPC files and streams, compressed and not, to
// the Arrow reader, with the invariants of fuzzTable and Arrow memory
// bounded by the input. The seeds in testdata/fuzz/FuzzReadArrow are
// well-formed inputs in each layout and the crafted inputs of testdata/bad
// (TestFuzzSeedsCommitted makes them).
func FuzzReadArrow(f *testing.F) {
	f.Fuzz(func(t *testing.T, data []byte, batch uint8) {
		fuzzTable(t, data, 2|batch<<2) // fuzzFormats[2] is Arrow
	})
}

// FuzzReadParquet feeds Parquet files to the Parquet reader, with the
// invariants of fuzzTable. The seeds in testdata/fuzz/FuzzReadParquet are
// well-formed files with each codec, with and without dictionary pages.
func FuzzReadParquet(f *testing.F) {
	f.Fuzz(func(t *testing.T, data []byte, batch uint8) {
		fuzzTable(t, data, 3|batch<<2) // fuzzFormats[3] is Parquet
	})
}
