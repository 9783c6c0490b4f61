package export

import (
	"bytes"
	"context"
	"image/color"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"deltafit/evaluate"
	"deltafit/fit"
	"deltafit/ingest/encode"
)

// irisStudy is a small study of Iris with cross-validation: its fit report
// and classifier.
func irisStudy(t *testing.T) (*FitReport, *evaluate.Study) {
	t.Helper()
	d := irisDataset(t)
	l := evaluate.Learner{Fit: fit.Options{Seed: 1, Epochs: 40}}
	l.Plan.Numeric = encode.Encoding{Method: "thermometer", Bins: 4}
	s, err := evaluate.RunStudy(context.Background(), d, l, evaluate.StudyOptions{Folds: 5, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	r := NewFitReport(s, d, "test", 1, "")
	scored, err := s.Main.Scored(d)
	if err != nil {
		t.Fatal(err)
	}
	if r.CV.Scores, err = ScoreFiguresOf(scored, d.Labels, fit.Logistic, -1); err != nil {
		t.Fatal(err)
	}
	return r, s
}

// Every figure draws to a PNG of the size asked for at 144 dpi that is not
// blank, and writes the same bytes each time, in PNG and SVG.
func TestFiguresDrawAndRepeat(t *testing.T) {
	r, s := irisStudy(t)
	figures, err := FitFigures(r, s.Fitted.Classifier)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, f := range figures {
		names = append(names, f.Name)
	}
	if got := strings.Join(names, " "); got != "learning-curve confusion weights" {
		t.Fatalf("figures %s, want the learning curve, the confusion table and the weights (no ROC for three classes)", got)
	}
	for _, f := range figures {
		t.Run(f.Name, func(t *testing.T) {
			var first, second bytes.Buffer
			if err := f.WritePNG(&first); err != nil {
				t.Fatal(err)
			}
			if err := f.WritePNG(&second); err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(first.Bytes(), second.Bytes()) {
				t.Error("the PNG differs from one writing to the next")
			}
			img, err := png.Decode(bytes.NewReader(first.Bytes()))
			if err != nil {
				t.Fatal(err)
			}
			b := img.Bounds()
			wantW, wantH := int(f.Width.Points()*pngDPI/72+0.5), int(f.Height.Points()*pngDPI/72+0.5)
			if b.Dx() != wantW || b.Dy() != wantH {
				t.Errorf("PNG of %d×%d pixels, want %d×%d", b.Dx(), b.Dy(), wantW, wantH)
			}
			inked := 0
			for y := b.Min.Y; y < b.Max.Y; y += 2 {
				for x := b.Min.X; x < b.Max.X; x += 2 {
					if r, g, bl, _ := img.At(x, y).RGBA(); r < 0xe000 || g < 0xe000 || bl < 0xe000 {
						inked++
					}
				}
			}
			if share := float64(inked) / float64(b.Dx()*b.Dy()/4); share < 0.01 {
				t.Errorf("only %.2f%% of the PNG is drawn on", 100*share)
			}
			var svg1, svg2 bytes.Buffer
			if err := f.WriteSVG(&svg1); err != nil {
				t.Fatal(err)
			}
			if err := f.WriteSVG(&svg2); err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(svg1.Bytes(), svg2.Bytes()) {
				t.Error("the SVG differs from one writing to the next")
			}
			if !strings.Contains(svg1.String(), f.Title) {
				t.Errorf("the SVG does not hold its title %q", f.Title)
			}
			if strings.Contains(svg1.String(), "<image") {
				t.Error("the SVG holds a raster image; every mark should be a vector shape")
			}
		})
	}
}

// The confusion heat map writes each cell's count in the cell.
func TestConfusionFigureCounts(t *testing.T) {
	c := evaluate.NewConfusion([]string{"cat", "dog", "rabbit"})
	for i, row := range [][]int{{5, 3, 0}, {2, 3, 1}, {0, 2, 11}} {
		for j, n := range row {
			for range n {
				c.Add(i, j)
			}
		}
	}
	f, err := ConfusionFigure(c, "animals")
	if err != nil {
		t.Fatal(err)
	}
	svg, err := f.InlineSVG()
	if err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(svg, "<svg") {
		t.Errorf("inline SVG starts %q", svg[:20])
	}
	for _, want := range []string{">5</text>", ">3</text>", ">11</text>", ">rabbit</text>", ">predicted class</text>", ">true class</text>"} {
		if !strings.Contains(svg, want) {
			t.Errorf("the SVG has no %s", want)
		}
	}
}

// relativeLuminance is the WCAG 2 relative luminance of c (sRGB, D65).
func relativeLuminance(c color.Color) float64 {
	r, g, b, _ := c.RGBA()
	lin := func(v uint32) float64 {
		s := float64(v) / 0xffff
		if s <= 0.04045 {
			return s / 12.92
		}
		return math.Pow((s+0.055)/1.055, 2.4)
	}
	return 0.2126*lin(r) + 0.7152*lin(g) + 0.0722*lin(b)
}

// The diverging scale is lightest at 0 and darkens steadily toward both
// ends, so it reads without colour and a weight of 0 looks empty; the
// sequential scale darkens steadily from its minimum.
func TestColourScales(t *testing.T) {
	d := divergingScale(2)
	at := func(r *ramp, v float64) color.Color {
		c, err := r.At(v)
		if err != nil {
			t.Fatalf("At(%v): %v", v, err)
		}
		return c
	}
	if got := at(d, 0); got != color.Color(scaleWhite) {
		t.Errorf("the diverging scale at 0 is %v, want its centre %v", got, scaleWhite)
	}
	for k := 1; k <= 20; k++ {
		v, nearer := float64(k)/10, float64(k-1)/10
		for _, side := range []float64{-1, 1} {
			if relativeLuminance(at(d, side*v)) >= relativeLuminance(at(d, side*nearer)) {
				t.Errorf("the diverging scale at %v is not darker than at %v", side*v, side*nearer)
			}
		}
	}
	if _, err := d.At(2.5); err == nil {
		t.Error("a value past the end of the scale has a colour")
	}
	s := sequentialScale(0, 1)
	for v := 0.1; v <= 1; v += 0.1 {
		if relativeLuminance(at(s, v)) >= relativeLuminance(at(s, v-0.1)) {
			t.Errorf("the sequential scale does not darken at %v", v)
		}
	}
}

// A weight map of many inputs shows those of the largest weights, and
// WritePlots writes each figure as PNG and SVG into a directory it makes.
func TestWeightFigureAndWritePlots(t *testing.T) {
	net := &fit.Network{Rule: "delta", Unit: fit.Logistic, Inputs: 100, Classes: 2, On: 1, Off: 0,
		Weights: [][]float64{make([]float64, 100)}, Biases: []float64{0.5}}
	inputs := make([]string, 100)
	for i := range inputs {
		inputs[i] = "in" + string(rune('A'+i/26)) + string(rune('a'+i%26))
		net.Weights[0][i] = float64(i%7) - 3
	}
	f, err := WeightFigure(net, inputs, UnitNames([]string{"no", "yes"}))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(f.Title, "60 of 100") {
		t.Errorf("title %q does not say it shows 60 of the 100 inputs", f.Title)
	}
	if _, err := WeightFigure(net, inputs[:99], []string{"yes"}); err == nil {
		t.Error("99 names for 100 inputs: no error")
	}
	dir := filepath.Join(t.TempDir(), "new", "plots")
	if err := WritePlots(dir, []*Figure{f}); err != nil {
		t.Fatal(err)
	}
	for _, name := range []string{"weights.png", "weights.svg"} {
		if fi, err := os.Stat(filepath.Join(dir, name)); err != nil || fi.Size() == 0 {
			t.Errorf("%s: %v", name, err)
		}
	}
}

// With held-out rows the learning curve has their loss too: in the curve's
// points, the text table and the plot.
func TestLearningCurveHeldOut(t *testing.T) {
	history := []fit.EpochStats{
		{Epoch: 1, Loss: 0.3, Errors: 9, Holdout: fit.HoldoutStats{Rows: 10, Loss: 0.35, Errors: 3}},
		{Epoch: 2, Loss: 0.2, Errors: 5, Holdout: fit.HoldoutStats{Rows: 10, Loss: 0.3, Errors: 2}},
	}
	points := Curve(history)
	if !points[1].HeldOut || points[1].HeldOutLoss != 0.3 || points[1].HeldOutErrors != 2 {
		t.Fatalf("curve point %+v, want the held-out loss 0.3 and 2 errors", points[1])
	}
	var buf bytes.Buffer
	p := &printer{w: &buf}
	p.curve(points)
	if !strings.Contains(buf.String(), "held-out loss") || !strings.Contains(buf.String(), "0.3500") {
		t.Errorf("the text curve has no held-out column:\n%s", buf.String())
	}
	f, err := LearningCurveFigure(points)
	if err != nil {
		t.Fatal(err)
	}
	svg, err := f.InlineSVG()
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(svg, ">held-out rows</text>") || !strings.Contains(svg, ">training rows</text>") {
		t.Error("the plot's legend does not name both curves")
	}
	if Curve(history[:0]) == nil || hasHeldOut(Curve([]fit.EpochStats{{Epoch: 1, Loss: 1}})) {
		t.Error("a history without held-out rows has held-out points")
	}
}
