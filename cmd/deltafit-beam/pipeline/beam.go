package pipeline

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"reflect"
	"slices"
	"strings"

	"github.com/apache/beam/sdks/v2/go/pkg/beam"
	"github.com/apache/beam/sdks/v2/go/pkg/beam/io/fileio"
	"github.com/apache/beam/sdks/v2/go/pkg/beam/io/filesystem"
	_ "github.com/apache/beam/sdks/v2/go/pkg/beam/io/filesystem/local"
	"github.com/apache/beam/sdks/v2/go/pkg/beam/register"

	"deltafit/ingest/tabular"
)

// Partial is one block's contribution to a pass, as JSON; Block orders the
// partials (see block.ID).
type Partial struct {
	Block string
	Data  []byte
}

// Partials accumulate a pass's partials until they are added in block order.
type Partials struct {
	Items []Partial
}

func init() {
	beam.RegisterType(reflect.TypeOf((*Partial)(nil)).Elem())
	beam.RegisterType(reflect.TypeOf((*Partials)(nil)).Elem())
	register.DoFn3x1[context.Context, fileio.ReadableFile, func(Partial), error](&foldsFn{})
	register.DoFn4x1[context.Context, fileio.ReadableFile, func(*[]byte) bool, func(Partial), error](&planFn{})
	register.DoFn5x1[context.Context, fileio.ReadableFile, func(*[]byte) bool, func(*[]byte) bool, func(Partial), error](&epochFn{})
	register.DoFn5x1[context.Context, fileio.ReadableFile, func(*[]byte) bool, func(*[]byte) bool, func(Partial), error](&scoreFn{})
	register.DoFn3x1[[]byte, func(*[]byte) bool, func([]byte), error](&updateFn{})
	register.DoFn3x1[[]byte, func(*[]byte) bool, func([]byte), error](&finishFn{})
	register.DoFn2x1[context.Context, []byte, error](&writeFn{})
	register.Combiner3[Partials, Partial, []byte](&combineFn{})
	register.Emitter1[Partial]()
	register.Emitter1[[]byte]()
	register.Iter1[[]byte]()
}

// Stages whose partials a combineFn adds.
const (
	stageFolds = "folds"
	stagePlan  = "plan"
	stageEpoch = "epoch"
	stageScore = "score"
)

// combineFn gathers a pass's partials and adds them in block order, so the
// result does not depend on how the runner split the work or in which
// order it merged the accumulators.
type combineFn struct {
	Stage  string
	Config Config
}

func (f *combineFn) CreateAccumulator() Partials { return Partials{} }

func (f *combineFn) AddInput(acc Partials, p Partial) Partials {
	acc.Items = append(acc.Items, p)
	return acc
}

func (f *combineFn) MergeAccumulators(a, b Partials) Partials {
	a.Items = append(a.Items, b.Items...)
	return a
}

func (f *combineFn) ExtractOutput(acc Partials) []byte {
	parts := slices.Clone(acc.Items)
	slices.SortStableFunc(parts, func(a, b Partial) int { return strings.Compare(a.Block, b.Block) })
	var out any
	switch f.Stage {
	case stageFolds:
		out = reduceFolds(&f.Config, parts)
	case stagePlan:
		out = reducePlan(&f.Config, parts)
	case stageEpoch:
		out = reduceEpoch(parts)
	case stageScore:
		out = reduceScores(parts)
	}
	b, err := json.Marshal(out)
	if err != nil {
		b, _ = json.Marshal(struct {
			Err string `json:"error"`
		}{fmt.Sprintf("pipeline: %s pass: %v", f.Stage, err)})
	}
	return b
}

// sideInput returns the single value of a singleton side input.
func sideInput(iter func(*[]byte) bool) []byte {
	var b []byte
	iter(&b)
	return b
}

// keyOf returns the key of a matched file.
func (c *Config) keyOf(path string) string {
	if i := slices.Index(c.Paths, path); i >= 0 {
		return c.Keys[i]
	}
	return path
}

// eachBlock opens a file and calls fn with each block, in order.
func eachBlock(ctx context.Context, c *Config, file fileio.ReadableFile, kinds map[string]tabular.Kind, fn func(*block) error) error {
	path := file.Metadata.Path
	r, err := file.Open(ctx)
	if err != nil {
		return fmt.Errorf("%s: %w", tabular.DisplayName(path), err)
	}
	defer r.Close()
	return readBlocks(ctx, c, c.keyOf(path), path, r, kinds, fn)
}

