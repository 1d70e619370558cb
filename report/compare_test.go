package report

import (
	"bytes"
	"encoding/json"
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func summaryWith(params ...ColumnSummary) *Summary {
	return &Summary{Program: "chord test", Converged: true, Parameters: params}
}

func col(name string, median, halfWidth68, halfWidth95 float64) ColumnSummary {
	return ColumnSummary{Name: name, Median: median,
		P16: median - halfWidth68, P84: median + halfWidth68,
		P2_5: median - halfWidth95, P97_5: median + halfWidth95}
}

func TestCompareWidthsAndDropped(t *testing.T) {
	ch4 := col("log_CH4", -3, 0.2, 0.4)
	ch4.Gas = &GasVerdict{Gas: "CH4", Class: Detected, Verdict: "detected, 4.0 sigma"}
	ch4b := col("log_CH4", -3, 0.5, 1.0)
	ch4b.Gas = &GasVerdict{Gas: "CH4", Class: Constrained, Verdict: "constrained, 2.5 sigma"}
	runs := []CompareRun{
		{Label: "a", NoisePPM: 30, Summary: summaryWith(col("T", 500, 10, 20), ch4, col("log_O3", -8, 1, 2))},
		{Label: "b", NoisePPM: 60, Summary: summaryWith(col("T", 500, 20, 41), ch4b)},
	}
	runs[1].Summary.Converged = false
	// Each summary holds the cautions its detections call for (Summarize);
	// the comparison carries them, once.
	runs[0].Summary.Cautions = []string{LifeCaution}
	runs[1].Summary.Cautions = []string{LifeCaution}
	c, err := Compare(runs)
	if err != nil {
		t.Fatal(err)
	}
	if len(c.Parameters) != 2 || c.Parameter("log_O3") != nil {
		t.Fatalf("parameters %+v", c.Parameters)
	}
	if len(c.Dropped) != 1 || c.Dropped[0].Name != "log_O3" || c.Dropped[0].MissingIn[0] != "b" {
		t.Fatalf("dropped %+v", c.Dropped)
	}
	// Exact arithmetic on the percentiles given above.
	T := c.Parameter("T")
	if T.Width[1].Width68 != 40 || T.Width[1].Ratio68 != 2 || T.Width[1].Ratio95 != 82.0/40 {
		t.Fatalf("T widths %+v", T.Width)
	}
	if c.Parameter("log_CH4").Width[0].Class != Detected || len(c.Cautions) != 1 {
		t.Fatalf("verdict or caution missing: %+v %v", c.Parameter("log_CH4").Width[0], c.Cautions)
	}
	var tab bytes.Buffer
	if err := c.WriteTable(&tab); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"log_O3 dropped: not in run(s) b", "run b is not converged", "detected, 4.0 sigma", "not by itself evidence of life"} {
		if !strings.Contains(tab.String(), want) {
			t.Errorf("table lacks %q:\n%s", want, tab.String())
		}
	}
	var js bytes.Buffer
	if err := c.WriteJSON(&js); err != nil {
		t.Fatal(err)
	}
	var back Comparison
	if err := json.Unmarshal(js.Bytes(), &back); err != nil || len(back.Parameters) != 2 || back.Parameters[1].Width[0].Class != Detected {
		t.Fatalf("JSON round trip: %v %+v", err, back)
	}
	png := filepath.Join(t.TempDir(), "w.png")
	if err := c.WritePlot(png); err != nil {
		t.Fatal(err)
	}
	if b, err := os.ReadFile(png); err != nil || !bytes.HasPrefix(b, []byte("\x89PNG")) {
		t.Fatalf("plot not a PNG: %v", err)
	}
}

func TestCompareBadInput(t *testing.T) {
	s := summaryWith(col("T", 1, 1, 2))
	for i, c := range []struct {
		runs []CompareRun
		want string
	}{
		{nil, "no runs"},
		{[]CompareRun{{Label: "a", NoisePPM: 0, Summary: s}}, "noise level 0 ppm"},
		{[]CompareRun{{Label: "a", NoisePPM: -5, Summary: s}}, "must be positive"},
		{[]CompareRun{{Label: "a", NoisePPM: 5}}, "no summary"},
		{[]CompareRun{{Label: "a", NoisePPM: 5, Summary: s}, {Label: "b", NoisePPM: 5, Summary: summaryWith(col("R", 1, 1, 2))}}, "no free parameter in common"},
	} {
		if _, err := Compare(c.runs); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("case %d: %v, want %q", i, err, c.want)
		}
	}
	c, err := Compare([]CompareRun{{Label: "a", NoisePPM: 5, Summary: s}, {Label: "b", NoisePPM: 5, Summary: s}})
	if err != nil {
		t.Fatal(err)
	}
	if err := c.WritePlot(filepath.Join(t.TempDir(), "x.png")); err == nil || !strings.Contains(err.Error(), "one noise level") {
		t.Errorf("plot with one noise level: %v", err)
	}
	if _, err := ReadSummary(t.TempDir()); !errors.Is(err, fs.ErrNotExist) {
		t.Errorf("missing summary: %v", err)
	}
}
