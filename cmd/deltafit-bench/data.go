package main

import (
	"bufio"
	"bytes"
	"fmt"
	"io"
	"math/rand/v2"
	"strconv"

	"deltafit/ingest"
	"deltafit/ingest/tabular"
)

// targetColumn names the column of class labels in the synthetic data.
const targetColumn = "class"

// shape is the size of a synthetic dataset.
type shape struct {
	Rows, Columns, Classes int
	Seed                   uint64
}

// syntheticCSV returns a seeded synthetic table as CSV (see
// writeSyntheticCSV).
func syntheticCSV(s shape) []byte {
	var buf bytes.Buffer
	buf.Grow(s.Rows * (s.Columns*10 + 4))
	_ = writeSyntheticCSV(&buf, s) // a bytes.Buffer does not fail
	return buf.Bytes()
}

// writeSyntheticCSV writes a seeded synthetic table as CSV to w, row by
// row, so a table larger than memory can be made: Columns numeric columns
// x1, x2, … and a class column c0, c1, …. Each row's class is uniform; its
// values are normal with unit variance about a mean that moves with the
// class, so the classes overlap and no run stops early on zero errors.
// Invented data, for timing only; it is never written into the
// repository.
func writeSyntheticCSV(w io.Writer, s shape) error {
	rng := rand.New(rand.NewPCG(s.Seed, 1))
	bw := bufio.NewWriterSize(w, 1<<20)
	for j := range s.Columns {
		fmt.Fprintf(bw, "x%d,", j+1)
	}
	bw.WriteString(targetColumn + "\n")
	line := make([]byte, 0, 256)
	for range s.Rows {
		c := rng.IntN(s.Classes)
		line = line[:0]
		for j := range s.Columns {
			mean := 0.6 * float64(c-(s.Classes-1)/2) * float64(j%3+1) / 3
			line = strconv.AppendFloat(line, mean+rng.NormFloat64(), 'f', 5, 64)
			line = append(line, ',')
		}
		line = append(line, 'c')
		line = strconv.AppendInt(line, int64(c), 10)
		line = append(line, '\n')
		if _, err := bw.Write(line); err != nil {
			return err
		}
	}
	return bw.Flush()
}

// readDataset reads CSV bytes through the project's reader into a dataset.
func readDataset(name string, data []byte) (*tabular.Dataset, error) {
	return readDatasetFrom(name, bytes.NewReader(data))
}

// readDatasetFrom reads CSV from r through the project's reader into a
// dataset.
func readDatasetFrom(name string, r io.Reader) (*tabular.Dataset, error) {
	t, err := ingest.ReadTable(name, r, ingest.ReadOptions{Target: targetColumn})
	if err != nil {
		return nil, err
	}
	return tabular.NewDataset(t, targetColumn, nil)
}