// emitFile emits a file's partial: v, or the error that stopped the file.
// One partial per file: each pass adds its blocks' results in block order
// as it reads them, so a file costs the combine one partial, whatever its
// size.
func emitFile(emit func(Partial), c *Config, file fileio.ReadableFile, v any, err error) {
	id := blockID(c.keyOf(file.Metadata.Path), 0)
	if err != nil {
		emitError(emit, id, err)
		return
	}
	emitJSON(emit, id, v)
}

// emitError emits a partial that holds only an error.
func emitError(emit func(Partial), id string, err error) {
	b, _ := json.Marshal(struct {
		Err string `json:"error"`
	}{err.Error()})
	emit(Partial{Block: id, Data: b})
}

// emitJSON emits v as the partial of block id.
func emitJSON(emit func(Partial), id string, v any) {
	b, err := json.Marshal(v)
	if err != nil {
		emitError(emit, id, fmt.Errorf("pipeline: %w", err))
		return
	}
	emit(Partial{Block: id, Data: b})
}

// foldsFn gathers each row's hash by class.
type foldsFn struct{ Config Config }

func (f *foldsFn) ProcessElement(ctx context.Context, file fileio.ReadableFile, emit func(Partial)) error {
	c := &f.Config
	var p *foldsPartial
	err := eachBlock(ctx, c, file, nil, func(b *block) error {
		target := b.Table.Column(c.Target)
		if target == nil {
			return &tabular.DataError{File: b.Path, Name: c.Target, Err: errors.New("there is no target column of that name")}
		}
		if p == nil {
			p = &foldsPartial{Hashes: map[string][]uint64{}, Path: b.Path, Column: b.Table.Index(c.Target) + 1,
				Target: columnInfo{Name: target.Name, Kind: target.Kind, LabelText: target.LabelText}}
		}
		for i := range b.Table.Rows {
			label := target.Value(i)
			p.Hashes[label] = append(p.Hashes[label], rowHash(b.File, b.Table.RowNumber(i), foldSeed(c)))
		}
		return nil
	})
	emitFile(emit, c, file, p, err)
	return nil
}

// foldsPartial is a block's row hashes by class label.
type foldsPartial struct {
	Err    string              `json:"error,omitempty"`
	Path   string              `json:"path"`
	Target columnInfo          `json:"target"`
	Column int                 `json:"column"`
	Hashes map[string][]uint64 `json:"hashes"`
}

// foldsResult is the fold pass's result: the fold index (gob), or an error.
type foldsResult struct {
	Err   string `json:"error,omitempty"`
	Index []byte `json:"index,omitempty"`
}

func reduceFolds(c *Config, parts []Partial) *foldsResult {
	hashes := map[string][]uint64{}
	var first *foldsPartial
	for _, part := range parts {
		var p foldsPartial
		if err := json.Unmarshal(part.Data, &p); err != nil {
			return &foldsResult{Err: fmt.Sprintf("pipeline: fold partial: %v", err)}
		}
		if p.Err != "" {
			return &foldsResult{Err: p.Err}
		}
		if first == nil {
			first = &p
		}
		for l, h := range p.Hashes {
			hashes[l] = append(hashes[l], h...)
		}
	}
	if first == nil {
		return &foldsResult{Err: "pipeline: the input holds no rows"}
	}
	counts := map[string]int{}
	total := 0
	for l, h := range hashes {
		counts[l] = len(h)
		total += len(h)
	}
	labels, _, err := sortedLabels(first.Path, first.Target, first.Column, counts)
	if err != nil {
		return &foldsResult{Err: err.Error()}
	}
	if c.Folds > total {
		return &foldsResult{Err: fmt.Sprintf("%s: %d folds for %d rows; give at most %d", tabular.DisplayName(first.Path), c.Folds, total, total)}
	}
	index, err := encodeFoldIndex(newFoldIndex(c.Folds, labels, hashes))
	if err != nil {
		return &foldsResult{Err: err.Error()}
	}
	return &foldsResult{Index: index}
}

// folds decodes the fold pass's result side input; nil without folds.
func folds(b []byte) (*foldIndex, error) {
	if len(b) == 0 {
		return nil, nil
	}
	var r foldsResult
	if err := json.Unmarshal(b, &r); err != nil {
		return nil, fmt.Errorf("pipeline: folds: %w", err)
	}
	if r.Err != "" {
		return nil, errors.New(r.Err)
	}
	return decodeFoldIndex(r.Index)
}

// planFn summarises each block for the plans, and hashes each file.
type planFn struct{ Config Config }

