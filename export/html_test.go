package export

import (
	"bytes"
	"context"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"deltafit/evaluate/separate"
	"deltafit/fit"
)

// htmlSections are the headings of a fit's HTML report, in order.
var htmlSections = []string{"Summary", "Settings", "Cross-validation", "Confusion table", "By class", "Plots", "Learning curve", "Encoding", "Linear separability"}

func irisHTML(t *testing.T) []byte {
	t.Helper()
	r, s := irisStudy(t)
	settings := NewSettings("iris.csv", "test", 150, "species", s.Fitted.Classifier.Plan, Options{Rule: "delta"}, NewTraining(s.Fitted.Result), fit.Options{})
	r.Settings = &settings
	figures, err := FitFigures(r, s.Fitted.Classifier)
	if err != nil {
		t.Fatal(err)
	}
	check, err := separate.Check(context.Background(), irisDataset(t), separate.CheckOptions{})
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := WriteHTMLReport(&buf, &HTMLReport{Fit: r, Check: check, Figures: figures}); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// The page holds every section, in order, with the confusion table's
// counts in its cells, and the same study gives the same bytes.
func TestHTMLReportSections(t *testing.T) {
	page := irisHTML(t)
	if again := irisHTML(t); !bytes.Equal(page, again) {
		t.Error("the same study gave another page")
	}
	html := string(page)
	last := 0
	for _, h := range htmlSections {
		k := strings.Index(html, "<h2>"+h+"</h2>")
		if k < 0 {
			t.Errorf("no section %q", h)
			continue
		}
		if k < last {
			t.Errorf("section %q is out of order", h)
		}
		last = k
	}
	r, _ := irisStudy(t)
	var want []string
	for _, row := range r.CV.Confusion.Matrix {
		for _, n := range row {
			want = append(want, strconv.Itoa(n))
		}
	}
	cells := regexp.MustCompile(`<td class="num shade" style="[^"]*">(\d+)</td>`).FindAllStringSubmatch(html, -1)
	var got []string
	for _, c := range cells {
		got = append(got, c[1])
	}
	if strings.Join(got, " ") != strings.Join(want, " ") {
		t.Errorf("confusion cells %v, want %v", got, want)
	}
	if n := strings.Count(html, "<svg"); n != 3 {
		t.Errorf("%d inline SVG plots, want 3", n)
	}
}

// The page fetches nothing and runs nothing: no script, no source or link
// to another document, no CSS import or url(); the only URLs are the SVG
// namespaces, which are names, not fetched.
func TestHTMLReportSelfContained(t *testing.T) {
	html := string(irisHTML(t))
	for _, banned := range []string{"<script", "src=", "url(", "@import", "<link", "<iframe", "<object", "<embed", "<image", `="data:`} {
		if strings.Contains(strings.ToLower(html), banned) {
			t.Errorf("the page holds %q", banned)
		}
	}
	for _, m := range regexp.MustCompile(`href="([^"]*)"`).FindAllStringSubmatch(html, -1) {
		if !strings.HasPrefix(m[1], "#") {
			t.Errorf("link to %q, want only links within the page", m[1])
		}
	}
	stripped := strings.NewReplacer(`xmlns="http://www.w3.org/2000/svg"`, "", `xmlns:xlink="http://www.w3.org/1999/xlink"`, "").Replace(html)
	if strings.Contains(stripped, "http:") || strings.Contains(stripped, "https:") {
		t.Error("the page holds a URL besides the SVG namespaces")
	}
	for _, want := range []string{`<meta name="viewport"`, "@media (max-width:", "@media print"} {
		if !strings.Contains(html, want) {
			t.Errorf("the page has no %s", want)
		}
	}
}

// Labels and names from the data are escaped, in the tables and in the
// plots alike.
func TestHTMLReportEscapes(t *testing.T) {
	r, s := irisStudy(t)
	hostile := "<b>set&osa</b>"
	r.CV.Confusion.Labels[0] = hostile
	r.CV.Classes[0].Label = hostile
	r.Data.Labels[0] = hostile
	figures, err := FitFigures(r, s.Fitted.Classifier)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := WriteHTMLReport(&buf, &HTMLReport{Fit: r, Figures: figures}); err != nil {
		t.Fatal(err)
	}
	if strings.Contains(buf.String(), hostile) {
		t.Error("a label reached the page unescaped")
	}
	if !strings.Contains(buf.String(), "&lt;b&gt;set&amp;osa&lt;/b&gt;") {
		t.Error("the label is not on the page, escaped")
	}
}
