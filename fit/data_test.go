package fit

import (
	"encoding/csv"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// irisSpecies are the class names of testdata/iris.csv in the order of
// their class index.
var irisSpecies = []string{"setosa", "versicolor", "virginica"}

// readCSV reads a testdata file with a header row.
func readCSV(t testing.TB, name string) [][]string {
	t.Helper()
	f, err := os.Open(filepath.Join("..", "testdata", name))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	records, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return records[1:]
}

// parseRow parses the numeric cells of a record.
func parseRow(t testing.TB, cells []string) []float64 {
	t.Helper()
	row := make([]float64, len(cells))
	for i, cell := range cells {
		v, err := strconv.ParseFloat(cell, 64)
		if err != nil {
			t.Fatal(err)
		}
		row[i] = v
	}
	return row
}

// readIris returns the 150 raw iris measurements (4 columns) and the
// species index of each.
func readIris(t testing.TB) (rows [][]float64, species []int) {
	t.Helper()
	for _, record := range readCSV(t, "iris.csv") {
		rows = append(rows, parseRow(t, record[:4]))
		class := -1
		for k, name := range irisSpecies {
			if record[4] == name {
				class = k
			}
		}
		if class < 0 {
			t.Fatalf("unknown species %q", record[4])
		}
		species = append(species, class)
	}
	if len(rows) != 150 { // UCI iris.names: 150 instances, 50 per class
		t.Fatalf("iris has %d rows, want 150", len(rows))
	}
	return rows, species
}

// readTruthTable returns the inputs and labels of a truth table file
// (header x1,x2,y).
func readTruthTable(t testing.TB, name string) (Patterns, []int) {
	t.Helper()
	var rows [][]float64
	var labels []int
	for _, record := range readCSV(t, name) {
		rows = append(rows, parseRow(t, record[:2]))
		label, err := strconv.Atoi(record[2])
		if err != nil {
			t.Fatal(err)
		}
		labels = append(labels, label)
	}
	return patternsOf(rows), labels
}

// patternsOf packs rows into Patterns.
func patternsOf(rows [][]float64) Patterns {
	p := Patterns{Width: len(rows[0])}
	for _, row := range rows {
		p.Values = append(p.Values, row...)
	}
	return p
}

// standardized returns rows with each column shifted to mean 0 and scaled
// to (population) standard deviation 1.
func standardized(rows [][]float64) Patterns {
	return columnwise(rows, func(column []float64) (shift, scale float64) {
		var mean, variance float64
		for _, v := range column {
			mean += v
		}
		mean /= float64(len(column))
		for _, v := range column {
			variance += (v - mean) * (v - mean)
		}
		return mean, math.Sqrt(variance / float64(len(column)))
	})
}

// minMaxed returns rows with each column mapped onto [0, 1].
func minMaxed(rows [][]float64) Patterns {
	return columnwise(rows, func(column []float64) (shift, scale float64) {
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, v := range column {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
		return lo, hi - lo
	})
}

// columnwise maps each value v of a column to (v − shift)/scale.
func columnwise(rows [][]float64, fitColumn func([]float64) (shift, scale float64)) Patterns {
	width := len(rows[0])
	out := make([][]float64, len(rows))
	for i := range rows {
		out[i] = make([]float64, width)
	}
	column := make([]float64, len(rows))
	for k := range width {
		for i, row := range rows {
			column[i] = row[k]
		}
		shift, scale := fitColumn(column)
		for i, row := range rows {
			out[i][k] = (row[k] - shift) / scale
		}
	}
	return patternsOf(out)
}

// oneVsRest relabels classes: 1 for class member, 0 for the others.
func oneVsRest(classes []int, member int) []int {
	out := make([]int, len(classes))
	for i, c := range classes {
		if c == member {
			out[i] = 1
		}
	}
	return out
}

// leastSquares solves min ‖[X, 1]β − T‖ with gonum's QR, one column of β
// per output unit with targets on/off as the network's units have them.
// Row k of the result holds unit k's weights followed by its bias.
func leastSquares(t testing.TB, p Patterns, classes []int, numClasses int, on, off float64) [][]float64 {
	t.Helper()
	n, d := p.Len(), p.Width+1
	design := mat.NewDense(n, d, nil)
	units := unitCount(numClasses)
	targets := mat.NewDense(n, units, nil)
	for i, c := range classes {
		for k, v := range p.Row(i) {
			design.Set(i, k, v)
		}
		design.Set(i, d-1, 1)
		for j := range units {
			member := c == j
			if units == 1 {
				member = c == 1
			}
			targets.Set(i, j, off)
			if member {
				targets.Set(i, j, on)
			}
		}
	}
	var qr mat.QR
	qr.Factorize(design)
	var beta mat.Dense
	if err := qr.SolveTo(&beta, false, targets); err != nil {
		t.Fatal(err)
	}
	solution := make([][]float64, units)
	for j := range units {
		solution[j] = mat.Col(nil, j, &beta)
	}
	return solution
}

// maxDeviation returns the largest |difference| between the network's
// weights and biases and a solution laid out as leastSquares returns it.
func maxDeviation(net *Network, solution [][]float64) float64 {
	var worst float64
	for j, row := range solution {
		for k, want := range row[:net.Inputs] {
			worst = math.Max(worst, math.Abs(net.Weights[j][k]-want))
		}
		worst = math.Max(worst, math.Abs(net.Biases[j]-row[net.Inputs]))
	}
	return worst
}