func (f *planFn) ProcessElement(ctx context.Context, file fileio.ReadableFile, foldsIter func(*[]byte) bool, emit func(Partial)) error {
	c := &f.Config
	key := c.keyOf(file.Metadata.Path)
	index, err := folds(sideInput(foldsIter))
	if err != nil {
		emitError(emit, blockID(key, 0), err)
		return nil
	}
	sha, err := func() (string, error) {
		r, err := file.Open(ctx)
		if err != nil {
			return "", err
		}
		defer r.Close()
		return hashFile(r)
	}()
	if err != nil {
		emitError(emit, blockID(key, 0), fmt.Errorf("%s: %w", tabular.DisplayName(file.Metadata.Path), err))
		return nil
	}
	var whole *planPartial
	err = eachBlock(ctx, c, file, nil, func(b *block) error {
		p, err := summarizeBlock(c, b, index)
		if err != nil {
			return err
		}
		if whole == nil {
			p.SHA256, whole = sha, p
			return nil
		}
		return whole.absorb(p)
	})
	emitFile(emit, c, file, whole, err)
	return nil
}

// readKinds are the column kinds the training passes read with: those the
// plan pass found, so every pass reads the same values.
func (s *State) readKinds(c *Config) (map[string]tabular.Kind, error) {
	kinds, err := parseKinds(s.Kinds)
	if err != nil {
		return nil, err
	}
	if k, ok := c.Kinds[c.Target]; ok {
		kinds[c.Target], err = tabular.ParseKind(k)
	}
	return kinds, err
}

// epochFn is a training pass's work: see train.go.
type epochFn struct{ Config Config }

func (f *epochFn) ProcessElement(ctx context.Context, file fileio.ReadableFile, stateIter, foldsIter func(*[]byte) bool, emit func(Partial)) error {
	return eachTrainingBlock(ctx, &f.Config, file, stateIter, foldsIter, emit, func(s *State) bool { return !s.allDone() },
		func(s *State, d *blockData) (blockEpoch, error) {
			parts, err := epochBlock(&f.Config, s, d)
			return blockEpoch{Models: parts}, err
		}, (*blockEpoch).add)
}

// scoreFn is the scoring pass's work: see score.go.
type scoreFn struct{ Config Config }

func (f *scoreFn) ProcessElement(ctx context.Context, file fileio.ReadableFile, stateIter, foldsIter func(*[]byte) bool, emit func(Partial)) error {
	return eachTrainingBlock(ctx, &f.Config, file, stateIter, foldsIter, emit, func(*State) bool { return true },
		func(s *State, d *blockData) (blockScores, error) { return scoreBlock(&f.Config, s, d) }, (*blockScores).add)
}

// eachTrainingBlock reads a file for a pass that needs the state, when
// active says the pass has work: work computes each block's result, and
// add adds it to the file's, which is emitted at the end.
func eachTrainingBlock[T any](ctx context.Context, c *Config, file fileio.ReadableFile, stateIter, foldsIter func(*[]byte) bool,
	emit func(Partial), active func(*State) bool, work func(*State, *blockData) (T, error), add func(total *T, next T) error) error {
	s, err := decodeState(sideInput(stateIter))
	if err != nil {
		return err
	}
	if s.Err != "" || !active(s) {
		return nil
	}
	index, err := folds(sideInput(foldsIter))
	if err != nil {
		return err
	}
	kinds, err := s.readKinds(c)
	if err != nil {
		return err
	}
	var total *T
	err = eachBlock(ctx, c, file, kinds, func(b *block) error {
		d, err := newBlockData(c, s, b, index)
		if err != nil {
			return err
		}
		out, err := work(s, d)
		if err != nil {
			return err
		}
		if total == nil {
			total = &out
			return nil
		}
		return add(total, out)
	})
	emitFile(emit, c, file, total, err)
	return nil
}

// updateFn applies a training pass's totals to the state. The state is the
// main input, the totals a side input: a pass in which no block had work
// (every model trained, or an error) combines no partials, and a global
// Combine of nothing gives nothing.
type updateFn struct{ Config Config }

func (f *updateFn) ProcessElement(state []byte, totalsIter func(*[]byte) bool, emit func([]byte)) error {
	s, err := decodeState(state)
	if err != nil {
		return err
	}
	if s.Err == "" && !s.allDone() {
		var t epochTotals
		if err := json.Unmarshal(sideInput(totalsIter), &t); err != nil {
			return fmt.Errorf("pipeline: totals: %w", err)
		}
		s = update(&f.Config, s, &t)
	}
	b, err := encodeState(s)
	if err != nil {
		return err
	}
	emit(b)
	return nil
}

// finishFn puts the cross-validation's confusion tables into the state.
type finishFn struct{ Config Config }

