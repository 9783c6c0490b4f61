package pipeline

import (
	"encoding/json"
	"fmt"

	"deltafit/evaluate"
	"deltafit/fit/model"
)

// The scoring pass of a cross-validation: each row of fold k is classified
// by the main model and the Hebbian baseline trained outside fold k, and
// given the majority class of those training rows; the confusion tables of
// the blocks are added per fold, then pooled.

// blockScores are a block's confusion counts per fold: [fold][truth][predicted].
type blockScores struct {
	Err      string    `json:"error,omitempty"`
	Main     [][][]int `json:"main"`
	Majority [][][]int `json:"majority"`
	Hebbian  [][][]int `json:"hebbian"`
}

// scoreBlock classifies the block's rows with the models of their folds.
func scoreBlock(c *Config, s *State, d *blockData) (blockScores, error) {
	n := len(s.Labels)
	out := blockScores{}
	tables := func() [][][]int {
		t := make([][][]int, c.Folds)
		for k := range t {
			t[k] = make([][]int, n)
			for i := range t[k] {
				t[k][i] = make([]int, n)
			}
		}
		return t
	}
	out.Main, out.Majority, out.Hebbian = tables(), tables(), tables()
	for _, m := range s.Models {
		if m.Fold == 0 {
			continue
		}
		p, err := d.patternsOf(s, m.Plan)
		if err != nil {
			return out, err
		}
		dst := out.Main
		if m.Kind == KindHebbian {
			dst = out.Hebbian
		}
		var rows []int
		for i, fold := range d.rowFolds {
			if fold == m.Fold-1 {
				rows = append(rows, i)
			}
		}
		// Scored through the one scoring path of the local tool.
		classifier := &model.Classifier{Labels: s.Labels, Plan: s.Plans[m.Plan], Network: m.Network}
		scored, err := classifier.PredictPatterns("", p, rows)
		if err != nil {
			return out, err
		}
		for k, i := range rows {
			fold, truth := m.Fold-1, d.classes[i]
			dst[fold][truth][scored.Predicted[k]]++
			if m.Kind == KindMain {
				out.Majority[fold][truth][m.Majority]++
			}
		}
	}
	return out, nil
}

// reduceScores adds the blocks' tables in block order.
func reduceScores(parts []Partial) *blockScores {
	var total *blockScores
	for _, part := range parts {
		var b blockScores
		if err := json.Unmarshal(part.Data, &b); err != nil {
			return &blockScores{Err: fmt.Sprintf("pipeline: score partial: %v", err)}
		}
		if b.Err != "" {
			return &b
		}
		if total == nil {
			total = &b
			continue
		}
		total.add(b)
	}
	if total == nil {
		return &blockScores{Err: "pipeline: the scoring pass read no rows"}
	}
	return total
}

// add adds the counts of later rows.
func (b *blockScores) add(next blockScores) error {
	for _, pair := range [][2][][][]int{{b.Main, next.Main}, {b.Majority, next.Majority}, {b.Hebbian, next.Hebbian}} {
		for k, table := range pair[1] {
			for i, row := range table {
				for j, n := range row {
					pair[0][k][i][j] += n
				}
			}
		}
	}
	return nil
}

// foldScores turns the summed tables into confusion tables per fold, and
// pools them.
func foldScores(labels []string, folds int, b *blockScores) (*FoldScores, error) {
	fs := &FoldScores{PooledMain: evaluate.NewConfusion(labels), PooledMajority: evaluate.NewConfusion(labels), PooledH: evaluate.NewConfusion(labels)}
	for k := range folds {
		for _, pair := range []struct {
			dst   *[]*evaluate.Confusion
			table [][]int
		}{{&fs.Main, b.Main[k]}, {&fs.Majority, b.Majority[k]}, {&fs.Hebbian, b.Hebbian[k]}} {
			c := evaluate.NewConfusion(labels)
			addTable(c, pair.table)
			*pair.dst = append(*pair.dst, c)
		}
	}
	for k := range folds {
		for _, pair := range []struct{ pooled, fold *evaluate.Confusion }{
			{fs.PooledMain, fs.Main[k]}, {fs.PooledMajority, fs.Majority[k]}, {fs.PooledH, fs.Hebbian[k]},
		} {
			if err := pair.pooled.Merge(pair.fold); err != nil {
				return nil, err
			}
		}
	}
	return fs, nil
}

func addTable(c *evaluate.Confusion, counts [][]int) {
	for i, row := range counts {
		for j, n := range row {
			c.Matrix[i][j] += n
		}
	}
}

// CVResults are the pipeline's cross-validation results in the shape
// evaluate.RunStudy gives them: the main method, then the majority-class
// and Hebbian baselines, over the same folds.
func (fs *FoldScores) CVResults(mainName string) (main, majority, hebbian *evaluate.CVResult) {
	result := func(name string, pooled *evaluate.Confusion, folds []*evaluate.Confusion) *evaluate.CVResult {
		r := &evaluate.CVResult{Method: name, Confusion: pooled, Pooled: pooled.Accuracy()}
		for _, f := range folds {
			r.FoldAccuracy = append(r.FoldAccuracy, f.Accuracy())
		}
		r.Mean, r.SD = evaluate.MeanSD(r.FoldAccuracy)
		r.RepeatAccuracy = []float64{r.Pooled}
		return r
	}
	return result(mainName, fs.PooledMain, fs.Main), result("majority", fs.PooledMajority, fs.Majority), result("hebbian", fs.PooledH, fs.Hebbian)
}
