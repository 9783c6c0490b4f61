package ingest_test

import (
	"bytes"
	"fmt"
	"math/rand/v2"
	"strconv"
	"testing"

	"deltafit/ingest"
)

// benchCSV generates a CSV of rows × numeric columns and a class column,
// from a fixed seed.
func benchCSV(rows, columns int) []byte {
	rng := rand.New(rand.NewPCG(1, uint64(rows*columns)))
	var b bytes.Buffer
	for c := range columns {
		fmt.Fprintf(&b, "x%d,", c+1)
	}
	b.WriteString("class\n")
	for range rows {
		for range columns {
			b.WriteString(strconv.FormatFloat(rng.NormFloat64(), 'g', 6, 64))
			b.WriteByte(',')
		}
		fmt.Fprintf(&b, "c%d\n", rng.IntN(3))
	}
	return b.Bytes()
}

func BenchmarkReadTable(b *testing.B) {
	for _, rows := range []int{150, 10_000, 100_000} {
		for _, columns := range []int{4, 64} {
			if rows*columns > 1_000_000 {
				continue
			}
			data := benchCSV(rows, columns)
			b.Run(fmt.Sprintf("rows=%d/columns=%d", rows, columns), func(b *testing.B) {
				b.ReportAllocs()
				b.SetBytes(int64(len(data)))
				for b.Loop() {
					if _, err := ingest.ReadTable("bench.csv", bytes.NewReader(data), ingest.ReadOptions{}); err != nil {
						b.Fatal(err)
					}
				}
			})
		}
	}
}
