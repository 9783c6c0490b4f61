package export

import (
	"bytes"
	"errors"
	"fmt"
	"image/color"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/palette"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"

	"deltafit/evaluate"
	"deltafit/fit"
	"deltafit/fit/model"
)

// Figure is one plot, to be written as PNG or SVG.
type Figure struct {
	// Name is the file name without extension, such as "learning-curve".
	Name string
	// Title is the plot's title, and its caption in the HTML report.
	Title         string
	Width, Height vg.Length
	draw          func(draw.Canvas) error
}

// pngDPI is the resolution of the PNG files: sharp on a screen of twice
// the usual density.
const pngDPI = 144

// WritePNG writes the figure as a PNG image.
func (f *Figure) WritePNG(w io.Writer) error {
	c := vgimg.NewWith(vgimg.UseWH(f.Width, f.Height), vgimg.UseDPI(pngDPI))
	if err := f.draw(draw.New(c)); err != nil {
		return err
	}
	_, err := vgimg.PngCanvas{Canvas: c}.WriteTo(w)
	return err
}

// WriteSVG writes the figure as an SVG document.
func (f *Figure) WriteSVG(w io.Writer) error {
	c := vgsvg.New(f.Width, f.Height)
	if err := f.draw(draw.New(c)); err != nil {
		return err
	}
	_, err := c.WriteTo(w)
	return err
}

// InlineSVG returns the figure as an <svg> element to place in an HTML
// page: the SVG document without its XML declaration and comment.
func (f *Figure) InlineSVG() (string, error) {
	var buf bytes.Buffer
	if err := f.WriteSVG(&buf); err != nil {
		return "", err
	}
	s := buf.String()
	if i := strings.Index(s, "<svg"); i >= 0 {
		s = s[i:]
	}
	return s, nil
}

// WritePlots writes each figure as NAME.png and NAME.svg into dir, which
// is made if missing; every file is written atomically.
func WritePlots(dir string, figures []*Figure) error {
	if err := mkdirAll(dir); err != nil {
		return err
	}
	for _, f := range figures {
		if err := WriteFile(filepath.Join(dir, f.Name+".png"), f.WritePNG); err != nil {
			return err
		}
		if err := WriteFile(filepath.Join(dir, f.Name+".svg"), f.WriteSVG); err != nil {
			return err
		}
	}
	return nil
}

// The colours of the plots. Lines take the colour-blind safe palette of
// Okabe & Ito (2008); every line also has a dash pattern of its own, so
// that a print in grey keeps them apart. The colour scales run between a
// blue and an orange, a pair told apart with every common form of colour
// blindness (common practice), through a near-white; their lightness
// changes steadily along the scale, so it reads in grey as well.
var (
	lineBlue      = color.NRGBA{R: 0, G: 114, B: 178, A: 255} // Okabe & Ito 2008
	lineVermilion = color.NRGBA{R: 213, G: 94, B: 0, A: 255}  // Okabe & Ito 2008
	lineGrey      = color.NRGBA{R: 120, G: 120, B: 120, A: 255}

	scaleBlue   = color.NRGBA{R: 22, G: 78, B: 140, A: 255}
	scaleWhite  = color.NRGBA{R: 246, G: 246, B: 244, A: 255}
	scaleOrange = color.NRGBA{R: 168, G: 82, B: 8, A: 255}
)

// ramp is a colour map through colours evenly spaced over [min, max],
// linear in sRGB between neighbours. It implements palette.ColorMap.
type ramp struct {
	stops    []color.NRGBA
	min, max float64
	alpha    float64
}

// sequentialScale runs from near-white at min to blue at max.
func sequentialScale(min, max float64) *ramp {
	return &ramp{stops: []color.NRGBA{scaleWhite, scaleBlue}, min: min, max: max, alpha: 1}
}

// divergingScale runs from blue at −m through near-white at 0 to orange
// at +m: centred on 0 whatever the values.
func divergingScale(m float64) *ramp {
	if !(m > 0) {
		m = 1
	}
	return &ramp{stops: []color.NRGBA{scaleBlue, scaleWhite, scaleOrange}, min: -m, max: m, alpha: 1}
}

