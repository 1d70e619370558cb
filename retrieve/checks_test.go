package retrieve

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"chord/report"
)

// fitChecks fits the configuration at cfg into dir/run and returns the
// summary.
func fitChecks(t *testing.T, dir, cfg string) *report.Summary {
	t.Helper()
	rep, err := Fit(context.Background(), FitOptions{ConfigPath: cfg, RunDir: filepath.Join(dir, "run"), DemoCache: testDemoCache(t)})
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range rep.Summary.Checks {
		t.Logf("check [%s] %s", c.Kind, c.Message)
	}
	if !strings.Contains(rep.SummaryText, "fit checks") {
		t.Errorf("summary.txt has no fit checks section:\n%s", rep.SummaryText)
	}
	return rep.Summary
}

func kinds(s *report.Summary) map[string]bool {
	k := map[string]bool{}
	for _, c := range s.Checks {
		k[c.Kind] = true
	}
	return k
}

// TestFitChecks: the small scenario (demo opacities, 35 ppm noise) fitted
// as it was simulated fires no check; with its errors stated 3 times too
// small, the chi-square is about 9 N (the residuals are 3 stated sigmas
// wide: fact of statistics) and the goodness-of-fit check fires and marks
// the gas verdicts; fitted without CO2 (1e-4 in the truth, a 4.3 um band
// of several hundred ppm against 35 ppm errors), the model cannot fit the
// band and the goodness-of-fit check fires.
func TestFitChecks(t *testing.T) {
	if testing.Short() {
		t.Skip("fits three simulated observations")
	}
	dir := t.TempDir()
	s := fitChecks(t, dir, setupSmall(t, dir, 500, 1, true))
	if len(s.Checks) != 0 || s.GoodnessOfFit == nil || !s.GoodnessOfFit.Fits {
		t.Errorf("a good fit: goodness %+v, checks %v", s.GoodnessOfFit, s.Checks)
	}

	dir = t.TempDir()
	cfg := setupSmall(t, dir, 500, 1, true)
	shrinkErrors(t, filepath.Join(dir, "obs.csv"), 3)
	s = fitChecks(t, dir, cfg)
	if g := s.GoodnessOfFit; g == nil || g.Fits || float64(g.ReducedChiSquare) < 5 || !kinds(s)[report.CheckGoodness] {
		t.Errorf("errors 3x too small: goodness %+v, checks %v", g, s.Checks)
	}
	for _, p := range s.Parameters {
		if p.Gas != nil && (!p.Gas.Unreliable || !strings.HasSuffix(p.Gas.Verdict, report.MisfitVerdict)) {
			t.Errorf("errors 3x too small: verdict of %s not marked: %+v", p.Name, p.Gas)
		}
	}

	dir = t.TempDir()
	cfg = setupSmall(t, dir, 500, 1, true)
	text, err := os.ReadFile(cfg)
	if err != nil {
		t.Fatal(err)
	}
	noCO2 := strings.Replace(string(text), "CO2 = 1e-4\n", "", 1)
	if noCO2 == string(text) {
		t.Fatalf("no CO2 line in the fit configuration:\n%s", text)
	}
	os.WriteFile(cfg, []byte(noCO2), 0o644)
	s = fitChecks(t, dir, cfg)
	if g := s.GoodnessOfFit; g == nil || g.Fits || !kinds(s)[report.CheckGoodness] {
		t.Errorf("CO2 missing from the model: goodness %+v, checks %v", g, s.Checks)
	}
}

// shrinkErrors divides the error column (the last) of an observation file
// written by simulate by f.
func shrinkErrors(t *testing.T, path string, f float64) {
	t.Helper()
	text, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSuffix(string(text), "\n"), "\n")
	for i, l := range lines {
		if l == "" || l[0] == '#' || strings.HasPrefix(l, "edge_low") {
			continue
		}
		fields := strings.Split(l, ",")
		v, err := strconv.ParseFloat(fields[len(fields)-1], 64)
		if err != nil {
			t.Fatalf("%s:%d: %v", path, i+1, err)
		}
		fields[len(fields)-1] = fmt.Sprint(v / f)
		lines[i] = strings.Join(fields, ",")
	}
	os.WriteFile(path, []byte(strings.Join(lines, "\n")+"\n"), 0o644)
}
