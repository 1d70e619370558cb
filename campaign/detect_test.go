package campaign

import (
	"context"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"chord/config"
	"chord/internal/testenv"
	"chord/report"
	"chord/simulate"
)

// nestedSmallParameters are the free parameters of the small scenario's
// detection fits and a nested [sampler] (%d: live points).
const nestedSmallParameters = `
[[parameters]]
sets = "log10_vmr"
gas = "H2O"
prior = "uniform"
low = -10
high = -0.5
[[parameters]]
sets = "log10_vmr"
gas = "CH4"
prior = "uniform"
low = -10
high = -0.5
[[parameters]]
sets = "temperature_k"
prior = "uniform"
low = 250
high = 1000
[[parameters]]
sets = "radius_rearth"
prior = "uniform"
low = 2
high = 3
[sampler]
method = "nested"
live_points = %d
seed = 5
`

// smallDetection writes to dir the small scenario (testdata/fixtures/
// ossery-small.toml, demo opacities) with methane at the mixing ratio ch4,
// its noise-free observation at 35 ppm per bin, and a nested retrieval
// configuration of it; it returns the configuration's path.
func smallDetection(t *testing.T, dir, ch4 string, live int) string {
	t.Helper()
	truth := testenv.Fixture(t, "ossery-small.toml").Set("atmosphere.gases.CH4", ch4).Write(filepath.Join(dir, "truth.toml"))
	mc, err := config.LoadModel(truth)
	if err != nil {
		t.Fatal(err)
	}
	// The default demo cache, so that the demo tables are built once per machine.
	if err := simulate.ObserveModel(filepath.Join(dir, "obs.csv"), mc, "", nil, 35, false, 0); err != nil {
		t.Fatal(err)
	}
	return testenv.Fixture(t, "ossery-small.toml").Delete("star.name").Delete("planet.name").
		Delete("planet.radius_rearth").Delete("atmosphere.gases.H2O").Delete("atmosphere.gases.CH4").
		Delete("atmosphere.temperature.temperature_k").Delete("spectrum.bin_resolving_power").
		Append("[[observations]]\nfile = \"obs.csv\"\n" + fmt.Sprintf(nestedSmallParameters, live)).Write(filepath.Join(dir, "fit.toml"))
}

// Savage-Dickey against the evidence (the checks of issue 16), on
// noise-free observations of the small scenario at 35 ppm:
//
//   - methane weak (1.2e-5, about 2.4 sigma): the one-run Savage-Dickey
//     ln B of the full nested run and the evidence's ln B agree within
//     twice their combined error; the Savage-Dickey density ratio is
//     exactly the Bayes factor of the reduced model that holds the gas at
//     the prior edge (Dickey 1971; Trotta 2007, MNRAS 378, 72, eq. 14), so
//     the two differ only by their estimation errors;
//   - methane strong (1e-3): Savage-Dickey gives only a lower bound (no
//     samples near the edge) and the evidence a finite ln B above it.
//
// Also: a detection run again keeps its finished runs, and one asked for
// with another request in the same directory is refused.
func TestDetectSavageDickeyAgainstEvidence(t *testing.T) {
	if testing.Short() {
		t.Skip("four nested-sampling fits of the small scenario (about 40 s)")
	}
	for _, c := range []struct {
		name, ch4 string
		live      int
		strong    bool
	}{
		{"weak", "1.2e-5", 500, false},
		{"strong", "1e-3", 200, true},
	} {
		dir := t.TempDir()
		cfg := smallDetection(t, dir, c.ch4, c.live)
		out := filepath.Join(dir, "detect")
		rep, err := RunDetect(context.Background(), DetectOptions{Dir: out, ConfigPath: cfg, Gases: []string{"CH4"}})
		if err != nil {
			t.Fatal(err)
		}
		d := rep.Table.Detections[0]
		full, err := report.ReadSummary(DetectRunDir(out, ""))
		if err != nil {
			t.Fatal(err)
		}
		var sd *report.GasVerdict
		for _, p := range full.Parameters {
			if p.Gas != nil && p.Gas.Gas == "CH4" {
				sd = p.Gas
			}
		}
		t.Logf("%s: evidence ln B = %.2f ± %.2f (%.1f sigma, %s); Savage-Dickey: %s", c.name, d.LnB, d.LnBErr, d.Sigma, d.Strength, sd.Verdict)
		if !d.Finished || math.IsInf(d.LnB, 0) || math.IsNaN(d.LnB) {
			t.Fatalf("%s: %+v", c.name, d)
		}
		if !c.strong {
			if sd.SigmaIsBound || !(d.Sigma >= 2 && d.Sigma <= 3) {
				t.Errorf("weak: Savage-Dickey bound %v, evidence %.2f sigma: the case is not a 2-3 sigma one", sd.SigmaIsBound, d.Sigma)
			}
			if diff, e := math.Abs(d.LnB-float64(sd.LnB10)), math.Hypot(d.LnBErr, float64(sd.LnB10Err)); diff > 2*e {
				t.Errorf("weak: ln B %.2f (evidence) and %.2f (Savage-Dickey) differ by %.2f, more than twice their combined error %.2f", d.LnB, float64(sd.LnB10), diff, e)
			}
		} else if !sd.SigmaIsBound || !(d.LnB > float64(sd.LnB10)) || !(d.Sigma > float64(sd.Sigma)) {
			t.Errorf("strong: Savage-Dickey %+v, evidence ln B %.2f (%.1f sigma): want a finite evidence above the bound", sd, d.LnB, d.Sigma)
		}
		if c.strong {
			continue
		}
		// Run again: every run is kept, the same table.
		again, err := RunDetect(context.Background(), DetectOptions{Dir: out})
		if err != nil {
			t.Fatal(err)
		}
		if again.Table.Detections[0] != d {
			t.Errorf("run again: %+v, first %+v", again.Table.Detections[0], d)
		}
		if _, err := RunDetect(context.Background(), DetectOptions{Dir: out, ConfigPath: cfg, Gases: []string{"H2O"}}); err == nil || !strings.Contains(err.Error(), "holds a different detection") {
			t.Errorf("another request in the same directory: %v", err)
		}
		for _, f := range []string{"detection.txt", "detection.json", "detect.toml"} {
			if _, err := os.Stat(filepath.Join(out, f)); err != nil {
				t.Error(err)
			}
		}
	}
}

