package pipeline

import (
	"bytes"
	"encoding/binary"
	"encoding/gob"
	"fmt"
	"hash/fnv"
	"slices"
)

// Cross-validation folds without a shuffle of the whole data.
//
// A row's key is its file's key and its 1-based row number in that file;
// rowHash(key, seed) is a fixed function of them, so a row gets the same
// fold on any runner, on any number of workers and in every re-run. The
// folds are stratified as evaluate.StratifiedFoldsRepeat makes them, with
// the hash order standing in for the seeded shuffle: the rows of each
// class, taken in ascending hash order and the classes in label order, are
// dealt round-robin to the folds, each class starting at the fold after
// the one where the previous class stopped. So per class the folds' counts
// differ by at most one, and so do the fold sizes.
//
// Dealing needs each row's rank among the hashes of its class: one pass
// gathers every row's hash by class (8 bytes a row, held by each worker as
// a side input), and a row's fold is then (offset of its class + its rank)
// mod K.

// rowHash hashes a row key with the seed: FNV-1a (Fowler, Noll & Vo) of
// the file key, the row number and the seed, then the splitmix64 finalizer
// (Steele, Lea & Flood 2014) to spread FNV's low bits.
func rowHash(file string, row int, seed uint64) uint64 {
	h := fnv.New64a()
	h.Write([]byte(file))
	var buf [17]byte
	buf[0] = 0 // keeps "a"+row 12 apart from "a1"+row 2
	binary.LittleEndian.PutUint64(buf[1:9], uint64(row))
	binary.LittleEndian.PutUint64(buf[9:], seed)
	h.Write(buf[:])
	return mix64(h.Sum64())
}

// mix64 is the splitmix64 finalizer.
func mix64(z uint64) uint64 {
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}

// foldIndex holds what assigning a row its fold needs: per class (in
// label order) the sorted hashes of its rows and the rows dealt before it.
type foldIndex struct {
	Folds   int
	Labels  []string
	Offsets []int      // rows of the classes before each class
	Hashes  [][]uint64 // per class, ascending
	byLabel map[string]int
}

// newFoldIndex sorts each class's hashes and sets the offsets. labels is
// the label order; hashes are by label.
func newFoldIndex(folds int, labels []string, hashes map[string][]uint64) *foldIndex {
	x := &foldIndex{Folds: folds, Labels: labels, Offsets: make([]int, len(labels)), Hashes: make([][]uint64, len(labels))}
	dealt := 0
	for c, l := range labels {
		h := hashes[l]
		slices.Sort(h)
		x.Hashes[c], x.Offsets[c] = h, dealt
		dealt += len(h)
	}
	return x
}

// foldOf returns the 0-based fold of a row of class c whose hash is h.
// Rows of equal hash (a 64-bit collision) share a rank and so a fold.
func (x *foldIndex) foldOf(c int, h uint64) int {
	rank, _ := slices.BinarySearch(x.Hashes[c], h)
	return (x.Offsets[c] + rank) % x.Folds
}

// class returns the class index of a label, or -1.
func (x *foldIndex) class(label string) int {
	if x.byLabel == nil {
		x.byLabel = make(map[string]int, len(x.Labels))
		for i, l := range x.Labels {
			x.byLabel[l] = i
		}
	}
	if c, ok := x.byLabel[label]; ok {
		return c
	}
	return -1
}

// encodeFoldIndex and decodeFoldIndex carry a fold index between stages;
// an empty payload is no index (no cross-validation).
func encodeFoldIndex(x *foldIndex) ([]byte, error) {
	var buf bytes.Buffer
	if err := gob.NewEncoder(&buf).Encode(x); err != nil {
		return nil, fmt.Errorf("pipeline: fold index: %w", err)
	}
	return buf.Bytes(), nil
}

func decodeFoldIndex(b []byte) (*foldIndex, error) {
	if len(b) == 0 {
		return nil, nil
	}
	var x foldIndex
	if err := gob.NewDecoder(bytes.NewReader(b)).Decode(&x); err != nil {
		return nil, fmt.Errorf("pipeline: fold index: %w", err)
	}
	return &x, nil
}

// Folds returns the folds a pipeline run with the given fold count and
// seed deals rows into, as lists of 0-based rows (ascending) of a table
// read whole from one file of key file, whose class of row i is
// classes[i] (into labels, in label order). It is the fold assignment of
// the pipeline, for cross-validating the same folds locally.
func Folds(file string, rowNumbers, classes []int, numClasses, folds int, seed uint64) [][]int {
	labels := make([]string, numClasses)
	hashes := make(map[string][]uint64, numClasses)
	for c := range labels {
		labels[c] = fmt.Sprint(c)
	}
	rowHashes := make([]uint64, len(classes))
	for i, c := range classes {
		rowHashes[i] = rowHash(file, rowNumbers[i], seed)
		hashes[labels[c]] = append(hashes[labels[c]], rowHashes[i])
	}
	x := newFoldIndex(folds, labels, hashes)
	out := make([][]int, folds)
	for i, c := range classes {
		k := x.foldOf(c, rowHashes[i])
		out[k] = append(out[k], i)
	}
	return out
}
