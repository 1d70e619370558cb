package report

import (
	"bytes"
	"html"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"chord/internal/testenv"
)

// report.html is one self-contained page: every plot embedded, no script,
// nothing fetched, the inputs' digests and the configuration escaped.
func TestReportHTMLContent(t *testing.T) {
	dir := t.TempDir()
	writeTestReport(t, dir)
	b, err := os.ReadFile(filepath.Join(dir, HTMLFile))
	if err != nil {
		t.Fatal(err)
	}
	page := string(b)
	for _, want := range []string{"<title>chord report: Test b</title>", html.EscapeString(DemoWarning), IntervalConvention, "uniform(-10, -1)",
		strings.Repeat("ab", 32), "/data/test.csv", `name = &#34;&lt;Lumen&gt;&#34;`, "Converged", "detected"} {
		if !strings.Contains(page, want) {
			t.Errorf("report.html lacks %q", want)
		}
	}
	if n := strings.Count(page, `src="data:image/png;base64,`); n != len(PlotNames) {
		t.Errorf("%d embedded images, want %d", n, len(PlotNames))
	}
	// The cautions: the full one, and the chemistry note in its own style.
	s := &Summary{Program: "chord test", Cautions: []string{LifeCaution, MethaneChemistryNote}}
	if err := WriteHTML(dir, s, &RunDetails{}); err != nil {
		t.Fatal(err)
	}
	b, _ = os.ReadFile(filepath.Join(dir, HTMLFile))
	if !strings.Contains(string(b), `<div class="caution">Caution: a detected gas`) || !strings.Contains(string(b), `<div class="note">Note on methane`) {
		t.Errorf("cautions not laid out")
	}
	for _, bad := range []string{"<script", "http://", "https://", "<link", "@import", "url("} {
		if strings.Contains(page, bad) {
			t.Errorf("report.html holds %q: it must fetch nothing", bad)
		}
	}
}

// The report in a real browser (Debian's chromium, headless): it loads
// with no console error, every image decodes, nothing is fetched, and the
// screenshot of the whole page has the page's width and the height of its
// content (a summary, five plots and the configuration: taller than two
// screens).
func TestReportHTMLInBrowser(t *testing.T) {
	if testing.Short() {
		t.Skip("starts a browser")
	}
	dir := t.TempDir()
	writeTestReport(t, dir)
	const width = 1200
	got := testenv.LoadPage(t, filepath.Join(dir, HTMLFile), width)
	if len(got.Errors) > 0 {
		t.Errorf("browser errors: %q", got.Errors)
	}
	if len(got.Requests) > 0 {
		t.Errorf("the page fetched %q; it must be self-contained", got.Requests)
	}
	if got.Images != len(PlotNames) || got.BrokenImages != 0 {
		t.Errorf("%d images, %d broken; want %d, none broken", got.Images, got.BrokenImages, len(PlotNames))
	}
	if got.Title != "chord report: Test b" {
		t.Errorf("title %q", got.Title)
	}
	img, err := png.Decode(bytes.NewReader(got.Screenshot))
	if err != nil {
		t.Fatalf("screenshot: %v", err)
	}
	if b := img.Bounds(); b.Dx() != width || b.Dy() < 1800 {
		t.Errorf("screenshot %d x %d pixels, want %d wide and at least 1800 tall", b.Dx(), b.Dy(), width)
	} else {
		t.Logf("screenshot %d x %d pixels, %d bytes", b.Dx(), b.Dy(), len(got.Screenshot))
	}
	if d := os.Getenv("CHORD_KEEP_PLOTS"); d != "" {
		os.WriteFile(filepath.Join(d, "report-screenshot.png"), got.Screenshot, 0o644)
	}
}

// The browser check itself catches what it is there to catch: a missing
// image, a console error and a fetch (so that the test above can fail).
func TestBrowserCheckCatchesFaults(t *testing.T) {
	if testing.Short() {
		t.Skip("starts a browser")
	}
	dir := t.TempDir()
	page := filepath.Join(dir, "bad.html")
	os.WriteFile(page, []byte(`<!DOCTYPE html><html><head><title>bad</title></head><body>
<img src="missing.png" alt="gone"><script>console.error("broken on purpose")</script></body></html>`), 0o644)
	got := testenv.LoadPage(t, page, 800)
	if got.Images != 1 || got.BrokenImages != 1 {
		t.Errorf("%d images, %d broken; want 1 broken", got.Images, got.BrokenImages)
	}
	joined := strings.Join(got.Errors, "\n")
	if !strings.Contains(joined, "broken on purpose") {
		t.Errorf("console error not caught: %q", got.Errors)
	}
	if len(got.Requests) == 0 || !strings.HasSuffix(got.Requests[0], "missing.png") {
		t.Errorf("the request for missing.png not seen: %q", got.Requests)
	}
}
