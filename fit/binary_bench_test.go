package fit

import (
	"context"
	"fmt"
	"testing"
)

// BenchmarkBinaryEpoch times one online epoch (updates, averaging and
// measurement) on 0/1 thermometer patterns held dense and packed, in and
// out of the cache.
func BenchmarkBinaryEpoch(b *testing.B) {
	for _, size := range []struct{ rows, cols int }{{20000, 8}, {200000, 8}, {20000, 64}} {
		rows, cols := size.rows, size.cols
		p, labels := thermometerPatterns(rows, cols, 7, 3)
		packed, _ := PackBinary(p)
		for _, store := range []struct {
			name string
			s    Store
		}{{"dense", p}, {"packed", packed}} {
			b.Run(fmt.Sprintf("rows=%d/inputs=%d/%s", rows, cols*7, store.name), func(b *testing.B) {
				tr, err := newTrainer(context.Background(), store.s, labelsOf(labels), 3, Options{Workers: 1})
				if err != nil {
					b.Fatal(err)
				}
				b.ReportAllocs()
				epoch := 0
				for b.Loop() {
					epoch++
					if _, err := tr.epoch(context.Background(), epoch); err != nil {
						b.Fatal(err)
					}
				}
				b.ReportMetric(float64(p.Len())*float64(epoch)/b.Elapsed().Seconds(), "patterns/s")
			})
		}
	}
}