func (r *ramp) At(v float64) (color.Color, error) {
	switch {
	case math.IsNaN(v):
		return nil, errors.New("export: NaN has no colour")
	case v < r.min:
		return nil, palette.ErrUnderflow
	case v > r.max:
		return nil, palette.ErrOverflow
	}
	t := 0.0
	if r.max > r.min {
		t = (v - r.min) / (r.max - r.min) * float64(len(r.stops)-1)
	}
	k := min(int(t), len(r.stops)-2)
	t -= float64(k)
	a, b := r.stops[k], r.stops[k+1]
	mix := func(x, y uint8) uint8 { return uint8(math.Round(float64(x) + t*(float64(y)-float64(x)))) }
	return color.NRGBA{R: mix(a.R, b.R), G: mix(a.G, b.G), B: mix(a.B, b.B), A: uint8(math.Round(255 * r.alpha))}, nil
}

func (r *ramp) Max() float64           { return r.max }
func (r *ramp) SetMax(v float64)       { r.max = v }
func (r *ramp) Min() float64           { return r.min }
func (r *ramp) SetMin(v float64)       { r.min = v }
func (r *ramp) Alpha() float64         { return r.alpha }
func (r *ramp) SetAlpha(alpha float64) { r.alpha = alpha }

// Palette returns n colours evenly spaced from min to max.
func (r *ramp) Palette(n int) palette.Palette {
	colors := make([]color.Color, n)
	for i := range colors {
		v := r.min
		if n > 1 {
			v += (r.max - r.min) * float64(i) / float64(n-1)
		}
		colors[i], _ = r.At(min(v, r.max))
	}
	return colorList(colors)
}

type colorList []color.Color

func (c colorList) Colors() []color.Color { return c }

// plotFont is the typeface of every plot: a sans serif reads better at
// small sizes than the library's default serif.
var plotFont = font.Font{Typeface: "Liberation", Variant: "Sans"}

// newPlot returns a plot in the house look: sans serif text, a title of
// the given text, axis labels.
func newPlot(title, x, y string) *plot.Plot {
	p := plot.New()
	for _, f := range []*font.Font{
		&p.Title.TextStyle.Font, &p.X.Label.TextStyle.Font, &p.Y.Label.TextStyle.Font,
		&p.X.Tick.Label.Font, &p.Y.Tick.Label.Font, &p.Legend.TextStyle.Font,
	} {
		f.Typeface, f.Variant = plotFont.Typeface, plotFont.Variant
	}
	p.Title.Text, p.X.Label.Text, p.Y.Label.Text = title, x, y
	p.Title.TextStyle.Font.Size = vg.Points(13)
	p.X.Label.TextStyle.Font.Size, p.Y.Label.TextStyle.Font.Size = vg.Points(11), vg.Points(11)
	p.X.Tick.Label.Font.Size, p.Y.Tick.Label.Font.Size = vg.Points(10), vg.Points(10)
	p.Legend.TextStyle.Font.Size = vg.Points(10)
	p.Title.Padding = vg.Points(8)
	return p
}

// single is a figure of one plot.
func single(name string, p *plot.Plot, w, h vg.Length) *Figure {
	return &Figure{Name: name, Title: p.Title.Text, Width: w, Height: h, draw: func(c draw.Canvas) error {
		p.Draw(c)
		return nil
	}}
}

// withColorBar is a figure of a plot with a vertical colour bar, titled
// label, on its right.
func withColorBar(name string, p *plot.Plot, scale *ramp, label string, w, h vg.Length) *Figure {
	const barWidth = 1.3 * vg.Inch
	bar := newPlot("", "", label)
	bar.HideX()
	bar.Add(scaleBar{scale: scale, steps: 64})
	return &Figure{Name: name, Title: p.Title.Text, Width: w, Height: h, draw: func(c draw.Canvas) error {
		p.Draw(draw.Crop(c, 0, -barWidth, 0, 0))
		// The bar spans the plot's data area, below its title.
		top := -(p.Title.TextStyle.Height(p.Title.Text) + p.Title.Padding + vg.Points(6))
		bar.Draw(draw.Crop(c, w-barWidth+vg.Points(10), -vg.Points(12), vg.Points(40), top))
		return nil
	}}
}

