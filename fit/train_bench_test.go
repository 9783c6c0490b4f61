package fit

import (
	"context"
	"fmt"
	"testing"
)

// BenchmarkEpoch times one training epoch (the updates and the end-of-epoch
// loss and error count) over a grid of rows × inputs × classes, on random
// patterns, online and batch.
func BenchmarkEpoch(b *testing.B) {
	for _, rows := range []int{150, 10000} {
		for _, inputs := range []int{4, 64, 512} {
			for _, classes := range []int{2, 10} {
				patterns, labels := noisyPatterns(rows, inputs, classes)
				for _, batch := range []bool{false, true} {
					name := fmt.Sprintf("rows=%d/inputs=%d/classes=%d/%s", rows, inputs, classes, modeName(batch))
					b.Run(name, func(b *testing.B) {
						tr, err := newTrainer(context.Background(), patterns, labelsOf(labels), classes, Options{Batch: batch})
						if err != nil {
							b.Fatal(err)
						}
						b.ReportAllocs()
						epoch := 0
						for b.Loop() {
							epoch++
							tr.epoch(context.Background(), epoch)
						}
						b.ReportMetric(float64(rows)*float64(epoch)/b.Elapsed().Seconds(), "patterns/s")
					})
				}
			}
		}
	}
}

// BenchmarkAutoRate times the spectrum (λmax, tr(R), max‖x̃‖²),
// eigendecomposition and power iteration.
func BenchmarkAutoRate(b *testing.B) {
	for _, inputs := range []int{64, 512} {
		patterns, _ := noisyPatterns(1000, inputs, 2)
		for _, method := range []struct {
			name string
			run  func(context.Context, Store) (Spectrum, error)
		}{{"eigen", eigenSpectrum}, {"power", powerSpectrum}} {
			b.Run(fmt.Sprintf("inputs=%d/%s", inputs, method.name), func(b *testing.B) {
				b.ReportAllocs()
				for b.Loop() {
					if _, err := method.run(context.Background(), patterns); err != nil {
						b.Fatal(err)
					}
				}
			})
		}
	}
}
