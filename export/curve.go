package export

import (
	"fmt"
	"strconv"

	"deltafit/fit"
)

// CurvePoint is one epoch of a learning curve: the loss and errors on the
// rows trained on and, when rows were held out, on those rows.
type CurvePoint struct {
	Epoch  int
	Loss   float64
	Errors int
	// HeldOut marks an epoch measured on held-out rows too.
	HeldOut       bool
	HeldOutLoss   float64
	HeldOutErrors int
}

// Curve returns the learning curve of a training history, one point per
// epoch.
func Curve(history []fit.EpochStats) []CurvePoint {
	points := make([]CurvePoint, len(history))
	for i, h := range history {
		points[i] = CurvePoint{Epoch: h.Epoch, Loss: h.Loss, Errors: h.Errors}
		if h.Holdout.Rows > 0 {
			points[i].HeldOut, points[i].HeldOutLoss, points[i].HeldOutErrors = true, h.Holdout.Loss, h.Holdout.Errors
		}
	}
	return points
}

// hasHeldOut reports whether any point was measured on held-out rows.
func hasHeldOut(points []CurvePoint) bool {
	for _, p := range points {
		if p.HeldOut {
			return true
		}
	}
	return false
}

// curveRowsShown is the most epochs the text and Markdown reports list of a
// learning curve; JSON has them all.
const curveRowsShown = 12

// sampleEpochs picks at most shown of n epochs (indexes), evenly spread,
// always the first and the last.
func sampleEpochs(n, shown int) []int {
	if n <= shown {
		picked := make([]int, n)
		for i := range picked {
			picked[i] = i
		}
		return picked
	}
	picked := make([]int, shown)
	for k := range picked {
		picked[k] = k * (n - 1) / (shown - 1)
	}
	return picked
}

// curve prints a learning curve as a table of sampled epochs.
func (p *printer) curve(points []CurvePoint) {
	if len(points) == 0 {
		return
	}
	picked := sampleEpochs(len(points), curveRowsShown)
	title := "learning curve (the loss is the mean of (t − y)² over rows and units)"
	if len(picked) < len(points) {
		title = fmt.Sprintf("learning curve, %d of %d epochs (all in --format json; the loss is the mean of (t − y)² over rows and units)", len(picked), len(points))
	}
	p.subheading(title)
	heldOut := hasHeldOut(points)
	header := []string{"epoch", "training loss", "training errors"}
	if heldOut {
		header = append(header, "held-out loss", "held-out errors")
	}
	rows := make([][]string, len(picked))
	for i, k := range picked {
		c := points[k]
		rows[i] = []string{strconv.Itoa(c.Epoch), num(c.Loss), strconv.Itoa(c.Errors)}
		if heldOut {
			rows[i] = append(rows[i], num(c.HeldOutLoss), strconv.Itoa(c.HeldOutErrors))
		}
	}
	p.table(header, rows, nil)
}
