package evaluate

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"slices"

	"deltafit/fit"
	"deltafit/fit/model"
)

// Scored are rows' true classes beside the per-class scores a classifier
// gave them: what the metrics that read scores, not only decisions, need.
type Scored struct {
	Classes int       // number of classes
	Truth   []int     // true class per row
	Scores  []float64 // Classes scores per row, row after row
}

// ScoredOf pairs predictions with the true classes of their rows (truth[n]
// the class of the n-th row predicted).
func ScoredOf(p *model.Predictions, truth []int) (Scored, error) {
	s := Scored{Classes: len(p.Labels), Truth: truth, Scores: p.Scores}
	return s, s.check()
}

// Append adds the rows of other, which must have as many classes.
func (s *Scored) Append(other Scored) error {
	if s.Classes == 0 {
		s.Classes = other.Classes
	}
	if other.Classes != s.Classes {
		return fmt.Errorf("%w: %d classes and %d", ErrLengthMismatch, s.Classes, other.Classes)
	}
	s.Truth = append(s.Truth, other.Truth...)
	s.Scores = append(s.Scores, other.Scores...)
	return nil
}

func (s Scored) check() error {
	if s.Classes < 2 {
		return fmt.Errorf("evaluate: scores of %d classes, want at least 2", s.Classes)
	}
	if len(s.Scores) != len(s.Truth)*s.Classes {
		return fmt.Errorf("%w: %d rows, %d scores for %d classes", ErrLengthMismatch, len(s.Truth), len(s.Scores), s.Classes)
	}
	for i, c := range s.Truth {
		if c < 0 || c >= s.Classes {
			return fmt.Errorf("evaluate: row %d: %w: class %d outside [0, %d)", i, ErrClassOutOfRange, c, s.Classes)
		}
	}
	for i, v := range s.Scores {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("evaluate: row %d: score %v is not finite", i/s.Classes, v)
		}
	}
	return nil
}

// ErrOneClass means a metric that compares the positive rows with the
// others met rows of only one side.
var ErrOneClass = errors.New("evaluate: the rows hold only one side of the positive class")

// ROCPoint is one point of a ROC curve: calling positive every row whose
// score is at least Threshold gives these rates.
type ROCPoint struct {
	Threshold float64 `json:"threshold"` // +Inf for the first point, (0, 0)
	FPR       float64 `json:"fpr"`       // false positives / negative rows
	TPR       float64 `json:"tpr"`       // true positives / positive rows
}

// ranked are rows' scores for a positive class and whether each row is of
// that class: what the ROC curve and its area read.
type ranked struct {
	scores    []float64
	member    []bool
	positives int
}

// add appends the rows of s, scored for class positive.
func (r *ranked) add(s Scored, positive int) {
	for i, c := range s.Truth {
		r.scores = append(r.scores, s.Scores[i*s.Classes+positive])
		r.member = append(r.member, c == positive)
		if c == positive {
			r.positives++
		}
	}
}

// check returns an error wrapping ErrOneClass unless both sides occur.
func (r *ranked) check() error {
	if r.positives == 0 || r.positives == len(r.scores) {
		return ErrOneClass
	}
	return nil
}

// positiveScores returns each row's score for class positive and whether
// the row is of that class, checking that both sides occur.
func (s Scored) positiveScores(positive int) (*ranked, error) {
	if err := s.check(); err != nil {
		return nil, err
	}
	if positive < 0 || positive >= s.Classes {
		return nil, fmt.Errorf("evaluate: %w: positive class %d outside [0, %d)", ErrClassOutOfRange, positive, s.Classes)
	}
	r := &ranked{scores: make([]float64, 0, len(s.Truth)), member: make([]bool, 0, len(s.Truth))}
	r.add(s, positive)
	return r, r.check()
}

// AUC returns the area under the ROC curve of the positive class's scores
// in its Mann-Whitney form (Hanley & McNeil 1982): the chance that a random
// positive row scores above a random other row, ties counting one half,
//
//	AUC = (R₊ − n₊(n₊+1)/2) / (n₊ n₋),
//
// with R₊ the sum of the positive rows' ranks among all scores (ties given
// their mean rank). It returns an error wrapping ErrOneClass when the rows
// are all positive or all not.
func (s Scored) AUC(positive int) (float64, error) {
	r, err := s.positiveScores(positive)
	if err != nil {
		return 0, err
	}
	return r.auc(), nil
}