// scaleBar draws a colour scale as a column of filled rectangles, from its
// minimum at the bottom to its maximum at the top: vector shapes, crisp in
// PNG and SVG alike (a raster bar would be stretched by SVG viewers).
type scaleBar struct {
	scale *ramp
	steps int
}

func (b scaleBar) Plot(c draw.Canvas, p *plot.Plot) {
	x, y := p.Transforms(&c)
	lo, hi := b.scale.Min(), b.scale.Max()
	for k := range b.steps {
		v0 := lo + (hi-lo)*float64(k)/float64(b.steps)
		v1 := lo + (hi-lo)*float64(k+1)/float64(b.steps)
		fill, err := b.scale.At((v0 + v1) / 2)
		if err != nil {
			continue
		}
		// Each step overlaps the next a little, so no seam shows between
		// neighbours drawn with anti-aliasing.
		top := y(v1) + vg.Points(0.5)
		if k == b.steps-1 {
			top = y(v1)
		}
		c.FillPolygon(fill, []vg.Point{{X: x(0), Y: y(v0)}, {X: x(1), Y: y(v0)}, {X: x(1), Y: top}, {X: x(0), Y: top}})
	}
}

func (b scaleBar) DataRange() (xmin, xmax, ymin, ymax float64) {
	return 0, 1, b.scale.Min(), b.scale.Max()
}

// LearningCurveFigure plots the loss of each epoch on the rows trained on
// and, when rows were held out, on those.
func LearningCurveFigure(points []CurvePoint) (*Figure, error) {
	if len(points) == 0 {
		return nil, errors.New("export: no epochs to plot")
	}
	p := newPlot("Learning curve", "epoch", "loss, mean of (t − y)²")
	p.Add(plotter.NewGrid())
	training := make(plotter.XYs, len(points))
	for i, c := range points {
		training[i] = plotter.XY{X: float64(c.Epoch), Y: c.Loss}
	}
	if err := addLine(p, training, "training rows", lineBlue, nil); err != nil {
		return nil, err
	}
	if hasHeldOut(points) {
		var heldOut plotter.XYs
		for _, c := range points {
			if c.HeldOut {
				heldOut = append(heldOut, plotter.XY{X: float64(c.Epoch), Y: c.HeldOutLoss})
			}
		}
		if err := addLine(p, heldOut, "held-out rows", lineVermilion, []vg.Length{vg.Points(6), vg.Points(3)}); err != nil {
			return nil, err
		}
	}
	p.Y.Min = 0
	p.Legend.Top = true
	return single("learning-curve", p, 6.5*vg.Inch, 4*vg.Inch), nil
}

// addLine adds a line in a colour and dash pattern, with points marked
// when there are few, and its legend entry.
func addLine(p *plot.Plot, xys plotter.XYs, name string, c color.Color, dashes []vg.Length) error {
	l, err := plotter.NewLine(xys)
	if err != nil {
		return fmt.Errorf("export: %w", err)
	}
	l.Color, l.Width, l.Dashes = c, vg.Points(2), dashes
	p.Add(l)
	p.Legend.Add(name, l)
	return nil
}

// grid is a matrix of values for a heat map, row 0 drawn at the top.
type grid struct {
	rows, cols int
	values     []float64 // row after row
}

func (g grid) Dims() (c, r int)       { return g.cols, g.rows }
func (g grid) Z(c, r int) float64     { return g.values[(g.rows-1-r)*g.cols+c] }
func (g grid) X(c int) float64        { return float64(c) }
func (g grid) Y(r int) float64        { return float64(r) }
func (g grid) rowAtTop(k int) float64 { return float64(g.rows - 1 - k) }

// heatMap adds a heat map of g in the colours of scale, named by rows
// (top to bottom) and columns, and returns the plot.
func heatMap(p *plot.Plot, g grid, scale *ramp, columns, rows []string) {
	hm := plotter.NewHeatMap(g, scale.Palette(128))
	hm.Min, hm.Max = scale.Min(), scale.Max()
	p.Add(hm)
	p.NominalX(columns...)
	reversed := slices.Clone(rows)
	slices.Reverse(reversed)
	p.NominalY(reversed...)
	p.X.Tick.Label.Rotation = 0
	if longest(columns) > 8 && len(columns) > 3 {
		p.X.Tick.Label.Rotation = math.Pi / 4
		p.X.Tick.Label.XAlign, p.X.Tick.Label.YAlign = draw.XRight, draw.YCenter
	}
}

