package export

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"

	"google.golang.org/protobuf/encoding/protowire"

	"deltafit/fit"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// The input forms of an exported ONNX graph, as ONNXOptions.Inputs and the
// export command's --inputs take them.
const (
	// ONNXEncoded: one input, "units", float [N, D]: the rows encoded by
	// the model's plan, in the order of the unit_names metadata.
	ONNXEncoded = "encoded"
	// ONNXColumns: one input per feature column; the graph encodes the
	// numeric columns itself (see WriteONNX).
	ONNXColumns = "columns"
)

// ONNXInputForms lists the input forms WriteONNX writes, the default first.
var ONNXInputForms = []string{ONNXEncoded, ONNXColumns}

// ONNX versions written: the operator set of the standard domain and the
// IR (file format) version that goes with it.
const (
	ONNXOpset     = 13
	ONNXIRVersion = 7
)

// ONNXOptions chooses the form of an exported ONNX graph.
type ONNXOptions struct {
	// Inputs is the input form, ONNXEncoded or ONNXColumns; "" means
	// ONNXEncoded.
	Inputs string

	// unitsOutput makes the encoded units of the columns form a second
	// graph output, so that tests can compare the graph's encoding with
	// the plan's.
	unitsOutput bool
}

// WriteONNX writes m as an ONNX model (opset 13, IR version 7) whose graph
// output "scores", float [N, K], holds the scores Predict gives, one column
// per class in the order of m.Labels; the predicted class is the first
// column with the highest score.
//
// The graph is Gemm (net input w·x + b of each output unit, weights in
// float), then Sigmoid for logistic units (nothing for linear ones). With
// more than two classes the unit outputs are the scores; with two classes
// the one unit's output y becomes the scores (On+Off−y, y) by a second Gemm,
// as in fit.Network.ScoresTo.
//
// Inputs (N is the number of rows). With ONNXEncoded there is one,
// "units", float [N, D], the D units of m.Plan as Plan.EncodeTo writes them.
// With ONNXColumns there are inputs per feature column, in the plan's order:
//
//   - A numeric column enters raw, as an input of its name, double [N, 1].
//     The graph encodes it as the plan does: thermometer, threshold and
//     one-hot bins compare it with the cuts; zscore and minmax subtract the
//     center and divide by the scale, minmax then clipping to [0,1].
//   - If the plan has a missing-indicator unit for a numeric column, a
//     second input named like that unit, "COLUMN:missing", float [N, 1], is
//     1 for a missing cell and 0 otherwise. The graph multiplies the
//     column's value units by (1 − missing), so a missing cell is encoded as
//     Predict encodes it whatever finite number stands in the column input
//     (not NaN, which would propagate). A column without that unit had no
//     missing cell in training and has no such input: Predict encodes a
//     missing cell there with every unit off, which the encoded form
//     reproduces and this form does not.
//   - A categorical or boolean column enters as its units, an input of its
//     name, float [N, k]: the k units as the plan encodes them (categories,
//     "(other)", then the missing-indicator unit if any; a boolean's unit is
//     1 for true), named in the unit_names metadata and the input's doc
//     string.
//   - A column without value units (a constant numeric column) has no value
//     input.
//
// Comparisons are computed without Greater and a Cast from bool, which some
// runtimes lack (gonnx, which the tests run, has no Cast from bool): the unit "x > cut" is Relu(Tanh((x − cut)·2^600·2^600)),
// in double. A positive difference is at least 2^-1074, so the product is at
// least 2^126 or +Inf, where Tanh is exactly 1; a zero or negative
// difference gives 0 (or −0). The unit is thus exactly the comparison for
// every finite x and cut whose difference does not overflow (|x − cut|
// below 1.8e308). Clipping uses the same step: clip(v, 0, 1) =
// a·(1 − [a > 1]) + [a > 1] with a = Relu(v), exact for finite v.
//
// Metadata (metadata_props): "target", "class_labels" (a JSON array, the
// order of the score columns), "unit_names" (a JSON array, the order of the
// encoded units), "input_form" and "output_unit" (logistic or linear).
//
// The encoded units and the weights are float in the graph, so scores
// differ from Predict's float64 scores by float rounding (about 1e-7
// relative). The same model and options give the same bytes.
func WriteONNX(w io.Writer, m *Model, opts ONNXOptions) error {
	b, err := MarshalONNX(m, opts)
	if err != nil {
		return err
	}
	if _, err := w.Write(b); err != nil {
		return fmt.Errorf("export: %w", err)
	}
	return nil
}