func (r *ranked) auc() float64 {
	scores, member := r.scores, r.member
	order := make([]int, len(scores))
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(a, b int) int { return cmp.Compare(scores[a], scores[b]) })
	rankSum := 0.0
	for lo := 0; lo < len(order); {
		hi := lo + 1
		for hi < len(order) && scores[order[hi]] == scores[order[lo]] {
			hi++
		}
		mean := float64(lo+1+hi) / 2 // mean of the ranks lo+1 … hi
		for _, i := range order[lo:hi] {
			if member[i] {
				rankSum += mean
			}
		}
		lo = hi
	}
	np, nn := float64(r.positives), float64(len(scores)-r.positives)
	return (rankSum - np*(np+1)/2) / (np * nn)
}

// ROC returns the ROC curve of the positive class's scores: one point per
// distinct score, from the highest threshold down, after a first point
// (0, 0) at threshold +Inf; the last point is (1, 1). Rows of one score
// move the curve together, so the trapezoid area under it is AUC.
func (s Scored) ROC(positive int) ([]ROCPoint, error) {
	r, err := s.positiveScores(positive)
	if err != nil {
		return nil, err
	}
	return r.roc(), nil
}

func (r *ranked) roc() []ROCPoint {
	scores, member := r.scores, r.member
	order := make([]int, len(scores))
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(a, b int) int { return cmp.Compare(scores[b], scores[a]) })
	np, nn := float64(r.positives), float64(len(scores)-r.positives)
	points := []ROCPoint{{Threshold: math.Inf(1)}}
	tp, fp := 0, 0
	for lo := 0; lo < len(order); {
		hi := lo
		for hi < len(order) && scores[order[hi]] == scores[order[lo]] {
			if member[order[hi]] {
				tp++
			} else {
				fp++
			}
			hi++
		}
		points = append(points, ROCPoint{Threshold: scores[order[lo]], FPR: float64(fp) / nn, TPR: float64(tp) / np})
		lo = hi
	}
	return points
}

// probabilityFloor keeps a log loss finite when a unit's output is exactly
// 0 or 1 in floating point: probabilities are clipped to [ε, 1−ε]
// (common practice).
const probabilityFloor = 1e-15

// probabilitiesTo stores row i's scores in dst as a distribution over the
// classes and returns it: each score floored at ε, then divided by their sum. Logistic units with
// one unit for two classes score (1−y, y), which already sum to 1; one
// logistic unit per class scores each class on its own, and dividing by the
// sum makes the outputs a distribution.
func (s Scored) probabilitiesTo(dst []float64, i int) ([]float64, error) {
	dst = dst[:0]
	sum := 0.0
	for k := range s.Classes {
		v := s.Scores[i*s.Classes+k]
		if v < 0 || v > 1 {
			return nil, fmt.Errorf("evaluate: row %d: score %v of class %d is not in [0, 1]; only logistic units give probabilities", i, v, k)
		}
		v = math.Max(v, probabilityFloor)
		dst = append(dst, v)
		sum += v
	}
	for k := range dst {
		dst[k] /= sum
	}
	return dst, nil
}

// LogLoss returns the mean over rows of −ln p(true class), the scores read
// as probabilities (see probabilitiesTo) and clipped to [ε, 1−ε], ε = 1e-15.
// For two classes it is the binary cross-entropy −[o ln y + (1−o) ln(1−y)]
// of the one unit's output y, the loss whose gradient the delta rule
// follows with a logistic unit. Scores outside [0, 1] are an error: only
// logistic units give probabilities. It is 0 for no rows.
func (s Scored) LogLoss() (float64, error) {
	logLoss, _, err := s.sums()
	return ratio(logLoss, float64(len(s.Truth))), err
}

// Brier returns Brier's (1950) score: the mean over rows of the squared
// distance Σ_k (p_k − o_k)² between the probabilities (see probabilitiesTo)
// and the one-hot truth o. It lies in [0, 2]; for two classes it is twice
// the mean of (y − o)² over the positive class's probability y. Scores
// outside [0, 1] are an error. It is 0 for no rows.
func (s Scored) Brier() (float64, error) {
	_, brier, err := s.sums()
	return ratio(brier, float64(len(s.Truth))), err
}

