package reference

import (
	"fmt"
	"math"
	"strings"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"

	"deltafit/evaluate"
	"deltafit/fit"
	"deltafit/ingest/encode"
	"deltafit/internal/refdata"
)

// Case is one reference case and its outcome.
type Case struct {
	Name     string `json:"name"`
	Source   string `json:"source"`
	Expected string `json:"expected"`
	Got      string `json:"got"`
	Pass     bool   `json:"pass"`
}

// Run computes every reference case. An error means a case could not be
// computed at all, which is itself a failure of the installation.
func Run() ([]Case, error) {
	var cases []Case
	for _, run := range []func() ([]Case, error){irisCases, truthTableCases, leastSquaresCase} {
		c, err := run()
		if err != nil {
			return cases, err
		}
		cases = append(cases, c...)
	}
	return cases, nil
}

func irisCases() ([]Case, error) {
	d, err := refdata.Iris()
	if err != nil {
		return nil, err
	}
	var cases []Case
	// UCI iris.names: summary statistics of the four attributes.
	summary := []struct {
		column             string
		min, max, mean, sd float64
	}{
		{"sepal_length", 4.3, 7.9, 5.84, 0.83},
		{"sepal_width", 2.0, 4.4, 3.05, 0.43},
		{"petal_length", 1.0, 6.9, 3.76, 1.76},
		{"petal_width", 0.1, 2.5, 1.20, 0.76},
	}
	classCode := make([]float64, len(d.Classes))
	for i, c := range d.Classes {
		classCode[i] = float64(c + 1)
	}
	for _, s := range summary {
		values := d.Table.Column(s.column).Numbers
		mean, sd := stat.MeanStdDev(values, nil)
		lo, hi := minMax(values)
		pass := lo == s.min && hi == s.max && math.Abs(mean-s.mean) <= 0.01 && math.Abs(sd-s.sd) <= 0.01
		cases = append(cases, Case{
			Name:     "iris " + s.column + " min, max, mean, sd",
			Source:   "UCI iris.names",
			Expected: fmt.Sprintf("%.1f %.1f %.2f %.2f (±0.01)", s.min, s.max, s.mean, s.sd),
			Got:      fmt.Sprintf("%.1f %.1f %.4f %.4f", lo, hi, mean, sd),
			Pass:     pass,
		})
	}
	// UCI iris.names: class correlation of petal width.
	r := stat.Correlation(d.Table.Column("petal_width").Numbers, classCode, nil)
	cases = append(cases, Case{
		Name: "iris petal_width class correlation", Source: "UCI iris.names",
		Expected: "0.9565 (±0.0005)", Got: fmt.Sprintf("%.4f", r), Pass: math.Abs(r-0.9565) <= 0.0005,
	})

	// UCI iris.names: setosa is linearly separable from the other two.
	setosa := *d
	setosa.Labels = []string{"other", "setosa"}
	setosa.Classes = make([]int, len(d.Classes))
	for i, c := range d.Classes {
		if d.Labels[c] == "setosa" {
			setosa.Classes[i] = 1
		}
	}
	fitted, err := evaluate.Learner{Fit: fit.Options{Seed: 1}}.Train(&setosa, nil)
	if err != nil {
		return nil, err
	}
	errs := fitted.Result.History[len(fitted.Result.History)-1].Errors
	cases = append(cases, Case{
		Name: "iris setosa vs rest, delta rule training errors", Source: "UCI iris.names (setosa linearly separable)",
		Expected: "0", Got: fmt.Sprint(errs), Pass: errs == 0,
	})

	// Common practice: linear baselines on Iris score about 0.95-0.98.
	folds, err := evaluate.Folds(d, 10, 1, 0)
	if err != nil {
		return nil, err
	}
	cv, err := evaluate.CrossValidate(d, folds, evaluate.LearnerMethod("delta", evaluate.Learner{Fit: fit.Options{Seed: 1}}, d))
	if err != nil {
		return nil, err
	}
	cases = append(cases, Case{
		Name: "iris 10-fold CV accuracy, default settings", Source: "common practice (linear baselines ≈0.95-0.98)",
		Expected: "≥ 0.93", Got: fmt.Sprintf("%.4f", cv.Pooled), Pass: cv.Pooled >= 0.93,
	})
	return cases, nil
}

func minMax(xs []float64) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, x := range xs {
		lo, hi = min(lo, x), max(hi, x)
	}
	return lo, hi
}

// truthPatterns reads a two-input truth table as raw 0/1 inputs.
func truthPatterns(name string) (fit.Patterns, []int, error) {
	d, err := refdata.Dataset(name, "y")
	if err != nil {
		return fit.Patterns{}, nil, err
	}
	x1, x2 := d.Table.Column("x1").Numbers, d.Table.Column("x2").Numbers
	values := make([]float64, 0, 2*len(x1))
	for i := range x1 {
		values = append(values, x1[i], x2[i])
	}
	return fit.Patterns{Width: 2, Values: values}, d.Classes, nil
}