// MarshalONNX returns the bytes WriteONNX writes.
func MarshalONNX(m *Model, opts ONNXOptions) ([]byte, error) {
	form := opts.Inputs
	if form == "" {
		form = ONNXEncoded
	}
	if !slices.Contains(ONNXInputForms, form) {
		return nil, fmt.Errorf("export: unknown ONNX input form %q (want %s)", opts.Inputs, strings.Join(ONNXInputForms, " or "))
	}
	if err := m.Validate(); err != nil {
		return nil, fmt.Errorf("export: the model cannot be exported: %w", err)
	}
	width := m.Plan.Width()
	if width == 0 {
		return nil, errors.New("export: the model has no input units (it gives every row the same class), so an ONNX graph would have no input")
	}
	g := newONNXGraph(m.Plan, form)
	var units string
	if form == ONNXEncoded {
		units = "units"
		g.input(units, tensorFloat, width, "the encoded input units, in the order of the unit_names metadata")
	} else {
		var err error
		if units, err = g.encodeColumns(m.Plan); err != nil {
			return nil, err
		}
	}
	g.score(units, m.Network)
	if opts.unitsOutput && form == ONNXColumns {
		g.output(units, width, "the encoded input units")
	}

	unitNames, err := jsonText(m.Plan.UnitNames())
	if err != nil {
		return nil, err
	}
	labels, err := jsonText(m.Labels)
	if err != nil {
		return nil, err
	}
	var model protoMessage
	model = model.varint(modelIRVersion, ONNXIRVersion)
	model = model.message(modelOpsetImport, protoMessage(nil).varint(opsetVersion, ONNXOpset))
	model = model.text(modelProducerName, "deltafit")
	model = model.text(modelProducerVersion, Version)
	model = model.text(modelDocString, fmt.Sprintf("deltafit classifier of %s: single layer of %s units trained by the %s rule; output scores, one column per class in the order of class_labels",
		m.Target, m.Network.Unit, m.Network.Rule))
	model = model.message(modelGraph, g.marshal())
	for _, kv := range [][2]string{
		{"target", m.Target},
		{"class_labels", labels},
		{"unit_names", unitNames},
		{"input_form", form},
		{"output_unit", m.Network.Unit.String()},
	} {
		model = model.message(modelMetadataProps, protoMessage(nil).text(entryKey, kv[0]).text(entryValue, kv[1]))
	}
	return []byte(model), nil
}

// jsonText returns names as a JSON array, with < > & as they are.
func jsonText(names []string) (string, error) {
	var b strings.Builder
	enc := json.NewEncoder(&b)
	enc.SetEscapeHTML(false)
	if err := enc.Encode(names); err != nil {
		return "", fmt.Errorf("export: %w", err)
	}
	return strings.TrimSuffix(b.String(), "\n"), nil
}

// onnxGraph builds a GraphProto. Its internal tensors (initializers and
// node outputs) are named prefix + a running number + ":" + the column
// being encoded, if any, + "/" + a label, as "_12:wall_mm/cuts"; the prefix
// is a run of underscores that no input name starts with, so they never
// clash with inputs, nor with the output "scores".
type onnxGraph struct {
	nodes, initializers, inputs, outputs []protoMessage
	prefix                               string
	count                                int
	column                               string            // the column being encoded, for names
	constants                            map[string]string // shared scalars by label
}

func newONNXGraph(p *encode.Plan, form string) *onnxGraph {
	names := []string{"units"}
	if form == ONNXColumns {
		names = names[:0]
		for _, f := range p.Features {
			names = append(names, f.Column)
		}
	}
	prefix := "_"
	for slices.ContainsFunc(names, func(n string) bool { return strings.HasPrefix(n, prefix) }) {
		prefix += "_"
	}
	return &onnxGraph{prefix: prefix, constants: map[string]string{}}
}

func (g *onnxGraph) name(label string) string {
	g.count++
	if g.column != "" {
		label = g.column + "/" + label
	}
	return g.prefix + strconv.Itoa(g.count) + ":" + label
}

// Tensor element types (TensorProto.DataType).
const (
	tensorFloat  = 1
	tensorDouble = 11
)

// input declares a graph input of element type elem and shape [N, width].
func (g *onnxGraph) input(name string, elem int, width int, doc string) {
	g.inputs = append(g.inputs, valueInfo(name, elem, width, doc))
}

// output declares a float graph output of shape [N, width].
func (g *onnxGraph) output(name string, width int, doc string) {
	g.outputs = append(g.outputs, valueInfo(name, tensorFloat, width, doc))
}

