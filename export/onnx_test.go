package export

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/advancedclimatesystems/gonnx"
	"github.com/advancedclimatesystems/gonnx/onnx"
	"google.golang.org/protobuf/proto"
	"gorgonia.org/tensor"

	"deltafit/evaluate"
	"deltafit/fit"
	"deltafit/fit/model"
	"deltafit/ingest"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
	"deltafit/internal/demo"
	"deltafit/internal/refdata"
)

// scoreTolerance bounds |ONNX score − Predict score|. The graph holds the
// weights and the encoded units as float32 (relative rounding 2⁻²⁴ ≈ 6e-8
// each) and Gemm sums in float32, so the net input of a unit is off by about
// 6e-8 · Σ|wᵢxᵢ| in the worst case, typically far less as the roundings
// cancel; a logistic unit's slope is at most 1/4. The largest difference
// measured on these cases is logged by the test.
const scoreTolerance = 1e-6

// onnxCase is a model fitted on the even rows of a dataset and scored on
// all of its rows, so that the odd rows bring values the plan was not
// fitted on (outside minmax's range, unseen categories).
type onnxCase struct {
	name    string
	data    func(t *testing.T) *tabular.Dataset
	learner evaluate.Learner
}

func onnxCases() []onnxCase {
	numeric := func(s string) encode.Options {
		e, err := encode.ParseNumericEncoding(s)
		if err != nil {
			panic(err)
		}
		return encode.Options{Numeric: e}
	}
	return []onnxCase{
		// Fisher 1936 via UCI: 3 classes, 4 numeric columns.
		{"iris thermometer", irisDataset, evaluate.Learner{Fit: fit.Options{Seed: 1}}},
		{"iris onehot bins", irisDataset, evaluate.Learner{Plan: numeric("onehot:5"), Fit: fit.Options{Seed: 1}}},
		{"iris threshold", irisDataset, evaluate.Learner{Plan: numeric("threshold"), Fit: fit.Options{Seed: 1}}},
		{"iris zscore linear", irisDataset, evaluate.Learner{Plan: numeric("zscore"), Fit: fit.Options{Seed: 1, Unit: fit.Linear}}},
		{"iris minmax", irisDataset, evaluate.Learner{Plan: numeric("minmax"), Fit: fit.Options{Seed: 1}}},
		// A constant column with missing cells: no value units
		// (thermometer), one bin always on (onehot), a zero unit (zscore,
		// minmax), each beside a missing-indicator unit.
		{"iris constant thermometer", irisConstantDataset, evaluate.Learner{Fit: fit.Options{Seed: 1}}},
		{"iris constant onehot bins", irisConstantDataset, evaluate.Learner{Plan: numeric("onehot:3"), Fit: fit.Options{Seed: 1}}},
		{"iris constant zscore", irisConstantDataset, evaluate.Learner{Plan: numeric("zscore"), Fit: fit.Options{Seed: 1}}},
		{"iris constant minmax", irisConstantDataset, evaluate.Learner{Plan: numeric("minmax"), Fit: fit.Options{Seed: 1}}},
		// The invented demo: 3 classes, categorical and numeric columns
		// with missing cells.
		{"demo thermometer", demoDataset, evaluate.Learner{Fit: fit.Options{Seed: 1}}},
		{"demo zscore", demoDataset, evaluate.Learner{Plan: numeric("zscore"), Fit: fit.Options{Seed: 1}}},
		{"demo onehot bins linear", demoDataset, evaluate.Learner{Plan: numeric("onehot:4"), Fit: fit.Options{Seed: 1, Unit: fit.Linear}}},
		// Two classes, one output unit: crabs (Campbell & Mahon 1974, R
		// package MASS) with sex as a boolean column; birthwt (Hosmer &
		// Lemeshow 1989, MASS) with a categorical column.
		{"crabs two classes", crabsDataset, evaluate.Learner{Fit: fit.Options{Seed: 1}}},
		{"crabs two classes linear", crabsDataset, evaluate.Learner{Plan: numeric("minmax"), Fit: fit.Options{Seed: 1, Unit: fit.Linear}}},
		{"birthwt two classes", birthwtDataset, evaluate.Learner{Fit: fit.Options{Seed: 1}}},
		// The Hebbian rule's targets are ±1, so On+Off is 0, not 1.
		{"birthwt two classes hebbian", birthwtDataset, evaluate.Learner{Plan: numeric("zscore"), Fit: fit.Options{Seed: 1, Rule: fit.Hebbian{}}}},
	}
}

