package main

import (
	"bytes"
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"time"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/csv"
	"gonum.org/v1/gonum/blas/blas32"
	"gonum.org/v1/gonum/mat"

	"deltafit/evaluate"
	"deltafit/fit"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// repeats is how many times best runs the steps that it is told to
// repeat; -quick sets it to 1.
var repeats = 2

// best returns the shortest of reps runs of f: the run least disturbed by
// other work on the machine.
func best(reps int, f func() error) (time.Duration, error) {
	shortest := time.Duration(math.MaxInt64)
	for range reps {
		start := time.Now()
		if err := f(); err != nil {
			return 0, err
		}
		shortest = min(shortest, time.Since(start))
	}
	return shortest, nil
}

// encoded is a dataset encoded by a plan fitted on all its rows, with the
// time each step took.
type encoded struct {
	dataset  *tabular.Dataset
	plan     *encode.Plan
	store    fit.Store     // the rows as deltafit fit stores them (evaluate.EncodeStore)
	patterns fit.Patterns  // the same rows dense, for the probes; empty unless asked for
	planTime time.Duration // fitting the plan
	encTime  time.Duration // encoding every row into store
}

func encodeAll(d *tabular.Dataset, opts encode.Options, dense bool) (*encoded, error) {
	start := time.Now()
	plan, err := encode.FitPlan(d.Features, nil, opts)
	if err != nil {
		return nil, err
	}
	planTime := time.Since(start)
	start = time.Now()
	store := evaluate.EncodeStore(plan, d)
	e := &encoded{dataset: d, plan: plan, store: store, planTime: planTime, encTime: time.Since(start)}
	if dense {
		values, _ := plan.EncodeTo(nil, d.Features, nil)
		e.patterns = fit.Patterns{Width: plan.Width(), Values: values, Rows: d.Table.Rows}
	}
	return e, nil
}

// ingestTime times reading the CSV file at path into a dataset and
// encoding it, from the file to the patterns.
func ingestTime(path string, opts encode.Options) (time.Duration, error) {
	return best(repeats, func() error {
		data, err := os.ReadFile(path)
		if err != nil {
			return err
		}
		d, err := readDataset(path, data)
		if err != nil {
			return err
		}
		_, err = encodeAll(d, opts, false)
		return err
	})
}

// arrowTime times arrow-go's CSV reader alone on the file at path, with
// the column types given (numeric features, text class), in batches of
// 4096 rows, touching nothing but the batches.
func arrowTime(path string, columns int) (time.Duration, error) {
	fields := make([]arrow.Field, 0, columns+1)
	for j := range columns {
		fields = append(fields, arrow.Field{Name: fmt.Sprintf("x%d", j+1), Type: arrow.PrimitiveTypes.Float64})
	}
	fields = append(fields, arrow.Field{Name: targetColumn, Type: arrow.BinaryTypes.String})
	schema := arrow.NewSchema(fields, nil)
	return best(repeats, func() error {
		data, err := os.ReadFile(path)
		if err != nil {
			return err
		}
		r := csv.NewReader(bytes.NewReader(data), schema, csv.WithHeader(true), csv.WithChunk(4096))
		defer r.Release()
		rows := 0
		for r.Next() {
			rows += int(r.RecordBatch().NumRows())
		}
		if err := r.Err(); err != nil {
			return err
		}
		if rows == 0 {
			return fmt.Errorf("arrow read no rows of %s", path)
		}
		return nil
	})
}

// epochClock is a fit.Recorder that notes when each epoch ends.
type epochClock struct{ ends []time.Time }

func (c *epochClock) RecordEpoch(fit.EpochStats) error {
	c.ends = append(c.ends, time.Now())
	return nil
}

// trainTimes trains for epochs epochs (≥ 2) with no stop rule and returns
// the shortest epoch after the first, and what the first call costs
// besides an epoch: the checks, the rate (spectrum) and the buffers.
func trainTimes(s fit.Store, classes []int, numClasses int, epochs int, seed uint64) (epoch, fixed time.Duration, err error) {
	clock := &epochClock{}
	opts := fit.Options{Epochs: epochs, Stop: []fit.Converger{}, Seed: seed, Recorder: clock, Workers: 1}
	start := time.Now()
	if _, err := fit.Train(s, classes, numClasses, opts); err != nil {
		return 0, 0, err
	}
	epoch = time.Duration(math.MaxInt64)
	for k := 1; k < len(clock.ends); k++ {
		epoch = min(epoch, clock.ends[k].Sub(clock.ends[k-1]))
	}
	fixed = clock.ends[0].Sub(start) - epoch
	return epoch, max(fixed, 0), nil
}

// float32Rows returns the patterns as float32 values, row-major.
func float32Rows(p fit.Patterns) []float32 {
	out := make([]float32, len(p.Values))
	for i, v := range p.Values {
		out[i] = float32(v)
	}
	return out
}

// streamTime times one pass over the values summing them into eight
// independent accumulators: the memory stream an epoch cannot beat.
func streamTime(values []float32) (time.Duration, float32) {
	var total float32
	d, _ := best(3, func() error {
		var s [8]float32
		i := 0
		for ; i+8 <= len(values); i += 8 {
			v := values[i : i+8 : i+8]
			s[0] += v[0]
			s[1] += v[1]
			s[2] += v[2]
			s[3] += v[3]
			s[4] += v[4]
			s[5] += v[5]
			s[6] += v[6]
			s[7] += v[7]
		}
		for ; i < len(values); i++ {
			s[0] += values[i]
		}
		total = s[0] + s[1] + s[2] + s[3] + s[4] + s[5] + s[6] + s[7]
		return nil
	})
	return d, total
}

// blasEpochTime times one online epoch done with gonum's blas32 Sdot and
// Saxpy on one row at a time of a float32 copy of the patterns: the same
// per-pattern arithmetic as fit's online epoch (net inputs, logistic
// outputs, delta-rule steps, the update, the running sum of the weights
// for averaging, then a pass measuring the loss and errors), visiting the
// rows in the order fit draws for the same seed and epoch.
func blasEpochTime(values []float32, width int, classes []int, numClasses int, rate float32, seed uint64) time.Duration {
	n := len(classes)
	units := numClasses
	if numClasses == 2 {
		units = 1
	}
	weights := make([]float32, units*width)
	sums := make([]float32, units*width)
	biases, biasSums := make([]float32, units), make([]float32, units)
	outputs := make([]float32, units)
	order := make([]int, n)
	unit := func(l []float32, j int) blas32.Vector {
		return blas32.Vector{N: width, Inc: 1, Data: l[j*width : (j+1)*width]}
	}
	row := func(i int) blas32.Vector {
		return blas32.Vector{N: width, Inc: 1, Data: values[i*width : (i+1)*width]}
	}
	all := func(l []float32) blas32.Vector { return blas32.Vector{N: len(l), Inc: 1, Data: l} }
	target := func(j, c int) float32 {
		if (units == 1 && c == 1) || (units > 1 && c == j) {
			return 1
		}
		return 0
	}
	logistic := func(z float32) float32 { return float32(1 / (1 + math.Exp(-float64(z)))) }
	d, _ := best(repeats, func() error {
		for i := range order {
			order[i] = i
		}
		rng := rand.New(rand.NewPCG(seed, 1)) // fit's order for epoch 1
		rng.Shuffle(n, func(i, j int) { order[i], order[j] = order[j], order[i] })
		for _, i := range order {
			x, c := row(i), classes[i]
			for j := range units {
				outputs[j] = rate * (target(j, c) - logistic(blas32.Dot(unit(weights, j), x)+biases[j]))
			}
			for j, step := range outputs {
				blas32.Axpy(step, x, unit(weights, j))
				biases[j] += step
			}
			blas32.Axpy(1, all(weights), all(sums))
			blas32.Axpy(1, all(biases), all(biasSums))
		}
		var loss float32
		errors := 0
		for i, c := range classes {
			x := row(i)
			top := 0
			for j := range units {
				outputs[j] = logistic(blas32.Dot(unit(sums, j), x) + biasSums[j])
				miss := target(j, c) - outputs[j]
				loss += miss * miss
				if outputs[j] > outputs[top] {
					top = j
				}
			}
			if top != c {
				errors++
			}
		}
		_ = loss
		return nil
	})
	return d
}

// qrTime times the closed-form least-squares fit of the one-of-K targets
// on the design [x, 1] by gonum's Householder QR.
func qrTime(p fit.Patterns, classes []int, numClasses int) (time.Duration, error) {
	n, width := len(classes), p.Width
	design := mat.NewDense(n, width+1, nil)
	targets := mat.NewDense(n, numClasses, nil)
	for i := range n {
		row := design.RawRowView(i)
		copy(row, p.Row(i))
		row[width] = 1
		targets.Set(i, classes[i], 1)
	}
	return best(1, func() error {
		var qr mat.QR
		qr.Factorize(design)
		var solution mat.Dense
		return qr.SolveTo(&solution, false, targets)
	})
}

// toleranceFitTime times a delta-rule fit of linear units, online at the
// automatic rate, until the default plateau rule stops it (or the default
// epoch limit): the iterative counterpart of qrTime.
func toleranceFitTime(p fit.Store, classes []int, numClasses int, seed uint64) (time.Duration, int, error) {
	var epochs int
	d, err := best(1, func() error {
		res, err := fit.Train(p, classes, numClasses, fit.Options{Unit: fit.Linear, KeepGoing: true, Seed: seed, Workers: 1})
		if err != nil {
			return err
		}
		epochs = len(res.History)
		return nil
	})
	return d, epochs, err
}

// cvTime times a 10-fold cross-validation with the given workers, each
// fold fitting the plan and training a fixed number of epochs.
func cvTime(d *tabular.Dataset, opts encode.Options, epochs, workers int, seed uint64) (time.Duration, error) {
	folds, err := evaluate.Folds(d, 10, seed, 0)
	if err != nil {
		return 0, err
	}
	learner := evaluate.Learner{Plan: opts, Fit: fit.Options{Epochs: epochs, Stop: []fit.Converger{}, Seed: seed}}
	method := evaluate.LearnerMethod("delta", learner, d)
	return best(1, func() error {
		_, err := evaluate.CrossValidateContext(context.Background(), d, folds, method, workers)
		return err
	})
}

// relativeSpread returns (max − min)/min of xs.
func relativeSpread(xs []float64) float64 {
	lo, hi := slices.Min(xs), slices.Max(xs)
	return (hi - lo) / lo
}

// diskChunk is the rows of synthetic data encoded at a time into a disk
// store.
const diskChunk = 1_000_000

// diskEpochTime writes n synthetic rows, encoded chunk by chunk, into a
// disk pattern store and returns the shortest online epoch after the first
// of a fit on it, block-shuffled with the store's blocks as fit --stream
// trains. Each chunk is generated with its own seed and the plan is fitted
// on the first chunk: data for timing, of the same shape.
func diskEpochTime(o options, opts encode.Options, n int) (time.Duration, error) {
	dir, err := os.MkdirTemp("", "deltafit-bench-disk")
	if err != nil {
		return 0, err
	}
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "store.dfp")
	var w *fit.DiskWriter
	var plan *encode.Plan
	var values []float64
	for done, k := 0, uint64(0); done < n; k++ {
		rows := min(diskChunk, n-done)
		d, err := readDataset("chunk", syntheticCSV(shape{Rows: rows, Columns: o.columns, Classes: o.classes, Seed: o.seed + k}))
		if err != nil {
			return 0, err
		}
		if plan == nil {
			if plan, err = encode.FitPlan(d.Features, nil, opts); err != nil {
				return 0, err
			}
			packed := plan.Binary()
			if w, err = fit.CreateDiskStore(path, plan.Width(), o.classes, fit.DiskBlockRows(plan.Width(), packed), packed); err != nil {
				return 0, err
			}
		}
		values, _ = plan.EncodeTo(values, d.Features, nil)
		width := plan.Width()
		for i, c := range d.Classes {
			if err := w.Append(values[i*width:(i+1)*width], c); err != nil {
				w.Abort()
				return 0, err
			}
		}
		done += rows
	}
	if err := w.Close(); err != nil {
		return 0, err
	}
	store, err := fit.OpenDiskStore(path, 0)
	if err != nil {
		return 0, err
	}
	defer store.Close()
	classes, err := store.Classes()
	if err != nil {
		return 0, err
	}
	clock := &epochClock{}
	fitOpts := fit.Options{Epochs: o.epochs, Stop: []fit.Converger{}, Seed: o.seed, Recorder: clock, Workers: 1, Block: store.BlockRows()}
	if _, err := fit.TrainBytesContext(context.Background(), store, classes, o.classes, fitOpts); err != nil {
		return 0, err
	}
	if err := store.Err(); err != nil {
		return 0, err
	}
	epoch := time.Duration(math.MaxInt64)
	for k := 1; k < len(clock.ends); k++ {
		epoch = min(epoch, clock.ends[k].Sub(clock.ends[k-1]))
	}
	return epoch, nil
}