func (f *finishFn) ProcessElement(state []byte, scoresIter func(*[]byte) bool, emit func([]byte)) error {
	s, err := decodeState(state)
	if err != nil {
		return err
	}
	if s.Err == "" {
		var b blockScores
		if err := json.Unmarshal(sideInput(scoresIter), &b); err != nil {
			return fmt.Errorf("pipeline: scores: %w", err)
		}
		if b.Err != "" {
			s = failed(errors.New(b.Err))
		} else if s.Scores, err = foldScores(s.Labels, f.Config.Folds, &b); err != nil {
			s = failed(err)
		}
	}
	out, err := encodeState(s)
	if err != nil {
		return err
	}
	emit(out)
	return nil
}

// writeFn writes the final state where the driver reads it back.
type writeFn struct{ Config Config }

func (f *writeFn) ProcessElement(ctx context.Context, state []byte) error {
	return writeAll(ctx, f.Config.resultPath(), state)
}

// resultPath is where a run's result is written.
func (c *Config) resultPath() string {
	return strings.TrimSuffix(c.Work, "/") + "/result.json"
}

func writeAll(ctx context.Context, path string, b []byte) error {
	fs, err := filesystem.New(ctx, path)
	if err != nil {
		return err
	}
	defer fs.Close()
	w, err := fs.OpenWrite(ctx, path)
	if err != nil {
		return err
	}
	if _, err := w.Write(b); err != nil {
		w.Close()
		return err
	}
	return w.Close()
}

func readAll(ctx context.Context, path string) ([]byte, error) {
	fs, err := filesystem.New(ctx, path)
	if err != nil {
		return nil, err
	}
	defer fs.Close()
	r, err := fs.OpenRead(ctx, path)
	if err != nil {
		return nil, err
	}
	defer r.Close()
	return io.ReadAll(r)
}

// passes is the number of training passes the graph holds: one per epoch
// and one that measures the last; the averaged mode spends a first pass
// on the rate, before its weights move.
func (c *Config) passes() int {
	if c.mode() == ModeAveraged {
		return c.epochs() + 2
	}
	return c.epochs() + 1
}

// Build adds a run's passes to the pipeline: the folds (with
// cross-validation), the plan, the training passes, the scoring (with
// cross-validation), and the writing of the result.
func Build(s beam.Scope, c *Config) {
	files := fileio.ReadMatches(s.Scope("files"), fileio.MatchAll(s.Scope("files"), beam.CreateList(s.Scope("files"), c.Paths), fileio.MatchEmptyDisallow()))
	var folds beam.PCollection
	if c.Folds >= 2 {
		fs := s.Scope("folds")
		folds = beam.Combine(fs, &combineFn{Stage: stageFolds, Config: *c}, beam.ParDo(fs, &foldsFn{Config: *c}, files))
	} else {
		folds = beam.Create(s.Scope("folds"), []byte{})
	}
	ps := s.Scope("plan")
	state := beam.Combine(ps, &combineFn{Stage: stagePlan, Config: *c},
		beam.ParDo(ps, &planFn{Config: *c}, files, beam.SideInput{Input: folds}))
	for pass := 1; pass <= c.passes(); pass++ {
		es := s.Scope(fmt.Sprintf("pass %d", pass))
		parts := beam.ParDo(es, &epochFn{Config: *c}, files, beam.SideInput{Input: state}, beam.SideInput{Input: folds})
		totals := beam.Combine(es, &combineFn{Stage: stageEpoch, Config: *c}, parts)
		state = beam.ParDo(es, &updateFn{Config: *c}, state, beam.SideInput{Input: totals})
	}
	if c.Folds >= 2 {
		ss := s.Scope("score")
		parts := beam.ParDo(ss, &scoreFn{Config: *c}, files, beam.SideInput{Input: state}, beam.SideInput{Input: folds})
		scores := beam.Combine(ss, &combineFn{Stage: stageScore, Config: *c}, parts)
		state = beam.ParDo(ss, &finishFn{Config: *c}, state, beam.SideInput{Input: scores})
	}
	beam.ParDo0(s.Scope("result"), &writeFn{Config: *c}, state)
}

// Run builds the pipeline of c, runs it on the named runner (Beam's
// options, such as the job endpoint, come from Beam's flags) and returns
// the final state.
func Run(ctx context.Context, c *Config, runner string) (*State, error) {
	if err := c.Check(); err != nil {
		return nil, err
	}
	p, s := beam.NewPipelineWithRoot()
	Build(s, c)
	if _, err := beam.Run(ctx, runner, p); err != nil {
		return nil, fmt.Errorf("pipeline: the %s runner: %w", runner, err)
	}
	b, err := readAll(ctx, c.resultPath())
	if err != nil {
		return nil, fmt.Errorf("pipeline: reading the result: %w", err)
	}
	st, err := decodeState(b)
	if err != nil {
		return nil, err
	}
	if st.Err != "" {
		return nil, errors.New(st.Err)
	}
	return st, nil
}
