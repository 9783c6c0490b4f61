package main

import (
	"bytes"
	"context"
	"encoding/json"
	"image"
	"image/color"
	"image/png"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"
)

// readmeImage is the picture of the report the README shows, made by
// TestReportInBrowser with -update.
var readmeImage = filepath.Join("..", "..", "doc", "report-iris.png")

// chromium returns the Chromium binary to render with: $DELTAFIT_CHROMIUM,
// or chromium on the PATH. Without one the test is skipped, unless
// DELTAFIT_BROWSER=required (as in CI), when it fails.
func chromium(t *testing.T) string {
	t.Helper()
	for _, name := range []string{os.Getenv("DELTAFIT_CHROMIUM"), "chromium", "chromium-browser"} {
		if name == "" {
			continue
		}
		if path, err := exec.LookPath(name); err == nil {
			return path
		}
	}
	if os.Getenv("DELTAFIT_BROWSER") == "required" {
		t.Fatal("DELTAFIT_BROWSER=required, but there is no chromium on the PATH (Debian: apt-get install chromium)")
	}
	t.Skip("no chromium on the PATH: the report is not rendered in a browser here (Debian: apt-get install chromium; CI requires it)")
	return ""
}

// headless runs Chromium without a screen, with a fresh profile, no
// network of its own and no extensions, on page, and returns its stdout.
func headless(t *testing.T, bin, page string, args ...string) []byte {
	t.Helper()
	// A guard against a browser that hangs, not a measurement.
	ctx, cancel := context.WithTimeout(context.Background(), 3*time.Minute)
	defer cancel()
	all := append([]string{
		"--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync",
		"--disable-extensions", "--hide-scrollbars", "--user-data-dir=" + t.TempDir(),
	}, args...)
	cmd := exec.CommandContext(ctx, bin, append(all, "file://"+page)...)
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	if err := cmd.Run(); err != nil {
		t.Fatalf("%s: %v\n%s", bin, err, stderr.String())
	}
	return stdout.Bytes()
}

// screenshot renders page in a window of the given size and returns the
// picture.
func screenshot(t *testing.T, bin, page string, width, height int) image.Image {
	t.Helper()
	path := filepath.Join(t.TempDir(), "shot.png")
	headless(t, bin, page, "--window-size="+strconv.Itoa(width)+","+strconv.Itoa(height), "--screenshot="+path)
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatal(err)
	}
	if b := img.Bounds(); b.Dx() != width || b.Dy() != height {
		t.Fatalf("screenshot of %d×%d, want %d×%d", b.Dx(), b.Dy(), width, height)
	}
	return img
}

// checkNotBlank fails unless enough of the picture is drawn on, in enough
// colours: a page that did not render is one colour.
func checkNotBlank(t *testing.T, name string, img image.Image) {
	t.Helper()
	b := img.Bounds()
	inked, colours := 0, map[color.RGBA]bool{}
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			c := color.RGBAModel.Convert(img.At(x, y)).(color.RGBA)
			if c.R < 200 || c.G < 200 || c.B < 200 {
				inked++
			}
			if len(colours) < 1000 {
				colours[c] = true
			}
		}
	}
	if share := float64(inked) / float64(b.Dx()*b.Dy()); share < 0.02 || len(colours) < 50 {
		t.Errorf("%s screenshot looks blank: %.2f%% of it drawn on, %d colours", name, 100*share, len(colours))
	}
}