// irisConstantDataset is Iris with a column "batch" added: 7 on every row
// but every fifth, which is missing.
func irisConstantDataset(t *testing.T) *tabular.Dataset {
	t.Helper()
	lines := strings.Split(strings.TrimRight(string(refdata.IrisCSV), "\n"), "\n")
	for i := range lines {
		switch {
		case i == 0:
			lines[i] = "batch," + lines[i]
		case i%5 == 0:
			lines[i] = "," + lines[i]
		default:
			lines[i] = "7," + lines[i]
		}
	}
	return readDataset(t, "iris.csv", []byte(strings.Join(lines, "\n")), "species", "")
}

func demoDataset(t *testing.T) *tabular.Dataset {
	t.Helper()
	return readDataset(t, demo.Name, demo.CSV, demo.Target, demo.Ignore)
}

// crabsDataset reads testdata/open/crabs.csv with its sex column
// (male/female) turned into a boolean column "male" (true/false).
func crabsDataset(t *testing.T) *tabular.Dataset {
	t.Helper()
	b := openData(t, "crabs.csv")
	lines := strings.Split(string(b), "\n")
	if !strings.HasPrefix(lines[0], "sex,") {
		t.Fatalf("crabs.csv: header %q does not start with sex", lines[0])
	}
	lines[0] = "male," + strings.TrimPrefix(lines[0], "sex,")
	for i := 1; i < len(lines); i++ {
		lines[i] = strings.Replace(strings.Replace(lines[i], "female,", "false,", 1), "male,", "true,", 1)
	}
	return readDataset(t, "crabs.csv", []byte(strings.Join(lines, "\n")), "species", "")
}

func birthwtDataset(t *testing.T) *tabular.Dataset {
	t.Helper()
	return readDataset(t, "birthwt.csv", openData(t, "birthwt.csv"), "low", "")
}

func openData(t *testing.T, name string) []byte {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "testdata", "open", name))
	if err != nil {
		t.Fatal(err)
	}
	return b
}