// Requests a detection cannot serve are errors before anything is
// written: an ensemble configuration, a gas without a free uniform
// log10 mixing ratio, a directory holding something else.
func TestDetectBadRequests(t *testing.T) {
	dir := t.TempDir()
	cfg := smallDetection(t, dir, "1e-3", 50)
	ens := filepath.Join(dir, "ensemble.toml")
	text, _ := os.ReadFile(cfg)
	s := strings.Replace(string(text), "method = \"nested\"\nlive_points = 50", "walkers = 16\nsteps = 10", 1)
	os.WriteFile(ens, []byte(s), 0o644)
	for _, c := range []struct {
		opt  DetectOptions
		want string
	}{
		{DetectOptions{ConfigPath: ens}, `method = "nested"`},
		{DetectOptions{ConfigPath: cfg, Gases: []string{"NH3"}}, "gas NH3 has no free log10 mixing ratio"},
		{DetectOptions{}, "holds no detection"},
	} {
		c.opt.Dir = filepath.Join(dir, "out")
		_, err := RunDetect(context.Background(), c.opt)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: error %v, want %q", c.opt, err, c.want)
		}
		if _, err := os.Stat(c.opt.Dir); err == nil {
			t.Errorf("%+v: %s was created", c.opt, c.opt.Dir)
		}
	}
	os.MkdirAll(filepath.Join(dir, "busy"), 0o755)
	os.WriteFile(filepath.Join(dir, "busy", "x"), nil, 0o644)
	if _, err := RunDetect(context.Background(), DetectOptions{Dir: filepath.Join(dir, "busy"), ConfigPath: cfg}); err == nil || !strings.Contains(err.Error(), "not empty") {
		t.Errorf("a busy directory: %v", err)
	}
}

// chord plan --detect: at each noise level the detection by evidence of
// each gas, in detection.txt and detection.json; on noise-free
// observations its ln B falls as the noise grows (for a Gaussian
// likelihood with the noise variance scaled by k, the log-likelihood
// ratio of the best fits scales as 1/k^2; standard result).
func TestPlanDetect(t *testing.T) {
	if testing.Short() {
		t.Skip("six nested-sampling fits of the small scenario (about 20 s)")
	}
	dir := t.TempDir()
	sc := testenv.Fixture(t, "ossery-small.toml").Delete("spectrum.bin_resolving_power").
		Append(fmt.Sprintf(nestedSmallParameters, 100)).Write(filepath.Join(dir, "scenario.toml"))
	rep, err := RunPlan(context.Background(), PlanOptions{Dir: filepath.Join(dir, "plan"), ScenarioPath: sc,
		Spec: PlanSpec{NoisePPM: []float64{35, 140}, RangeUm: [2]float64{0.6, 5.2}, ResolvingPower: 20, Detect: []string{"CH4", "H2O"}}})
	if err != nil {
		t.Fatal(err)
	}
	d := rep.Detections.Detections
	if len(d) != 4 || d[0].Label != "noise-0035ppm" || d[0].Gas != "CH4" || d[3].Label != "noise-0140ppm" || d[3].Gas != "H2O" {
		t.Fatalf("detections %+v", d)
	}
	for g := range 2 {
		if !(d[g].LnB > d[2+g].LnB) || !(d[g].LnB > 5) {
			t.Errorf("%s: ln B %.2f at 35 ppm, %.2f at 140 ppm", d[g].Gas, d[g].LnB, d[2+g].LnB)
		}
	}
	for _, f := range []string{"detection.txt", "detection.json", "noise-0035ppm/without-CH4/summary.json"} {
		if _, err := os.Stat(filepath.Join(dir, "plan", f)); err != nil {
			t.Error(err)
		}
	}
	if !strings.Contains(rep.Table, "detection by evidence") {
		t.Errorf("the plan's table lacks the detections:\n%s", rep.Table)
	}
	// An ensemble scenario cannot detect by evidence.
	ens := testenv.Fixture(t, "ossery-small.toml").Delete("spectrum.bin_resolving_power").
		Append(strings.Replace(fmt.Sprintf(nestedSmallParameters, 100), "method = \"nested\"\nlive_points = 100", "walkers = 16\nsteps = 20", 1)).Write(filepath.Join(dir, "ens.toml"))
	_, err = RunPlan(context.Background(), PlanOptions{Dir: filepath.Join(dir, "plan2"), ScenarioPath: ens,
		Spec: PlanSpec{NoisePPM: []float64{35}, RangeUm: [2]float64{0.6, 5.2}, ResolvingPower: 20, Detect: []string{"CH4"}}})
	if err == nil || !strings.Contains(err.Error(), `method = "nested"`) {
		t.Errorf("ensemble scenario with --detect: %v", err)
	}
}