// TestReportInBrowser renders deltafit report's page in headless Chromium:
// the DOM holds every section heading and the confusion table's counts, as
// fit reports them for the same study, and the page draws at desktop and
// phone widths. With -update it writes the README's picture of the report.
func TestReportInBrowser(t *testing.T) {
	bin := chromium(t)
	dir := t.TempDir()
	page, err := filepath.Abs(filepath.Join(dir, "iris.html"))
	if err != nil {
		t.Fatal(err)
	}
	study := []string{irisPath, "--target", "species", "--folds", "10", "--seed", "1"}
	runOK(t, append([]string{"report"}, append(study, "-o", page)...)...)
	var fitted struct {
		CV struct {
			Confusion struct {
				Matrix [][]int `json:"matrix"`
			} `json:"confusion"`
		} `json:"cv"`
	}
	if err := json.Unmarshal(runOK(t, append([]string{"fit"}, append(study, "--format", "json")...)...), &fitted); err != nil {
		t.Fatal(err)
	}

	dom := string(headless(t, bin, page, "--dump-dom"))
	for _, h := range []string{"Summary", "Settings", "Cross-validation", "Confusion table", "By class", "Plots", "Learning curve", "Encoding", "Linear separability"} {
		if !strings.Contains(dom, "<h2>"+h+"</h2>") {
			t.Errorf("the rendered page has no heading %q", h)
		}
	}
	var want, got []string
	for _, row := range fitted.CV.Confusion.Matrix {
		for _, n := range row {
			want = append(want, strconv.Itoa(n))
		}
	}
	for _, m := range regexp.MustCompile(`<td class="num shade"[^>]*>(\d+)</td>`).FindAllStringSubmatch(dom, -1) {
		got = append(got, m[1])
	}
	if strings.Join(got, " ") != strings.Join(want, " ") {
		t.Errorf("the rendered confusion cells are %v, fit reports %v", got, want)
	}
	if n := strings.Count(dom, "<svg"); n < 3 {
		t.Errorf("the rendered page has %d plots, want 3", n)
	}

	desktop := screenshot(t, bin, page, 1200, 3000)
	checkNotBlank(t, "desktop", desktop)
	phone := screenshot(t, bin, page, 390, 1400)
	checkNotBlank(t, "phone", phone)

	if *update {
		writeReadmeImage(t, desktop)
	}
}

// writeReadmeImage writes the part of the desktop screenshot from the
// cross-validation table to the per-class figures, at half size.
func writeReadmeImage(t *testing.T, img image.Image) {
	t.Helper()
	top := confusionTop(img)
	if top < 0 {
		t.Fatal("cannot find the confusion table in the screenshot")
	}
	b := img.Bounds()
	part := image.Rect(b.Min.X+80, max(b.Min.Y, top-430), b.Max.X-80, min(b.Max.Y, top+620))
	half := image.NewRGBA(image.Rect(0, 0, part.Dx()/2, part.Dy()/2))
	for y := range half.Bounds().Dy() {
		for x := range half.Bounds().Dx() {
			var r, g, bl uint32
			for _, d := range [4][2]int{{0, 0}, {1, 0}, {0, 1}, {1, 1}} {
				cr, cg, cb, _ := img.At(part.Min.X+2*x+d[0], part.Min.Y+2*y+d[1]).RGBA()
				r, g, bl = r+cr, g+cg, bl+cb
			}
			half.Set(x, y, color.RGBA64{R: uint16(r / 4), G: uint16(g / 4), B: uint16(bl / 4), A: 0xffff})
		}
	}
	var buf bytes.Buffer
	if err := (&png.Encoder{CompressionLevel: png.BestCompression}).Encode(&buf, half); err != nil {
		t.Fatal(err)
	}
	if err := os.MkdirAll(filepath.Dir(readmeImage), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(readmeImage, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}

// confusionTop finds the first line of the page, below its header, with a
// long run of the dark shade of a confusion cell: the top of the table's
// first well-predicted cell. It returns -1 when there is none.
func confusionTop(img image.Image) int {
	b := img.Bounds()
	for y := b.Min.Y + 200; y < b.Max.Y; y++ {
		run := 0
		for x := b.Min.X; x < b.Max.X; x++ {
			c := color.RGBAModel.Convert(img.At(x, y)).(color.RGBA)
			if c.R < 60 && c.G < 110 && c.B > 120 {
				if run++; run >= 50 {
					return y
				}
			} else {
				run = 0
			}
		}
	}
	return -1
}