func readDataset(t *testing.T, name string, data []byte, target, ignore string) *tabular.Dataset {
	t.Helper()
	table, err := ingest.ReadTable(name, bytes.NewReader(data), ingest.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	var ignored []string
	if ignore != "" {
		ignored = []string{ignore}
	}
	d, err := tabular.NewDataset(table, target, ignored)
	if err != nil {
		t.Fatal(err)
	}
	return d
}

func (c onnxCase) model(t *testing.T) (*Model, *tabular.Table) {
	t.Helper()
	d := c.data(t)
	var even []int
	for r := 0; r < d.Table.Rows; r += 2 {
		even = append(even, r)
	}
	fitted, err := c.learner.Train(d, even)
	if err != nil {
		t.Fatal(err)
	}
	m := &Model{Schema: SchemaVersion, Tool: "deltafit " + Version, Classifier: *fitted.Classifier}
	if err := m.Validate(); err != nil {
		t.Fatal(err)
	}
	return m, d.Table
}

// The exported graph, run by gonnx (an ONNX runtime written independently
// of deltafit), gives Predict's scores and classes on every row, in both
// input forms; the columns form also reproduces the encoded units exactly.
func TestONNXMatchesPredict(t *testing.T) {
	worst := 0.0
	for _, c := range onnxCases() {
		m, table := c.model(t)
		want, _, err := m.PredictTable(table)
		if err != nil {
			t.Fatal(err)
		}
		for _, form := range ONNXInputForms {
			t.Run(c.name+"/"+form, func(t *testing.T) {
				b, err := MarshalONNX(m, ONNXOptions{Inputs: form, unitsOutput: true})
				if err != nil {
					t.Fatal(err)
				}
				runtime, err := gonnx.NewModelFromBytes(b)
				if err != nil {
					t.Fatal(err)
				}
				out, err := runtime.Run(onnxInputs(t, m, table, form))
				if err != nil {
					t.Fatal(err)
				}
				scores := float32s(t, out["scores"], table.Rows, len(m.Labels))
				diff := 0.0
				for r := range table.Rows {
					row := scores[r*len(m.Labels) : (r+1)*len(m.Labels)]
					for k, s := range row {
						diff = max(diff, math.Abs(float64(s)-want.ScoresOf(r)[k]))
					}
					if got := firstMax(row); got != want.Predicted[r] {
						t.Errorf("row %d: ONNX class %s, Predict %s (scores %v and %v)", r+1, m.Labels[got], m.Labels[want.Predicted[r]], row, want.ScoresOf(r))
					}
				}
				t.Logf("max |ONNX score − Predict score| = %.3g", diff)
				if diff > scoreTolerance {
					t.Errorf("max score difference %.3g, over the tolerance %g", diff, scoreTolerance)
				}
				worst = max(worst, diff)
				if form == ONNXColumns {
					names := runtime.OutputNames() // scores, then the units
					checkUnits(t, m, table, out[names[len(names)-1]])
				}
			})
		}
	}
	t.Logf("largest |ONNX score − Predict score| over all cases: %.3g", worst)
}

// checkUnits compares the graph's encoding with the plan's: equal after
// rounding the plan's units to float32, as the graph stores them.
func checkUnits(t *testing.T, m *Model, table *tabular.Table, got tensor.Tensor) {
	t.Helper()
	cols, err := m.Plan.Bind(table)
	if err != nil {
		t.Fatal(err)
	}
	width := m.Plan.Width()
	want, _ := m.Plan.EncodeTo(nil, cols, nil)
	units := float32s(t, got, table.Rows, width)
	names := m.Plan.UnitNames()
	bad := 0
	for i, u := range units {
		if u != float32(want[i]) {
			if bad++; bad <= 5 {
				t.Errorf("row %d, unit %s: graph %v, plan %v", i/width+1, names[i%width], u, want[i])
			}
		}
	}
	if bad > 0 {
		t.Errorf("%d of %d units differ", bad, len(units))
	}
}

// onnxInputs makes the graph inputs of form for every row of table. In the
// columns form a missing numeric cell is given as 1e300 with its missing
// input 1: the graph must switch off the units that value would turn on.
func onnxInputs(t *testing.T, m *Model, table *tabular.Table, form string) gonnx.Tensors {
	t.Helper()
	cols, err := m.Plan.Bind(table)
	if err != nil {
		t.Fatal(err)
	}
	n := table.Rows
	if form == ONNXEncoded {
		values, _ := m.Plan.EncodeTo(nil, cols, nil)
		return gonnx.Tensors{"units": floatTensor(n, m.Plan.Width(), values)}
	}
	inputs := gonnx.Tensors{}
	for i := range m.Plan.Features {
		f := &m.Plan.Features[i]
		if f.Kind != tabular.Numeric {
			one := &encode.Plan{Features: []encode.Feature{*f}}
			values, _ := one.EncodeTo(nil, cols[i:i+1], nil)
			inputs[f.Column] = floatTensor(n, f.Width(), values)
			continue
		}
		raw := make([]float64, n)
		missing := make([]float64, n)
		for r := range n {
			raw[r] = cols[i].Numbers[r]
			if cols[i].IsMissing(r) {
				if !f.Missing {
					t.Fatalf("row %d: column %s is missing, which the columns form cannot express without a missing unit", r+1, f.Column)
				}
				raw[r], missing[r] = 1e300, 1
			}
		}
		inputs[f.Column] = tensor.New(tensor.WithShape(n, 1), tensor.WithBacking(raw))
		if f.Missing {
			inputs[f.Column+":missing"] = floatTensor(n, 1, missing)
		}
	}
	return inputs
}

func floatTensor(rows, cols int, values []float64) tensor.Tensor {
	backing := make([]float32, len(values))
	for i, v := range values {
		backing[i] = float32(v)
	}
	return tensor.New(tensor.WithShape(rows, cols), tensor.WithBacking(backing))
}

func float32s(t *testing.T, x tensor.Tensor, rows, cols int) []float32 {
	t.Helper()
	if x == nil {
		t.Fatal("the graph has no such output")
	}
	if shape := x.Shape(); len(shape) != 2 || shape[0] != rows || shape[1] != cols {
		t.Fatalf("output shape %v, want [%d %d]", shape, rows, cols)
	}
	values, ok := x.Data().([]float32)
	if !ok {
		t.Fatalf("output of type %T, want []float32", x.Data())
	}
	return values
}

// firstMax returns the index of the first largest value, the class rule of
// fit.Network.Classify.
func firstMax(values []float32) int {
	best := 0
	for i, v := range values {
		if v > values[best] {
			best = i
		}
	}
	return best
}

// The ONNX project's own checker (onnx.checker.check_model with
// full_check, which adds type and shape inference) accepts every exported
// file. It needs /usr/bin/python3 with the onnx module (Debian
// python3-onnx); without them the test is skipped, unless
// DELTAFIT_ONNX_CHECKER=required, as CI sets it.
func TestONNXChecker(t *testing.T) {
	python := onnxChecker(t)
	dir := t.TempDir()
	var files []string
	for _, c := range onnxCases() {
		m, _ := c.model(t)
		for _, form := range ONNXInputForms {
			b, err := MarshalONNX(m, ONNXOptions{Inputs: form})
			if err != nil {
				t.Fatal(err)
			}
			path := filepath.Join(dir, strings.ReplaceAll(c.name, " ", "_")+"."+form+".onnx")
			if err := os.WriteFile(path, b, 0o644); err != nil {
				t.Fatal(err)
			}
			files = append(files, path)
		}
	}
	// One interpreter checks every file and names the ones it refuses.
	const check = `import onnx, sys
bad = 0
for path in sys.argv[1:]:
    try:
        onnx.checker.check_model(onnx.load(path), full_check=True)
    except Exception as e:
        bad += 1
        print(path, e)
sys.exit(1 if bad else 0)
`
	out, err := exec.Command(python, append([]string{"-c", check}, files...)...).CombinedOutput()
	if err != nil {
		t.Fatalf("the ONNX checker refused exported files: %v\n%s", err, out)
	}
	t.Logf("the ONNX checker (full_check) accepted %d files", len(files))
}

// onnxChecker returns the Python that has the onnx module, or skips.
func onnxChecker(t *testing.T) string {
	t.Helper()
	const python = "/usr/bin/python3"
	skip := func(format string, args ...any) {
		t.Helper()
		if os.Getenv("DELTAFIT_ONNX_CHECKER") == "required" {
			t.Fatalf(format, args...)
		}
		t.Skipf(format+" (install Debian's python3-onnx to run this check)", args...)
	}
	if _, err := os.Stat(python); err != nil {
		skip("no %s: %v", python, err)
	}
	if out, err := exec.Command(python, "-c", "import onnx").CombinedOutput(); err != nil {
		skip("%s has no onnx module: %v: %s", python, err, out)
	}
	return python
}

// The file declares what it holds: IR version 7, opset 13, the inputs and
// the output of its form, and the metadata naming units and classes. Read
// back with the generated ONNX types, a decoder independent of the writer.
func TestONNXStructure(t *testing.T) {
	m, _ := onnxCase{"demo", demoDataset, evaluate.Learner{}}.model(t) // numeric, categorical, missing cells
	for _, form := range ONNXInputForms {
		t.Run(form, func(t *testing.T) {
			b, err := MarshalONNX(m, ONNXOptions{Inputs: form})
			if err != nil {
				t.Fatal(err)
			}
			again, err := MarshalONNX(m, ONNXOptions{Inputs: form})
			if err != nil || !bytes.Equal(b, again) {
				t.Fatalf("a second export gave other bytes (err %v)", err)
			}
			var mp onnx.ModelProto
			if err := proto.Unmarshal(b, &mp); err != nil {
				t.Fatal(err)
			}
			if mp.IrVersion != 7 || len(mp.OpsetImport) != 1 || mp.OpsetImport[0].Domain != "" || mp.OpsetImport[0].Version != 13 {
				t.Errorf("IR version %d, opsets %v; want 7 and the standard domain at 13", mp.IrVersion, mp.OpsetImport)
			}
			meta := map[string]string{}
			for _, p := range mp.MetadataProps {
				meta[p.Key] = p.Value
			}
			var labels, units []string
			if err := json.Unmarshal([]byte(meta["class_labels"]), &labels); err != nil || !slices.Equal(labels, m.Labels) {
				t.Errorf("class_labels %q (%v), want %q", meta["class_labels"], err, m.Labels)
			}
			if err := json.Unmarshal([]byte(meta["unit_names"]), &units); err != nil || !slices.Equal(units, m.Plan.UnitNames()) {
				t.Errorf("unit_names %q (%v), want %q", meta["unit_names"], err, m.Plan.UnitNames())
			}
			if meta["target"] != m.Target || meta["input_form"] != form || meta["output_unit"] != "logistic" {
				t.Errorf("metadata %v", meta)
			}

			graph := mp.Graph
			if len(graph.Output) != 1 || graph.Output[0].Name != "scores" {
				t.Fatalf("outputs %v, want scores only", graph.Output)
			}
			if got := describe(graph.Output[0]); got != "float [N 3]" {
				t.Errorf("scores: %s, want float [N 3]", got)
			}
			var inputs []string
			for _, in := range graph.Input {
				inputs = append(inputs, in.Name+" "+describe(in))
			}
			want := []string{"units float [N " + strconv.Itoa(m.Plan.Width()) + "]"}
			if form == ONNXColumns {
				want = nil
				for _, f := range m.Plan.Features {
					switch {
					case f.Kind != tabular.Numeric:
						want = append(want, f.Column+" float [N "+strconv.Itoa(f.Width())+"]")
					case f.Missing:
						want = append(want, f.Column+" double [N 1]", f.Column+":missing float [N 1]")
					default:
						want = append(want, f.Column+" double [N 1]")
					}
				}
			}
			if !slices.Equal(inputs, want) {
				t.Errorf("inputs\n%q\nwant\n%q", inputs, want)
			}
		})
	}
}

// describe gives a value's element type and shape, as "float [N 3]".
func describe(v *onnx.ValueInfoProto) string {
	tt := v.GetType().GetTensorType()
	elem := map[int32]string{1: "float", 11: "double"}[tt.GetElemType()]
	var dims []string
	for _, d := range tt.GetShape().GetDim() {
		if p := d.GetDimParam(); p != "" {
			dims = append(dims, p)
		} else {
			dims = append(dims, strconv.Itoa(int(d.GetDimValue())))
		}
	}
	return elem + " [" + strings.Join(dims, " ") + "]"
}

func TestONNXRefuses(t *testing.T) {
	iris, _ := onnxCases()[0].model(t)
	oneColumn := func(column string) *Model {
		return &Model{Classifier: model.Classifier{Target: "y", Labels: []string{"a", "b"},
			Plan: &encode.Plan{Features: []encode.Feature{
				{Column: column, Kind: tabular.Numeric, Method: encode.ZScore, Scale: 1, Missing: true},
			}},
			Network: &fit.Network{Rule: "delta", Inputs: 2, Classes: 2, On: 1, Weights: [][]float64{{1, 1}}, Biases: []float64{0}}}}
	}
	noUnits := oneColumn("x")
	noUnits.Plan.Features = nil
	noUnits.Network.Inputs, noUnits.Network.Weights = 0, [][]float64{{}}
	clash := oneColumn("x")
	clash.Plan.Features = append(clash.Plan.Features, encode.Feature{Column: "x:missing", Kind: tabular.Boolean, Method: encode.Flag})
	clash.Network.Inputs, clash.Network.Weights = 3, [][]float64{{1, 1, 1}}
	for _, tc := range []struct {
		name  string
		model *Model
		opts  ONNXOptions
		err   string
	}{
		{"unknown form", iris, ONNXOptions{Inputs: "raw"}, `export: unknown ONNX input form "raw" (want encoded or columns)`},
		{"no units", noUnits, ONNXOptions{}, "export: the model has no input units"},
		{"column named scores", oneColumn("scores"), ONNXOptions{Inputs: ONNXColumns}, `would be named "scores"`},
		{"column named like a missing input", clash, ONNXOptions{Inputs: ONNXColumns}, `would be named "x:missing"`},
		{"invalid network", func() *Model { m := oneColumn("x"); m.Network.Biases = nil; return m }(), ONNXOptions{}, "export: the model cannot be exported"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var buf bytes.Buffer
			err := WriteONNX(&buf, tc.model, tc.opts)
			if err == nil || !strings.Contains(err.Error(), tc.err) {
				t.Fatalf("error %v, want one containing %q", err, tc.err)
			}
			if buf.Len() != 0 {
				t.Errorf("%d bytes written before the error", buf.Len())
			}
		})
	}
	// The names that clash in the columns form are fine in the encoded one.
	if err := WriteONNX(new(bytes.Buffer), oneColumn("scores"), ONNXOptions{}); err != nil {
		t.Errorf("encoded form of a column named scores: %v", err)
	}
}
