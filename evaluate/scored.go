package evaluate

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"slices"

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

// positiveScores returns each row's score for class positive and whether
// the row is of that class, checking that both sides occur.
func (s Scored) positiveScores(positive int) ([]float64, []bool, int, error) {
	if err := s.check(); err != nil {
		return nil, nil, 0, err
	}
	if positive < 0 || positive >= s.Classes {
		return nil, nil, 0, fmt.Errorf("evaluate: %w: positive class %d outside [0, %d)", ErrClassOutOfRange, positive, s.Classes)
	}
	scores := make([]float64, len(s.Truth))
	member := make([]bool, len(s.Truth))
	positives := 0
	for i, c := range s.Truth {
		scores[i] = s.Scores[i*s.Classes+positive]
		if member[i] = c == positive; member[i] {
			positives++
		}
	}
	if positives == 0 || positives == len(s.Truth) {
		return nil, nil, 0, ErrOneClass
	}
	return scores, member, positives, nil
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
	scores, member, positives, err := s.positiveScores(positive)
	if err != nil {
		return 0, err
	}
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
	np, nn := float64(positives), float64(len(scores)-positives)
	return (rankSum - np*(np+1)/2) / (np * nn), nil
}

// ROC returns the ROC curve of the positive class's scores: one point per
// distinct score, from the highest threshold down, after a first point
// (0, 0) at threshold +Inf; the last point is (1, 1). Rows of one score
// move the curve together, so the trapezoid area under it is AUC.
func (s Scored) ROC(positive int) ([]ROCPoint, error) {
	scores, member, positives, err := s.positiveScores(positive)
	if err != nil {
		return nil, err
	}
	order := make([]int, len(scores))
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(a, b int) int { return cmp.Compare(scores[b], scores[a]) })
	np, nn := float64(positives), float64(len(scores)-positives)
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
	return points, nil
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
	if err := s.check(); err != nil {
		return 0, err
	}
	p := make([]float64, s.Classes)
	sum := 0.0
	for i, c := range s.Truth {
		var err error
		if p, err = s.probabilitiesTo(p, i); err != nil {
			return 0, err
		}
		sum -= math.Log(min(max(p[c], probabilityFloor), 1-probabilityFloor))
	}
	return ratio(sum, float64(len(s.Truth))), nil
}

// Brier returns Brier's (1950) score: the mean over rows of the squared
// distance Σ_k (p_k − o_k)² between the probabilities (see probabilitiesTo)
// and the one-hot truth o. It lies in [0, 2]; for two classes it is twice
// the mean of (y − o)² over the positive class's probability y. Scores
// outside [0, 1] are an error. It is 0 for no rows.
func (s Scored) Brier() (float64, error) {
	if err := s.check(); err != nil {
		return 0, err
	}
	p := make([]float64, s.Classes)
	sum := 0.0
	for i, c := range s.Truth {
		var err error
		if p, err = s.probabilitiesTo(p, i); err != nil {
			return 0, err
		}
		for k, v := range p {
			o := 0.0
			if k == c {
				o = 1
			}
			sum += (v - o) * (v - o)
		}
	}
	return ratio(sum, float64(len(s.Truth))), nil
}
