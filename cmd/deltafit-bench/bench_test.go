package main

import (
	"testing"

	"deltafit/fit"
	"deltafit/ingest/encode"
)

// BenchmarkRatios measures, on seeded synthetic data of 20000 rows, the
// ratios the command prints that need no child process or temporary file:
// the epoch against the memory stream and against blas32 kernels, and the
// fixed costs of a fit (plan, encoding, packing, checks and rate) against
// an epoch. It reports them as metrics; each
// iteration is one full measurement.
func BenchmarkRatios(b *testing.B) {
	const rows = 20000
	d, err := readDataset("synthetic", syntheticCSV(shape{Rows: rows, Columns: 8, Classes: 3, Seed: 1}))
	if err != nil {
		b.Fatal(err)
	}
	enc, err := encode.ParseNumericEncoding("thermometer:8")
	if err != nil {
		b.Fatal(err)
	}
	for b.Loop() {
		e, err := encodeAll(d, encode.Options{Numeric: enc}, true)
		if err != nil {
			b.Fatal(err)
		}
		epoch, fixed, err := trainTimes(e.store, d.Classes, len(d.Labels), 4, 1)
		if err != nil {
			b.Fatal(err)
		}
		values := float32Rows(e.patterns)
		stream, _ := streamTime(values)
		rate, _, err := fit.AutoRate(e.patterns, fit.Options{})
		if err != nil {
			b.Fatal(err)
		}
		blas := blasEpochTime(values, e.patterns.Width, d.Classes, len(d.Labels), float32(rate), 1)
		b.ReportMetric(epoch.Seconds()/stream.Seconds(), "epoch_vs_stream")
		b.ReportMetric(blas.Seconds()/epoch.Seconds(), "blas_vs_epoch")
		b.ReportMetric((fixed+e.planTime+e.encTime).Seconds()/epoch.Seconds(), "fixed_vs_epoch")
	}
}
