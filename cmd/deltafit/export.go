package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"slices"
	"strings"

	"github.com/spf13/cobra"

	"deltafit/export"
	"deltafit/ingest/tabular"
)

type exportOptions struct {
	model  string
	to     string
	inputs string
	output string
}

// exportFormats are the formats export writes, as --to takes them.
var exportFormats = []string{"onnx"}

func newExportCmd() *cobra.Command {
	var opts exportOptions
	cmd := &cobra.Command{
		Use:   "export --model MODEL --to onnx -o FILE",
		Short: "Write a saved model in an open standard format (ONNX)",
		Long: `Export writes a model file made by fit -o in an open standard format, so
that other programs can score rows with it. -o names the file, written
atomically, or - for stdout.

--to onnx writes an ONNX model (operator set 13, IR version 7). Its output
"scores", float [N, K], holds the scores predict prints, one column per
class; the predicted class is the first column with the highest score. The
metadata lists the class labels (class_labels) and the input units
(unit_names) as JSON arrays. The file holds the weights as 32-bit floats,
so its scores can differ from predict's in about the seventh digit.

--inputs chooses what the graph takes:
  encoded  (default) one input "units", float [N, D]: the rows encoded
           exactly as the model's plan encodes them, in unit_names order.
  columns  one input per feature column. A numeric column enters raw, as
           double [N, 1] named like the column; the graph applies the
           model's encoding (cuts, centre and scale). If the model has a
           missing-value unit for the column, an input COLUMN:missing,
           float [N, 1], is 1 for a missing cell and 0 otherwise, and the
           column's input then takes any finite number (not NaN). A column
           without that unit had no missing cells in training and cannot
           take one here; use encoded inputs for such rows. Categorical and
           boolean columns enter as their units, float [N, k], named in
           unit_names (categories, "(other)", then the missing-value unit).
` + exitStatusHelp,
		Example: `  deltafit fit train.csv --target class -o model.json
  deltafit export --model model.json --to onnx -o model.onnx
  deltafit export --model model.json --to onnx --inputs columns -o model.onnx`,
		RunE: func(cmd *cobra.Command, _ []string) error {
			return runExport(cmd.Context(), opts, cmd.InOrStdin(), cmd.OutOrStdout(), cmd.ErrOrStderr())
		},
	}
	fs := cmd.Flags()
	fs.StringVar(&opts.model, "model", "", "model file written by fit -o, or - for stdin (required)")
	fs.StringVar(&opts.to, "to", "", "format to write: onnx (required)")
	fs.StringVar(&opts.inputs, "inputs", export.ONNXEncoded, "ONNX graph inputs: "+strings.Join(export.ONNXInputForms, " or "))
	fs.StringVarP(&opts.output, "output", "o", "", "file to write, or - for stdout (required)")
	return cmd
}

func runExport(_ context.Context, opts exportOptions, stdin io.Reader, stdout, _ io.Writer) error {
	switch {
	case opts.model == "":
		return usagef("--model is required: give a model file written by fit -o")
	case opts.to == "":
		return usagef("--to is required: give %s", strings.Join(exportFormats, " or "))
	case !slices.Contains(exportFormats, opts.to):
		return usagef("--to %q: give %s", opts.to, strings.Join(exportFormats, " or "))
	case !slices.Contains(export.ONNXInputForms, opts.inputs):
		return usagef("--inputs %q: give %s", opts.inputs, strings.Join(export.ONNXInputForms, " or "))
	case opts.output == "":
		return usagef("-o is required: give the file to write, or - for stdout")
	}
	if err := checkOutput(opts.output, opts.model); err != nil {
		return err
	}
	model, err := readModelFile(opts.model, stdin)
	if err != nil {
		return err
	}
	b, err := export.MarshalONNX(model, export.ONNXOptions{Inputs: opts.inputs})
	if err != nil {
		return err
	}
	write := func(w io.Writer) error {
		if _, err := w.Write(b); err != nil {
			return fmt.Errorf("export: %w", err)
		}
		return nil
	}
	if opts.output == "-" {
		return write(stdout)
	}
	if err := export.WriteFile(opts.output, write); err != nil {
		return err
	}
	_, err = fmt.Fprintf(stdout, "onnx: written to %s (%s inputs, %d units, %d classes)\n",
		opts.output, opts.inputs, model.Plan.Width(), len(model.Labels))
	return err
}

// readModelFile reads and checks the model file at path, or stdin for "-".
func readModelFile(path string, stdin io.Reader) (*export.Model, error) {
	r := stdin
	if path != "-" {
		f, err := os.Open(path)
		if err != nil {
			return nil, fmt.Errorf("cannot open the model: %w", err)
		}
		defer f.Close()
		r = f
	}
	model, err := export.ReadModel(tabular.DisplayName(path), r)
	if err != nil {
		return nil, fmt.Errorf("%w; fit a new model with deltafit fit -o", err)
	}
	return model, nil
}