func valueInfo(name string, elem, width int, doc string) protoMessage {
	var shape protoMessage
	shape = shape.message(shapeDim, protoMessage(nil).text(dimParam, "N"))
	shape = shape.message(shapeDim, protoMessage(nil).varint(dimValue, uint64(width)))
	var tensorType protoMessage
	tensorType = tensorType.varint(tensorTypeElemType, uint64(elem))
	tensorType = tensorType.message(tensorTypeShape, shape)
	var v protoMessage
	v = v.text(valueInfoName, name)
	v = v.message(valueInfoType, protoMessage(nil).message(typeProtoTensorType, tensorType))
	v = v.text(valueInfoDocString, doc)
	return v
}

// floats adds a float initializer of the given shape and returns its name.
func (g *onnxGraph) floats(label string, dims []int, values []float64) string {
	name := g.name(label)
	t := tensorHead(name, tensorFloat, dims)
	t = t.packedFloats(tensorFloatData, values)
	g.initializers = append(g.initializers, t)
	return name
}

// doubles adds a double initializer of the given shape and returns its name.
func (g *onnxGraph) doubles(label string, dims []int, values []float64) string {
	name := g.name(label)
	t := tensorHead(name, tensorDouble, dims)
	t = t.packedDoubles(tensorDoubleData, values)
	g.initializers = append(g.initializers, t)
	return name
}

// scalar returns a double initializer of shape [1] and value v, one for
// every use of the same label.
func (g *onnxGraph) scalar(label string, v float64) string {
	if name, ok := g.constants[label]; ok {
		return name
	}
	column := g.column
	g.column = "" // shared, so named by no column
	name := g.doubles(label, []int{1}, []float64{v})
	g.column = column
	g.constants[label] = name
	return name
}

func tensorHead(name string, elem int, dims []int) protoMessage {
	var t protoMessage
	dims64 := make([]uint64, len(dims))
	for i, d := range dims {
		dims64[i] = uint64(d)
	}
	t = t.packedVarints(tensorDims, dims64)
	t = t.varint(tensorDataType, uint64(elem))
	t = t.text(tensorName, name)
	return t
}

// node adds a node with one output and returns the output's name.
func (g *onnxGraph) node(op string, inputs []string, attrs ...protoMessage) string {
	out := g.name(strings.ToLower(op))
	g.nodeTo(out, op, inputs, attrs...)
	return out
}

// nodeTo adds a node whose one output is named out.
func (g *onnxGraph) nodeTo(out, op string, inputs []string, attrs ...protoMessage) {
	var n protoMessage
	for _, in := range inputs {
		n = n.text(nodeInput, in)
	}
	n = n.text(nodeOutput, out)
	n = n.text(nodeName, out)
	n = n.text(nodeOpType, op)
	for _, a := range attrs {
		n = n.message(nodeAttribute, a)
	}
	g.nodes = append(g.nodes, n)
}

func intAttr(name string, v int) protoMessage {
	var a protoMessage
	a = a.text(attrName, name)
	a = a.varint(attrI, uint64(v))
	a = a.varint(attrType, attrTypeInt)
	return a
}

// score adds the network on the float [N, D] tensor units, ending in the
// graph output "scores".
func (g *onnxGraph) score(units string, net *fit.Network) {
	rows := len(net.Weights)
	weights := make([]float64, 0, rows*net.Inputs)
	for _, row := range net.Weights {
		weights = append(weights, row...)
	}
	w := g.floats("weights", []int{rows, net.Inputs}, weights)
	b := g.floats("biases", []int{rows}, net.Biases)
	twoClass := rows == 1
	gemmOut := "scores"
	if net.Unit == fit.Logistic || twoClass {
		gemmOut = g.name("net")
	}
	g.nodeTo(gemmOut, "Gemm", []string{units, w, b}, intAttr("transB", 1))
	output := gemmOut
	if net.Unit == fit.Logistic {
		output = "scores"
		if twoClass {
			output = g.name("output")
		}
		g.nodeTo(output, "Sigmoid", []string{gemmOut})
	}
	if twoClass {
		// (y) · [−1 1] + [On+Off 0] = (On+Off−y, y).
		sign := g.floats("two_class_sign", []int{1, 2}, []float64{-1, 1})
		offset := g.floats("two_class_offset", []int{2}, []float64{net.On + net.Off, 0})
		g.nodeTo("scores", "Gemm", []string{output, sign, offset})
	}
	g.output("scores", net.Classes, "one score per class, in the order of the class_labels metadata; the predicted class is the first with the highest score")
}

