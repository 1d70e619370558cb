package campaign

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"testing"

	"chord/config"
	"chord/retrieve"
	"chord/simulate"
)

// The demo's files: the observation it simulates and the configuration it
// leaves are accepted as they are by the configuration loader (what chord
// fit -c does), and at the truth the chi-square of the noisy observation is
// N +- 5 sqrt(2N) (chi-square distribution with N = 86 degrees of freedom,
// fact of statistics; the demo's seed gives 86.4).
func TestDemoFiles(t *testing.T) {
	if testing.Short() {
		t.Skip("builds or loads the demo opacities")
	}
	dir := t.TempDir()
	truth, err := DemoTruth()
	if err != nil {
		t.Fatal(err)
	}
	cache, err := config.DemoCacheDir()
	if err != nil {
		t.Skip(err)
	}
	if err := simulate.ObserveModel(filepath.Join(dir, DemoObservationFile), truth, cache, nil, DemoNoisePPM, true, DemoNoiseSeed); err != nil {
		t.Fatal(err)
	}
	text, err := demoFiles.ReadFile("testdata/demo/" + DemoConfigFile)
	if err != nil {
		t.Fatal(err)
	}
	cfg := filepath.Join(dir, DemoConfigFile)
	os.WriteFile(cfg, text, 0o644)
	r, err := config.Load(cfg)
	if err != nil {
		t.Fatal(err)
	}
	set, err := r.Config.LoadOpacity(cache, nil)
	if err != nil {
		t.Fatal(err)
	}
	p, err := retrieve.NewProblem(r, set)
	if err != nil {
		t.Fatal(err)
	}
	x := []float64{math.Log10(3e-3), -3, -4, 520, 2.45, 2} // ossery-b-truth.toml
	extra := make([]float64, p.NumExtra())
	if lp := p.NewEvaluator().LogProb(x, extra); math.IsInf(lp, -1) {
		t.Fatalf("truth rejected: %v", p.Rejections())
	}
	if chi2, n := extra[3], float64(p.Model().OutputLen()); n != 85 || math.Abs(chi2-n) > 5*math.Sqrt(2*n) {
		t.Errorf("chi-square at the truth %.1f for %g bins", chi2, n)
	}
}

// TestDemoFitChecks: the demo, a model fitted to data simulated from it,
// is a good fit: no fit check fires (goodness of fit, prior edges, walker
// modes, table coverage), and its chi-square p-value is above the
// threshold.
func TestDemoFitChecks(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the demo fit")
	}
	cache, err := config.DemoCacheDir()
	if err != nil {
		t.Skip(err)
	}
	rep, err := Demo(context.Background(), DemoOptions{Dir: t.TempDir(), DemoCache: cache})
	if err != nil {
		t.Fatal(err)
	}
	s := rep.Summary
	if s == nil || s.GoodnessOfFit == nil || !s.GoodnessOfFit.Fits || len(s.Checks) != 0 {
		t.Errorf("the demo: goodness %+v, checks %v", s.GoodnessOfFit, s.Checks)
	}
}