func longest(names []string) int {
	n := 0
	for _, s := range names {
		n = max(n, len([]rune(s)))
	}
	return n
}

// ConfusionFigure plots a confusion table as a heat map: rows the true
// classes, columns the predicted ones, each cell holding its count and
// coloured by the share of its true class's rows it holds, so classes of
// different sizes compare.
func ConfusionFigure(c *evaluate.Confusion, title string) (*Figure, error) {
	n := len(c.Labels)
	if n == 0 {
		return nil, errors.New("export: an empty confusion table")
	}
	g := grid{rows: n, cols: n, values: make([]float64, n*n)}
	support := c.RowTotals()
	var cells plotter.XYLabels
	var styles []color.Color
	for i, row := range c.Matrix {
		for j, count := range row {
			share := 0.0
			if support[i] > 0 {
				share = float64(count) / float64(support[i])
			}
			g.values[i*n+j] = share
			cells.XYs = append(cells.XYs, plotter.XY{X: float64(j), Y: g.rowAtTop(i)})
			cells.Labels = append(cells.Labels, strconv.Itoa(count))
			styles = append(styles, textOn(share))
		}
	}
	p := newPlot(title, "predicted class", "true class")
	scale := sequentialScale(0, 1)
	heatMap(p, g, scale, c.Labels, c.Labels)
	labels, err := plotter.NewLabels(cells)
	if err != nil {
		return nil, fmt.Errorf("export: %w", err)
	}
	size := vg.Points(max(9, min(14, 120/float64(n))))
	for k := range labels.TextStyle {
		labels.TextStyle[k].Font = font.From(plotFont, size)
		labels.TextStyle[k].Color = styles[k]
		labels.TextStyle[k].XAlign, labels.TextStyle[k].YAlign = draw.XCenter, draw.YCenter
	}
	p.Add(labels)
	side := vg.Length(math.Max(3.6, math.Min(9, 1.2+0.7*float64(n)))) * vg.Inch
	return withColorBar("confusion", p, scale, "share of its true class", side+1.3*vg.Inch, side), nil
}

// textOn returns a text colour that reads on a cell of the sequential
// scale at share: white on the dark end, near-black elsewhere.
func textOn(share float64) color.Color {
	if share > 0.55 {
		return color.White
	}
	return color.NRGBA{R: 20, G: 20, B: 20, A: 255}
}

// weightRowsShown is the most input units a weight map shows; beyond it,
// those whose largest |w| is largest, in plan order.
const weightRowsShown = 60

// UnitNames names the output units of a network for the given class labels:
// one unit named after the class it fires for with two classes, else one
// per class.
func UnitNames(labels []string) []string {
	if len(labels) == 2 {
		return labels[1:]
	}
	return slices.Clone(labels)
}

// WeightFigure plots a network's weights as a map: one row per input unit
// (named by inputs, the plan's unit names) and one for the bias, one
// column per output unit, on a colour scale centred on 0.
func WeightFigure(net *fit.Network, inputs, units []string) (*Figure, error) {
	if len(inputs) != net.Inputs || len(units) != len(net.Weights) {
		return nil, fmt.Errorf("export: %d input names and %d unit names for a network of %d inputs and %d units", len(inputs), len(units), net.Inputs, len(net.Weights))
	}
	shown := make([]int, net.Inputs)
	for i := range shown {
		shown[i] = i
	}
	title := "Weights (input units × output units)"
	if len(shown) > weightRowsShown {
		largest := func(i int) float64 {
			m := 0.0
			for _, row := range net.Weights {
				m = math.Max(m, math.Abs(row[i]))
			}
			return m
		}
		slices.SortStableFunc(shown, func(a, b int) int { return -cmpFloat(largest(a), largest(b)) })
		shown = shown[:weightRowsShown]
		slices.Sort(shown)
		title = fmt.Sprintf("Weights: the %d of %d input units with the largest |w|", weightRowsShown, net.Inputs)
	}
	rows := make([]string, 0, len(shown)+1)
	g := grid{rows: len(shown) + 1, cols: len(units)}
	m := 0.0
	add := func(name string, value func(j int) float64) {
		rows = append(rows, name)
		for j := range units {
			v := value(j)
			g.values = append(g.values, v)
			m = math.Max(m, math.Abs(v))
		}
	}
	for _, i := range shown {
		add(inputs[i], func(j int) float64 { return net.Weights[j][i] })
	}
	add("(bias)", func(j int) float64 { return net.Biases[j] })
	p := newPlot(title, "output unit", "")
	scale := divergingScale(m)
	heatMap(p, g, scale, units, rows)
	p.Y.Tick.Label.Font.Size = vg.Points(9)
	height := vg.Points(math.Max(220, 60+13*float64(g.rows)))
	labelWidth := vg.Points(6 * float64(longest(rows)))
	width := labelWidth + vg.Points(math.Max(220, 70*float64(len(units)))) + 1.4*vg.Inch
	return withColorBar("weights", p, scale, "weight (0 at the centre)", width, height), nil
}