func truthTableCases() ([]Case, error) {
	var cases []Case
	for _, name := range []string{"and.csv", "or.csv"} {
		p, classes, err := truthPatterns(name)
		if err != nil {
			return nil, err
		}
		res, err := fit.Train(p, classes, 2, fit.Options{Seed: 1, Epochs: 1000})
		if err != nil {
			return nil, err
		}
		errs := res.History[len(res.History)-1].Errors
		cases = append(cases, Case{
			Name: strings.TrimSuffix(name, ".csv") + " truth table, delta rule training errors", Source: "Minsky & Papert 1969 (linearly separable)",
			Expected: "0", Got: fmt.Sprint(errs), Pass: errs == 0,
		})
	}

	p, classes, err := truthPatterns("xor.csv")
	if err != nil {
		return nil, err
	}
	// Hand algebra from the normal equations: w = (0, 0), b = 1/2, MSE 1/4.
	w, mse := leastSquares(p, classes)
	cases = append(cases, Case{
		Name: "xor least-squares fit w1, w2, b, MSE", Source: "normal equations, worked by hand",
		Expected: "0 0 0.5 0.25 (±1e-9)", Got: fmt.Sprintf("%.4g %.4g %.4g %.4g", w[0], w[1], w[2], mse),
		Pass: math.Abs(w[0]) < 1e-9 && math.Abs(w[1]) < 1e-9 && math.Abs(w[2]-0.5) < 1e-9 && math.Abs(mse-0.25) < 1e-9,
	})
	res, err := fit.Train(p, classes, 2, fit.Options{Seed: 1, Epochs: 2000})
	if err != nil {
		return nil, err
	}
	best := 0.0
	for _, e := range res.History {
		best = max(best, 1-float64(e.Errors)/4)
	}
	cases = append(cases, Case{
		Name: "xor, best delta-rule training accuracy over 2000 epochs", Source: "Minsky & Papert 1969",
		Expected: "≤ 0.75", Got: fmt.Sprintf("%.2f", best), Pass: best <= 0.75,
	})
	return cases, nil
}

// leastSquares solves [X, 1] w = y by QR, for y = class 0/1, and returns w
// and the mean squared residual.
func leastSquares(p fit.Patterns, classes []int) ([]float64, float64) {
	n, width := len(classes), p.Width
	a := mat.NewDense(n, width+1, nil)
	y := mat.NewVecDense(n, nil)
	for i := 0; i < n; i++ {
		for j, v := range p.Values[i*width : (i+1)*width] {
			a.Set(i, j, v)
		}
		a.Set(i, width, 1)
		y.SetVec(i, float64(classes[i]))
	}
	var qr mat.QR
	qr.Factorize(a)
	var w mat.VecDense
	if err := qr.SolveVecTo(&w, false, y); err != nil {
		return make([]float64, width+1), math.NaN()
	}
	var fitted mat.VecDense
	fitted.MulVec(a, &w)
	fitted.SubVec(&fitted, y)
	mse := mat.Dot(&fitted, &fitted) / float64(n)
	return w.RawVector().Data, mse
}

// leastSquaresCase checks that batch LMS with linear units ends at the
// least-squares solution (Widrow & Hoff 1960; Widrow & Stearns 1985).
func leastSquaresCase() ([]Case, error) {
	d, err := refdata.Iris()
	if err != nil {
		return nil, err
	}
	virginica := *d
	virginica.Labels = []string{"other", "virginica"}
	virginica.Classes = make([]int, len(d.Classes))
	for i, c := range d.Classes {
		if d.Labels[c] == "virginica" {
			virginica.Classes[i] = 1
		}
	}
	learner := evaluate.Learner{
		Plan: encode.Options{Numeric: encode.Encoding{Method: encode.ZScore}},
		Fit:  fit.Options{Unit: fit.Linear, Batch: true, KeepGoing: true, Epochs: 50000, Tolerance: 1e-300},
	}
	fitted, err := learner.Train(&virginica, nil)
	if err != nil {
		return nil, err
	}
	values, _ := fitted.Classifier.Plan.EncodeTo(nil, virginica.Features, nil)
	w, _ := leastSquares(fit.Patterns{Width: fitted.Classifier.Plan.Width(), Values: values}, virginica.Classes)
	net := fitted.Result.Network
	gap := math.Abs(net.Biases[0] - w[len(w)-1])
	for j, v := range net.Weights[0] {
		gap = max(gap, math.Abs(v-w[j]))
	}
	return []Case{{
		Name: "iris virginica vs rest, batch LMS weights vs least squares (QR)", Source: "Widrow & Hoff 1960; Widrow & Stearns 1985",
		Expected: "max |Δw| ≤ 1e-4", Got: fmt.Sprintf("%.2g", gap), Pass: gap <= 1e-4,
	}}, nil
}