// encodeColumns declares the inputs of the columns form and adds the nodes
// that encode them; it returns the name of the float [N, D] units.
func (g *onnxGraph) encodeColumns(p *encode.Plan) (string, error) {
	seen := map[string]bool{"scores": true}
	declare := func(name string, elem, width int, doc string) error {
		if seen[name] {
			return fmt.Errorf("export: two ONNX inputs or an input and the output would be named %q; rename the column to export with --inputs columns, or use --inputs encoded", name)
		}
		seen[name] = true
		g.input(name, elem, width, doc)
		return nil
	}
	var blocks []string
	defer func() { g.column = "" }()
	for i := range p.Features {
		f := &p.Features[i]
		g.column = f.Column
		width := f.Width()
		if width == 0 {
			continue
		}
		if f.Kind != tabular.Numeric {
			names := f.UnitNames()
			if err := declare(f.Column, tensorFloat, width, "the units of column "+f.Column+" as the plan encodes them: "+strings.Join(names, ", ")); err != nil {
				return "", err
			}
			blocks = append(blocks, f.Column)
			continue
		}
		valueWidth := width
		if f.Missing {
			valueWidth--
		}
		if valueWidth > 0 {
			doc := "column " + f.Column + ", the raw value"
			if f.Missing {
				doc += "; where it is missing, give 1 in " + f.Column + ":missing and any finite number here"
			}
			if err := declare(f.Column, tensorDouble, 1, doc); err != nil {
				return "", err
			}
		}
		missing := f.Column + ":missing"
		if f.Missing {
			if err := declare(missing, tensorFloat, 1, "1 where column "+f.Column+" is missing, else 0"); err != nil {
				return "", err
			}
		}
		if valueWidth > 0 {
			values := g.encodeNumeric(f, f.Column)
			if f.Missing {
				missingDouble := g.node("Cast", []string{missing}, intAttr("to", tensorDouble))
				present := g.node("Sub", []string{g.scalar("one", 1), missingDouble})
				values = g.node("Mul", []string{values, present})
			}
			blocks = append(blocks, g.node("Cast", []string{values}, intAttr("to", tensorFloat)))
		}
		if f.Missing {
			blocks = append(blocks, missing)
		}
	}
	g.column = ""
	return g.node("Concat", blocks, intAttr("axis", 1)), nil
}

// encodeNumeric adds the nodes that encode the double [N, 1] input x as the
// value units of f, and returns the name of the double [N, k] result.
func (g *onnxGraph) encodeNumeric(f *encode.Feature, x string) string {
	switch f.Method {
	case encode.Thermometer, encode.Threshold:
		return g.above(x, f.Cuts)
	case encode.OneHot:
		if len(f.Cuts) == 0 {
			return g.constantLike(x, 1)
		}
		// Bin k is on when exactly k cuts are below x: with t the
		// thermometer units, bin 0 is 1−t₀, bin k is t_{k−1}−t_k and the
		// last bin is t_{K−1}, a linear map of t that is exact on 0/1.
		k := len(f.Cuts)
		difference := make([]float64, k*(k+1))
		for i := range k {
			difference[i*(k+1)+i] = -1
			difference[i*(k+1)+i+1] = 1
		}
		first := make([]float64, k+1)
		first[0] = 1
		bins := g.node("MatMul", []string{g.above(x, f.Cuts), g.doubles("bin_difference", []int{k, k + 1}, difference)})
		return g.node("Add", []string{bins, g.doubles("first_bin", []int{k + 1}, first)})
	case encode.ZScore, encode.MinMax:
		if f.Scale == 0 {
			return g.constantLike(x, 0)
		}
		centered := g.node("Sub", []string{x, g.doubles("center", []int{1}, []float64{f.Center})})
		v := g.node("Div", []string{centered, g.doubles("scale", []int{1}, []float64{f.Scale})})
		if f.Method == encode.MinMax {
			a := g.node("Relu", []string{v})
			over := g.above(a, []float64{1})
			under := g.node("Sub", []string{g.scalar("one", 1), over})
			v = g.node("Add", []string{g.node("Mul", []string{a, under}), over})
		}
		return v
	}
	// Plan.Validate admits no other numeric method.
	panic(fmt.Sprintf("export: numeric method %q has no ONNX form", f.Method))
}

// stepScale squared maps the smallest positive double difference, 2^-1074,
// to 2^126, where tanh is exactly 1.
var stepScale = math.Ldexp(1, 600)

