package main

import (
	"bytes"
	"context"
	"io"
	"math/rand/v2"
	"path/filepath"
	"strconv"
	"testing"
	"time"

	"github.com/apache/arrow-go/v18/arrow"
	arrowcsv "github.com/apache/arrow-go/v18/arrow/csv"
)

// benchRows writes n rows of invented measurements under Iris's column
// names, with an id column, from a fixed seed.
func benchRows(n int) []byte {
	rng := rand.New(rand.NewPCG(1, 2))
	species := []string{"setosa", "versicolor", "virginica"}
	means := [][4]float64{{5.0, 3.4, 1.5, 0.2}, {5.9, 2.8, 4.3, 1.3}, {6.6, 3.0, 5.6, 2.0}}
	b := []byte("id,sepal_length,sepal_width,petal_length,petal_width,species\n")
	for i := range n {
		k := rng.IntN(3)
		b = strconv.AppendInt(b, int64(i+1), 10)
		for j := range 4 {
			b = append(b, ',')
			b = strconv.AppendFloat(b, float64(int((means[k][j]+rng.NormFloat64()*0.4)*10))/10, 'f', 1, 64)
		}
		b = append(append(append(b, ','), species[k]...), '\n')
	}
	return b
}

// readCSVAlone reads data with arrow-go's CSV reader set up as ingest
// sets it up (every column text, 4096 rows a batch, "" and NA null),
// touching nothing: the floor under any reading of the data.
func readCSVAlone(b *testing.B, data []byte) int {
	fields := make([]arrow.Field, 6)
	for i := range fields {
		fields[i] = arrow.Field{Name: strconv.Itoa(i), Type: arrow.BinaryTypes.String, Nullable: true}
	}
	r := arrowcsv.NewReader(bytes.NewReader(data), arrow.NewSchema(fields, nil),
		arrowcsv.WithHeader(true), arrowcsv.WithChunk(4096), arrowcsv.WithNullReader(true, "", "NA"))
	defer r.Release()
	rows := 0
	for r.Next() {
		rows += int(r.RecordBatch().NumRows())
	}
	if err := r.Err(); err != nil {
		b.Fatal(err)
	}
	return rows
}

// BenchmarkPredictCSV runs predict, CSV in and CSV out, on a million rows,
// and in the same iterations arrow-go's CSV reader reading the same bytes
// alone. predict/read is the ratio of their times (the target is at most
// 2); rows/s is predict's.
//
//	go test ./cmd/deltafit -run '^$' -bench PredictCSV -benchtime 3x
func BenchmarkPredictCSV(b *testing.B) {
	const rows = 1_000_000
	data := benchRows(rows)
	model := filepath.Join(b.TempDir(), "m.json")
	iris := filepath.Join("..", "..", "testdata", "iris.csv")
	if code := run(context.Background(), []string{"fit", iris, "--target", "species", "-q", "-o", model}, nil, io.Discard, io.Discard); code != 0 {
		b.Fatalf("fit: exit %d", code)
	}
	b.SetBytes(int64(len(data)))
	var read, predict time.Duration
	for b.Loop() {
		start := time.Now()
		if n := readCSVAlone(b, data); n != rows {
			b.Fatalf("read %d rows", n)
		}
		read += time.Since(start)
		start = time.Now()
		var errs bytes.Buffer
		if code := run(context.Background(), []string{"predict", "--model", model, "-"}, bytes.NewReader(data), io.Discard, &errs); code != 0 {
			b.Fatalf("predict: exit %d: %s", code, errs.String())
		}
		predict += time.Since(start)
	}
	b.ReportMetric(float64(predict)/float64(read), "predict/read")
	b.ReportMetric(float64(b.N*rows)/predict.Seconds(), "rows/s")
}