func cmpFloat(a, b float64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// ROCFigure plots a ROC curve with the chance diagonal.
func ROCFigure(points []evaluate.ROCPoint, auc float64, positive string) (*Figure, error) {
	if len(points) < 2 {
		return nil, errors.New("export: a ROC curve needs two points")
	}
	p := newPlot(fmt.Sprintf("ROC curve, positive class %s", positive), "false positive rate", "true positive rate")
	p.Add(plotter.NewGrid())
	xys := make(plotter.XYs, len(points))
	for i, pt := range points {
		xys[i] = plotter.XY{X: pt.FPR, Y: pt.TPR}
	}
	if err := addLine(p, plotter.XYs{{X: 0, Y: 0}, {X: 1, Y: 1}}, "chance", lineGrey, []vg.Length{vg.Points(3), vg.Points(3)}); err != nil {
		return nil, err
	}
	if err := addLine(p, xys, "area "+num(auc), lineBlue, nil); err != nil {
		return nil, err
	}
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = 0, 1, 0, 1
	p.Legend.Top = false
	p.Legend.Left = false
	return single("roc", p, 5*vg.Inch, 5*vg.Inch), nil
}

// mkdirAll makes dir and its parents, as needed.
func mkdirAll(dir string) error {
	if err := os.MkdirAll(dir, 0o777); err != nil {
		return fmt.Errorf("export: cannot make the plot directory: %w", err)
	}
	return nil
}

// FitFigures are the plots of a fit: the learning curve and the weight map
// of the fit on all rows and, with cross-validation, the out-of-fold
// confusion table and, for two classes, ROC curve.
func FitFigures(r *FitReport, c *model.Classifier) ([]*Figure, error) {
	var cv *evaluate.Confusion
	var scores *ScoreFigures
	title := ""
	if r.CV != nil {
		cv, scores = r.CV.Confusion, r.CV.Scores
		title = "Confusion table, " + r.CV.Method + " rule, out-of-fold"
	}
	return figures(Curve(r.History), c, cv, title, scores)
}

// EvaluationFigures are the plots of an evaluation: the confusion table
// and, for two classes, the ROC curve on the rows evaluated, and the
// model's learning curve and weight map.
func EvaluationFigures(r *EvaluationReport, m *Model) ([]*Figure, error) {
	return figures(Curve(m.Training.History), &m.Classifier, r.Confusion, "Confusion table", r.Scores)
}

func figures(curve []CurvePoint, c *model.Classifier, confusion *evaluate.Confusion, title string, scores *ScoreFigures) ([]*Figure, error) {
	var out []*Figure
	if len(curve) > 0 {
		f, err := LearningCurveFigure(curve)
		if err != nil {
			return nil, err
		}
		out = append(out, f)
	}
	if confusion != nil {
		f, err := ConfusionFigure(confusion, title)
		if err != nil {
			return nil, err
		}
		out = append(out, f)
	}
	w, err := WeightFigure(c.Network, c.Plan.UnitNames(), UnitNames(c.Labels))
	if err != nil {
		return nil, err
	}
	out = append(out, w)
	if scores != nil && scores.AUC != nil {
		f, err := ROCFigure(scores.ROC, *scores.AUC, scores.Positive)
		if err != nil {
			return nil, err
		}
		out = append(out, f)
	}
	return out, nil
}