// above returns the double [N, len(cuts)] units that are 1 where the double
// [N, 1] tensor x is above each cut and 0 (or −0) elsewhere, computed as
// Relu(Tanh((x − cut)·2^600·2^600)); see WriteONNX.
func (g *onnxGraph) above(x string, cuts []float64) string {
	d := g.node("Sub", []string{x, g.doubles("cuts", []int{len(cuts)}, cuts)})
	d = g.node("Mul", []string{d, g.scalar("2^600", stepScale)})
	d = g.node("Mul", []string{d, g.scalar("2^600", stepScale)})
	return g.node("Relu", []string{g.node("Tanh", []string{d})})
}

// constantLike returns a double tensor of x's shape filled with v.
func (g *onnxGraph) constantLike(x string, v float64) string {
	value := tensorHead("value", tensorDouble, []int{1}).packedDoubles(tensorDoubleData, []float64{v})
	attr := protoMessage(nil).text(attrName, "value").message(attrT, value).varint(attrType, attrTypeTensor)
	return g.node("ConstantOfShape", []string{g.node("Shape", []string{x})}, attr)
}

func (g *onnxGraph) marshal() protoMessage {
	var graph protoMessage
	for _, n := range g.nodes {
		graph = graph.message(graphNode, n)
	}
	graph = graph.text(graphName, "deltafit")
	for _, t := range g.initializers {
		graph = graph.message(graphInitializer, t)
	}
	for _, v := range g.inputs {
		graph = graph.message(graphInput, v)
	}
	for _, v := range g.outputs {
		graph = graph.message(graphOutput, v)
	}
	return graph
}

// protoMessage is an encoded protocol buffer message. Each method appends
// one field and returns the longer message, as append does.
type protoMessage []byte

func (m protoMessage) varint(num protowire.Number, v uint64) protoMessage {
	m = protowire.AppendTag(m, num, protowire.VarintType)
	return protowire.AppendVarint(m, v)
}

func (m protoMessage) text(num protowire.Number, s string) protoMessage {
	m = protowire.AppendTag(m, num, protowire.BytesType)
	return protowire.AppendString(m, s)
}

func (m protoMessage) message(num protowire.Number, sub protoMessage) protoMessage {
	m = protowire.AppendTag(m, num, protowire.BytesType)
	return protowire.AppendBytes(m, sub)
}

func (m protoMessage) packedVarints(num protowire.Number, values []uint64) protoMessage {
	var packed []byte
	for _, v := range values {
		packed = protowire.AppendVarint(packed, v)
	}
	m = protowire.AppendTag(m, num, protowire.BytesType)
	return protowire.AppendBytes(m, packed)
}

// packedFloats stores values rounded to float32.
func (m protoMessage) packedFloats(num protowire.Number, values []float64) protoMessage {
	m = protowire.AppendTag(m, num, protowire.BytesType)
	m = protowire.AppendVarint(m, uint64(4*len(values)))
	for _, v := range values {
		m = protowire.AppendFixed32(m, math.Float32bits(float32(v)))
	}
	return m
}

func (m protoMessage) packedDoubles(num protowire.Number, values []float64) protoMessage {
	m = protowire.AppendTag(m, num, protowire.BytesType)
	m = protowire.AppendVarint(m, uint64(8*len(values)))
	for _, v := range values {
		m = protowire.AppendFixed64(m, math.Float64bits(v))
	}
	return m
}

// Field numbers of onnx.proto (ONNX IR, the messages used here).
const (
	modelIRVersion       = 1
	modelProducerName    = 2
	modelProducerVersion = 3
	modelDocString       = 6
	modelGraph           = 7
	modelOpsetImport     = 8
	modelMetadataProps   = 14

	opsetVersion = 2 // OperatorSetIdProto; domain 1 left empty: the standard domain

	entryKey   = 1 // StringStringEntryProto
	entryValue = 2

	graphNode        = 1
	graphName        = 2
	graphInitializer = 5
	graphInput       = 11
	graphOutput      = 12

	nodeInput     = 1
	nodeOutput    = 2
	nodeName      = 3
	nodeOpType    = 4
	nodeAttribute = 5

	attrName       = 1
	attrI          = 3
	attrT          = 5
	attrType       = 20
	attrTypeInt    = 2 // AttributeProto.AttributeType
	attrTypeTensor = 4

	tensorDims       = 1
	tensorDataType   = 2
	tensorFloatData  = 4
	tensorName       = 8
	tensorDoubleData = 10

	valueInfoName      = 1
	valueInfoType      = 2
	valueInfoDocString = 3

	typeProtoTensorType = 1
	tensorTypeElemType  = 1
	tensorTypeShape     = 2
	shapeDim            = 1
	dimValue            = 1
	dimParam            = 2
)
