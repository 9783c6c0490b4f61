package fit

import (
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"math"
	"math/rand/v2"
	"runtime"
	"testing"
)

// resultDigest hashes every number of a Result bit for bit: the weights,
// the biases, the rate and spectrum, each epoch's statistics and the stop
// reason. What came later, the held-out statistics, the kept epoch and
// the start of the average, enters only when set, so that the digests
// recorded before still hold.
func resultDigest(res *Result) string {
	h := sha256.New()
	put := func(v float64) { _ = binary.Write(h, binary.LittleEndian, math.Float64bits(v)) }
	for j, row := range res.Network.Weights {
		for _, w := range row {
			put(w)
		}
		put(res.Network.Biases[j])
	}
	put(res.Rate)
	put(res.LambdaMax)
	put(res.TraceR)
	for _, s := range res.History {
		_ = binary.Write(h, binary.LittleEndian, int64(s.Epoch))
		_ = binary.Write(h, binary.LittleEndian, int64(s.Errors))
		put(s.Loss)
	}
	h.Write([]byte(res.Stop))
	if res.HoldoutRows > 0 || res.AverageFrom > 0 {
		_ = binary.Write(h, binary.LittleEndian, int64(res.Epoch))
		_ = binary.Write(h, binary.LittleEndian, int64(res.AverageFrom))
		_ = binary.Write(h, binary.LittleEndian, int64(res.HoldoutRows))
		for _, s := range res.History {
			_ = binary.Write(h, binary.LittleEndian, int64(s.Holdout.Errors))
			put(s.Holdout.Loss)
		}
	}
	return hex.EncodeToString(h.Sum(nil))
}

// noisyPatterns are uniform patterns in [0, 1) with uniform labels, from a
// fixed seed: random data, for bit-for-bit pins and timing only.
func noisyPatterns(rows, width, classes int) (Patterns, []int) {
	rng := rand.New(rand.NewPCG(11, 12))
	p := Patterns{Width: width, Values: make([]float64, rows*width)}
	for i := range p.Values {
		p.Values[i] = rng.Float64()
	}
	labels := make([]int, rows)
	for i := range labels {
		labels[i] = rng.IntN(classes)
	}
	return p, labels
}

// TestTrainPinned pins the exact bits of Train's results on the default
// path and its variants, so that a change meant to leave the arithmetic
// alone shows if it does not. The batch, Hebbian and fixed-rate
// last-iterate digests date from before patterns were read through Store;
// they held through averaging, the every-row rate and the Plateau stop
// rule, which do not touch those paths. The online digests at the
// automatic rate, and those that stop by a rule, were recorded again when
// those three became the defaults, and the digests of decay, L2 and the
// holdout when they came. Other architectures may fuse multiply-adds and
// round differently, so the pins hold on amd64 only.
func TestTrainPinned(t *testing.T) {
	if runtime.GOARCH != "amd64" {
		t.Skip("digests recorded on amd64")
	}
	rows, species := readIris(t)
	xor, xorLabels := readTruthTable(t, "xor.csv")
	and, andLabels := readTruthTable(t, "and.csv")
	noisy, noisyLabels := noisyPatterns(2*measureChunk+33, 5, 3)
	for _, tc := range []struct {
		name       string
		patterns   Patterns
		classes    []int
		numClasses int
		opts       Options
		digest     string
	}{
		{"iris standardized default", standardized(rows), species, 3, Options{Seed: 1}, "63cdb382f7d9193146fc9317ffa390f32ef39ed665a1df6767469d9dc1c34cd5"},
		{"iris raw online keep going", patternsOf(rows), species, 3, Options{Seed: 7, Epochs: 40, KeepGoing: true}, "71f3604be430569722af7434a75fb6252d617315a5c20dbe4195b46a454bbbdf"},
		{"iris min-max batch linear", minMaxed(rows), species, 3, Options{Batch: true, Unit: Linear, Epochs: 500, KeepGoing: true}, "381c60ccdeefceb59f93dc0401b2ae2f4498625a3a77c366fd014d354a9a624d"},
		{"iris hebbian", standardized(rows), species, 3, Options{Rule: Hebbian{}}, "73d277742f18deb235bf2af4e5e7ff1b4d835887a1b66efa5641f11c5c2e3e44"},
		{"iris fixed rate", standardized(rows), species, 3, Options{Seed: 2, Rate: 0.01, Epochs: 25, KeepGoing: true, LastIterate: true}, "fe444bf1207bc1d82362e0e2cd78f5e1786223ec15a7a2e51a04b5f2cc84783a"},
		{"xor converges", xor, xorLabels, 2, Options{Unit: Linear, Batch: true, Epochs: 100000}, "80e08e7af1a5bbfb2cbe4559e590c6ee3f163a301e54d65eb80919f5b96cbf84"},
		{"and zero errors", and, andLabels, 2, Options{Seed: 1}, "511daf471ca3d1531cb9ad9dd9e68e04a3cef552cb10fa24d8df5c4fbb12a659"},
		{"noisy multi-chunk", noisy, noisyLabels, 3, Options{Seed: 5, Epochs: 4}, "860bab2f0c5490a4de30044033ca7e7ef5bfe5f751e0f0efdc5e34488e087d78"},
		{"noisy multi-chunk batch", noisy, noisyLabels, 3, Options{Batch: true, Epochs: 3}, "7547e17d4f039e44cb76ea9d63bf228ccac9946b0719e324356d05dcc7c659f3"},
		{"iris fixed rate averaged", standardized(rows), species, 3, Options{Seed: 2, Rate: 0.01, Epochs: 25, KeepGoing: true}, "f49f4413ae9ae6c2906b4ebea876413cddd9e39e8952e19e3ae002a7a69d45d7"},
		{"iris decay and l2", standardized(rows), species, 3, Options{Seed: 4, Unit: Linear, Decay: 0.1, L2: 0.01}, "d6d20984fd655c275a16df287eea603f796e4b6d2dea16c4220c9340efcdaa29"},
		{"iris batch decay and l2", minMaxed(rows), species, 3, Options{Batch: true, Decay: 0.01, L2: 0.001}, "0947ce6b9585c713b7e3a4ebdd11d3805e289f8882297e8831557f4979ea5dee"},
		{"iris holdout", standardized(rows), species, 3, Options{Seed: 6, Holdout: 0.2, Epochs: 300}, "d05fe6f727555cfa4b3ccc70df5b33f0a12da51988d9f246e889353540a41091"},
		{"noisy multi-chunk holdout", noisy, noisyLabels, 3, Options{Seed: 5, Epochs: 3, Holdout: 0.3}, "70125ee276614b871473c9093d0499c77a9e8877204dc1cb576f8a7f532aa8de"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			res, err := Train(tc.patterns, tc.classes, tc.numClasses, tc.opts)
			if err != nil {
				t.Fatal(err)
			}
			if got := resultDigest(res); got != tc.digest {
				t.Errorf("digest %s, want %s (stop %s after %d epochs)", got, tc.digest, res.Stop, len(res.History))
			}
		})
	}
}
