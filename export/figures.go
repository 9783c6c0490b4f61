package export

import (
	"errors"
	"fmt"
	"slices"
	"strings"

	"deltafit/evaluate"
	"deltafit/fit"
)

// Averages are precision, recall and F1 averaged over the classes in the
// three usual ways (evaluate.Confusion.Micro, Macro, Weighted).
type Averages struct {
	Micro    evaluate.Averaged `json:"micro"`
	Macro    evaluate.Averaged `json:"macro"`
	Weighted evaluate.Averaged `json:"weighted"`
}

func averagesOf(c *evaluate.Confusion) Averages {
	return Averages{Micro: c.Micro(), Macro: c.Macro(), Weighted: c.Weighted()}
}

// ScoreFigures are the figures read from the scores of the rows, not only
// from their decisions. Each is absent when it does not apply, and Notes
// say why.
type ScoreFigures struct {
	// Positive is the class whose scores rank the rows for the ROC curve
	// (two classes only).
	Positive string   `json:"positive,omitempty"`
	AUC      *float64 `json:"roc_auc,omitempty"`  // Mann-Whitney form
	LogLoss  *float64 `json:"log_loss,omitempty"` // logistic units only
	Brier    *float64 `json:"brier,omitempty"`    // logistic units only (Brier 1950)
	// ROC is the curve behind AUC, for the plots and the HTML report; the
	// JSON reports leave it out.
	ROC   []evaluate.ROCPoint `json:"-"`
	Notes []string            `json:"notes,omitempty"`
}

// PositiveClass returns the index of the positive class of a two-class
// problem: the class named positive, or with positive "" the second label
// (the class a one-unit network fires for). It returns -1 with no error for
// more than two classes and no positive given.
func PositiveClass(labels []string, positive string) (int, error) {
	if positive == "" {
		if len(labels) == 2 {
			return 1, nil
		}
		return -1, nil
	}
	if len(labels) != 2 {
		return -1, fmt.Errorf("export: the positive class applies to two classes; there are %d", len(labels))
	}
	k := slices.Index(labels, positive)
	if k < 0 {
		return -1, fmt.Errorf("export: the positive class %q is not a class: want %s", positive, strings.Join(labels, " or "))
	}
	return k, nil
}

// NewScoreFigures reads the figures off a tally of scored rows: for a
// positive class the ROC curve and its area, for logistic units the log
// loss and Brier score. A figure that cannot be read (one class only among
// the rows, linear units) is left out with a note.
func NewScoreFigures(t *evaluate.ScoreTally, labels []string) (*ScoreFigures, error) {
	f := &ScoreFigures{}
	if positive := t.Positive(); positive >= 0 {
		f.Positive = labels[positive]
		roc, err := t.ROC()
		switch {
		case errors.Is(err, evaluate.ErrOneClass):
			f.Notes = append(f.Notes, "no ROC curve: the rows hold only one of the two classes")
		case err != nil:
			return nil, err
		default:
			auc, err := t.AUC()
			if err != nil {
				return nil, err
			}
			f.AUC, f.ROC = &auc, roc
		}
	}
	loss, ok := t.LogLoss()
	if !ok {
		f.Notes = append(f.Notes, "no log loss or Brier score: "+t.Unit().String()+" units do not give probabilities")
		return f, nil
	}
	brier, _ := t.Brier()
	f.LogLoss, f.Brier = &loss, &brier
	return f, nil
}

// ScoreFiguresOf reads the figures off scored rows (NewScoreFigures).
func ScoreFiguresOf(s evaluate.Scored, labels []string, unit fit.Unit, positive int) (*ScoreFigures, error) {
	t := evaluate.NewScoreTally(len(labels), positive, unit)
	if err := t.Add(s); err != nil {
		return nil, err
	}
	return NewScoreFigures(t, labels)
}

// agreement prints what the confusion table says beyond the per-class
// table: Matthews' correlation, the accuracy's interval and the averages.
func (p *printer) agreement(d ConfusionDetail, mcc float64) {
	accuracy := d.Confusion.Accuracy()
	p.line("accuracy %s, 95%% Wilson interval [%s, %s] over %s; Matthews correlation %s",
		num(accuracy), num(d.AccuracyInterval.Low), num(d.AccuracyInterval.High), count(d.Confusion.Total(), "prediction"), num(mcc))
	p.subheading("averaged over the classes")
	row := func(name, how string, a evaluate.Averaged) []string {
		return []string{name, num(a.Recall), num(a.Precision), num(a.F1), how}
	}
	p.table([]string{"average", "recall", "precision", "F1", "how"}, [][]string{
		row("micro", "counts pooled over the classes", d.Averages.Micro),
		row("macro", "plain mean over the classes", d.Averages.Macro),
		row("weighted", "mean weighted by true rows", d.Averages.Weighted),
	}, nil)
}

// scoreFigures prints the figures read from scores, if any.
func (p *printer) scoreFigures(what string, f *ScoreFigures) {
	if f == nil {
		return
	}
	var parts []string
	if f.AUC != nil {
		parts = append(parts, fmt.Sprintf("ROC AUC %s (positive class %s)", num(*f.AUC), f.Positive))
	}
	if f.LogLoss != nil {
		parts = append(parts, "log loss "+num(*f.LogLoss))
	}
	if f.Brier != nil {
		parts = append(parts, "Brier score "+num(*f.Brier))
	}
	if len(parts) > 0 {
		p.line("%s: %s", what, strings.Join(parts, ", "))
	}
	for _, n := range f.Notes {
		p.line("%s", n)
	}
}