// sums returns the sums over the rows of the log loss and the Brier score.
func (s Scored) sums() (logLoss, brier float64, err error) {
	if err := s.check(); err != nil {
		return 0, 0, err
	}
	p := make([]float64, s.Classes)
	for i, c := range s.Truth {
		if p, err = s.probabilitiesTo(p, i); err != nil {
			return 0, 0, err
		}
		logLoss -= math.Log(min(max(p[c], probabilityFloor), 1-probabilityFloor))
		for k, v := range p {
			o := 0.0
			if k == c {
				o = 1
			}
			brier += (v - o) * (v - o)
		}
	}
	return logLoss, brier, nil
}

// ScoreTally gathers the figures read from scores batch after batch,
// without keeping the batches: the sums of the log loss and the Brier
// score over the rows, and for a positive class each row's score for it
// and whether the row is of it, which the ROC curve needs (nine bytes a
// row).
type ScoreTally struct {
	classes  int
	positive int      // -1: no ROC curve
	unit     fit.Unit // the log loss and Brier score need logistic units
	rows     int
	logLoss  float64
	brier    float64
	ranked   ranked
}

// NewScoreTally returns an empty tally of rows scored for the given number
// of classes by units of the given kind, keeping the scores of class
// positive for the ROC curve (-1 for none).
func NewScoreTally(classes, positive int, unit fit.Unit) *ScoreTally {
	return &ScoreTally{classes: classes, positive: positive, unit: unit}
}

// Add adds the rows of s, which must have the tally's number of classes.
func (t *ScoreTally) Add(s Scored) error {
	if s.Classes != t.classes {
		return fmt.Errorf("%w: scores of %d classes for a tally of %d", ErrLengthMismatch, s.Classes, t.classes)
	}
	if err := s.check(); err != nil {
		return err
	}
	if t.unit == fit.Logistic {
		logLoss, brier, err := s.sums()
		if err != nil {
			return err
		}
		t.logLoss += logLoss
		t.brier += brier
	}
	if t.positive >= 0 {
		if t.positive >= t.classes {
			return fmt.Errorf("evaluate: %w: positive class %d outside [0, %d)", ErrClassOutOfRange, t.positive, t.classes)
		}
		t.ranked.add(s, t.positive)
	}
	t.rows += len(s.Truth)
	return nil
}

// Rows returns the number of rows added.
func (t *ScoreTally) Rows() int { return t.rows }

// Unit returns the kind of output unit the scores come from.
func (t *ScoreTally) Unit() fit.Unit { return t.unit }

// Positive returns the class whose scores the ROC curve ranks, -1 for none.
func (t *ScoreTally) Positive() int { return t.positive }

// LogLoss returns the mean log loss of the rows (Scored.LogLoss), and
// false for units that do not give probabilities.
func (t *ScoreTally) LogLoss() (float64, bool) {
	return ratio(t.logLoss, float64(t.rows)), t.unit == fit.Logistic
}

// Brier returns the rows' Brier score (Scored.Brier), and false for units
// that do not give probabilities.
func (t *ScoreTally) Brier() (float64, bool) {
	return ratio(t.brier, float64(t.rows)), t.unit == fit.Logistic
}

// ROC returns the ROC curve of the positive class over every row added
// (Scored.ROC), an error wrapping ErrOneClass when the rows hold only one
// side, or nil without a positive class.
func (t *ScoreTally) ROC() ([]ROCPoint, error) {
	if t.positive < 0 {
		return nil, nil
	}
	if err := t.ranked.check(); err != nil {
		return nil, err
	}
	return t.ranked.roc(), nil
}

// AUC returns the area under ROC (Scored.AUC).
func (t *ScoreTally) AUC() (float64, error) {
	if t.positive < 0 {
		return 0, errors.New("evaluate: no positive class: the ROC area needs one")
	}
	if err := t.ranked.check(); err != nil {
		return 0, err
	}
	return t.ranked.auc(), nil
}
