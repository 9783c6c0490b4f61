package export

import (
	"bytes"
	"testing"

	"deltafit/internal/reference"
)

// The selfcheck report counts failed cases and marks them NO, in every
// format (golden files; go test ./export -update after an intended change).
// The two cases exercise the layout only; their values check nothing.
func TestSelfcheckReportGolden(t *testing.T) {
	report := NewSelfcheckReport([]reference.Case{
		{Name: "layout: a passing case", Source: "none", Expected: "1", Got: "1", Pass: true},
		{Name: "layout: a failing case", Source: "none", Expected: "1", Got: "2", Pass: false},
	})
	if report.Failed != 1 {
		t.Errorf("failed = %d, want 1", report.Failed)
	}
	for _, format := range []Format{Text, Markdown, JSON} {
		t.Run(string(format), func(t *testing.T) {
			var buf bytes.Buffer
			if err := WriteSelfcheckReport(&buf, format, report); err != nil {
				t.Fatal(err)
			}
			golden(t, "selfcheck_report."+string(format), buf.Bytes())
		})
	}
}
