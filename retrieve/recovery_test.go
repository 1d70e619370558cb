package retrieve

import (
	"context"
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"chord/chains"
	"chord/config"
	"chord/internal/testenv"
	"chord/simulate"
)

// smallParameters are the small scenario's free parameters and sampler
// settings (%d: steps, %d: seed).
const smallParameters = `
[[observations]]
file = "obs.csv"
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
walkers = 16
steps = %d
seed = %d
workers = 2
`

// smallTruthValues are the free parameters' true values, in order.
var smallTruthValues = map[string]float64{
	"log10_vmr_H2O": math.Log10(3e-3), "log10_vmr_CH4": -3, "temperature_k": 520, "radius_rearth": 2.45,
}

// testDemoCache is the demo opacity cache the tests share (built once).
func testDemoCache(t *testing.T) string {
	t.Helper()
	cache, err := config.DemoCacheDir()
	if err != nil {
		t.Skip(err)
	}
	return cache
}

// demoProblem loads the retrieval configuration at path and its problem,
// with the demo opacity tables of the shared cache.
func demoProblem(t *testing.T, path string) (*config.Resolved, *Problem) {
	t.Helper()
	r, err := config.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	set, err := r.Config.LoadOpacity(testDemoCache(t), nil)
	if err != nil {
		t.Fatal(err)
	}
	p, err := NewProblem(r, set)
	if err != nil {
		t.Fatal(err)
	}
	return r, p
}

// chi2At returns the chi-square of p's observations at the parameters x
// and the number of bins, failing the test when the posterior rejects x.
func chi2At(t *testing.T, p *Problem, x []float64) (chi2, n float64) {
	t.Helper()
	extra := make([]float64, p.NumExtra())
	if lp := p.NewEvaluator().LogProb(x, extra); math.IsInf(lp, -1) {
		t.Fatalf("truth rejected: %v", p.Rejections())
	}
	return extra[3], float64(p.Model().OutputLen())
}

// setupSmall writes the small scenario's observation (noise seed, or
// noise-free) and its retrieval configuration to a new directory and
// returns the configuration's path.
func setupSmall(t *testing.T, dir string, steps int, seed uint64, noisy bool) string {
	t.Helper()
	truth, err := config.LoadModel(testenv.Fixture(t, "ossery-small.toml").Write(filepath.Join(dir, "truth.toml")))
	if err != nil {
		t.Fatal(err)
	}
	if err := simulate.ObserveModel(filepath.Join(dir, "obs.csv"), truth, testDemoCache(t), nil, 35, noisy, seed); err != nil {
		t.Fatal(err)
	}
	// The retrieval configuration: the truth without the values of the four
	// free parameters and without bins (the observation's are used).
	return testenv.Fixture(t, "ossery-small.toml").Delete("star.name").Delete("planet.name").
		Delete("planet.radius_rearth").Delete("atmosphere.gases.H2O").Delete("atmosphere.gases.CH4").
		Delete("atmosphere.temperature.temperature_k").Delete("spectrum.bin_resolving_power").
		Append(fmt.Sprintf(smallParameters, steps, seed)).Write(filepath.Join(dir, "fit.toml"))
}

// Injection and recovery: observations simulated from known parameters
// with the demo opacities and 35 ppm noise (three noise seeds), fitted;
// the 95% credible intervals must contain the truth for at least 90% of
// the 3 x 4 = 12 parameter fits (a calibrated posterior misses 5% on
// average: about 0.6 of 12; 90% allows one miss; fact of statistics).
// With noise-free data the medians lie within one posterior standard
// deviation of the truth (the posterior is then centred on the truth up to
// prior and sampling effects; common practice for forecasts).
func TestInjectionRecovery(t *testing.T) {
	if testing.Short() {
		t.Skip("fits several simulated observations")
	}
	const steps = 500
	inside, total := 0, 0
	for _, seed := range []uint64{1, 2, 3} {
		dir := t.TempDir()
		cfg := setupSmall(t, dir, steps, seed, true)
		rep, err := Fit(context.Background(), FitOptions{ConfigPath: cfg, RunDir: filepath.Join(dir, "run"), DemoCache: testDemoCache(t)})
		if err != nil {
			t.Fatal(err)
		}
		for _, p := range rep.Summary.Parameters {
			truth := smallTruthValues[p.Name]
			total++
			if p.P2_5 <= truth && truth <= p.P97_5 {
				inside++
			} else {
				t.Logf("seed %d: %s = %.3f outside the 95%% interval [%.3f, %.3f]", seed, p.Name, truth, p.P2_5, p.P97_5)
			}
		}
	}
	t.Logf("injection and recovery: truth inside the 95%% interval for %d of %d parameter fits", inside, total)
	if float64(inside) < 0.9*float64(total) {
		t.Errorf("truth inside the 95%% interval for %d of %d parameter fits, want at least 90%%", inside, total)
	}

	dir := t.TempDir()
	cfg := setupSmall(t, dir, steps, 4, false)
	rep, err := Fit(context.Background(), FitOptions{ConfigPath: cfg, RunDir: filepath.Join(dir, "run"), DemoCache: testDemoCache(t)})
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range rep.Summary.Parameters {
		if d := math.Abs(p.Median - smallTruthValues[p.Name]); d > p.StdDev {
			t.Errorf("noise-free: %s median %.4f, truth %.4f, posterior sd %.4f", p.Name, p.Median, smallTruthValues[p.Name], p.StdDev)
		}
	}
	// The chain files read back with the independent reader: walkers x
	// steps rows, the configuration's parameter names as columns.
	cols, rows := testenv.ParquetRows(t, filepath.Join(dir, "run", chains.DirName, "part-*.parquet"))
	if len(rows) != 16*steps {
		t.Errorf("%d rows, want 16 x %d", len(rows), steps)
	}
	want := "step,walker,log_posterior,log_likelihood,log10_vmr_H2O,log10_vmr_CH4,temperature_k,radius_rearth,mean_molecular_weight,balance_vmr,chi_square_fitted"
	if got := strings.Join(cols, ","); got != want {
		t.Errorf("columns %s, want %s", got, want)
	}
}

// Bad inputs of runs: a missing configuration or observation file, a
// non-empty run directory, a run whose observation changed (resume refuses
// it, naming the file), a resume of a directory that is no run.
func TestRunBadInputs(t *testing.T) {
	if testing.Short() {
		t.Skip("builds or loads the demo opacities")
	}
	ctx := context.Background()
	dir := t.TempDir()
	if _, err := Fit(ctx, FitOptions{ConfigPath: filepath.Join(dir, "nope.toml"), RunDir: filepath.Join(dir, "run")}); err == nil || !strings.Contains(err.Error(), "nope.toml") {
		t.Errorf("missing configuration: %v", err)
	}
	cfg := setupSmall(t, dir, 12, 1, true)
	obs := filepath.Join(dir, "obs.csv")
	data, _ := os.ReadFile(obs)
	os.Rename(obs, obs+".away")
	if _, err := Fit(ctx, FitOptions{ConfigPath: cfg, RunDir: filepath.Join(dir, "run")}); err == nil || !strings.Contains(err.Error(), "obs.csv") {
		t.Errorf("missing observation: %v", err)
	}
	os.Rename(obs+".away", obs)
	runDir := filepath.Join(dir, "run")
	os.MkdirAll(runDir, 0o755)
	os.WriteFile(filepath.Join(runDir, "notes.txt"), []byte("mine"), 0o644)
	if _, err := Fit(ctx, FitOptions{ConfigPath: cfg, RunDir: runDir, DemoCache: testDemoCache(t)}); !errors.As(err, new(*NotEmptyError)) || !errors.Is(err, fs.ErrExist) {
		t.Errorf("non-empty run directory: %v", err)
	}
	// A directory that is not a chord run: --force is refused too.
	if _, err := Fit(ctx, FitOptions{ConfigPath: cfg, RunDir: runDir, Force: true, DemoCache: testDemoCache(t)}); !errors.As(err, new(*NotRunError)) {
		t.Errorf("--force in a directory that is not a run: %v", err)
	}
	os.Remove(filepath.Join(runDir, "notes.txt"))
	if _, err := Fit(ctx, FitOptions{ConfigPath: cfg, RunDir: runDir, DemoCache: testDemoCache(t), Stop: config.StopRule{Steps: 3}}); err != nil {
		t.Fatal(err)
	}
	// In a chord run, --force replaces chord's entries and no other.
	os.WriteFile(filepath.Join(runDir, "notes.txt"), []byte("mine"), 0o644)
	rep, err := Fit(ctx, FitOptions{ConfigPath: cfg, RunDir: runDir, Force: true, DemoCache: testDemoCache(t), Stop: config.StopRule{Steps: 6}})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Outcome.Step != 6 {
		t.Errorf("--steps 6 override: %d steps", rep.Outcome.Step)
	}
	if _, err := os.Stat(filepath.Join(runDir, "notes.txt")); err != nil {
		t.Errorf("--force removed a file that is not chord's: %v", err)
	}
	// --force with a broken configuration keeps the run it would replace.
	broken := filepath.Join(dir, "broken.toml")
	text0, _ := os.ReadFile(cfg)
	os.WriteFile(broken, append(text0, []byte("\n[extra]\nkey = 1\n")...), 0o644)
	if _, err := Fit(ctx, FitOptions{ConfigPath: broken, RunDir: runDir, Force: true, DemoCache: testDemoCache(t)}); err == nil || !strings.Contains(err.Error(), "extra") {
		t.Errorf("broken configuration: %v", err)
	}
	if _, err := os.Stat(filepath.Join(runDir, CheckpointFile)); err != nil {
		t.Errorf("a failed --force fit removed the old run: %v", err)
	}
	// The run's copy of the observation changes: resume refuses, naming
	// it. (The original file is no longer the run's: the run uses its
	// copy, inputs/obs.csv.)
	own := filepath.Join(runDir, InputsDir, "obs.csv")
	os.WriteFile(own, append(data, []byte("# edited\n")...), 0o644)
	if _, err := Resume(ctx, runDir, ResumeOptions{Stop: config.StopRule{Steps: 10}, DemoCache: testDemoCache(t)}); err == nil || !strings.Contains(err.Error(), "obs.csv changed since the run started") {
		t.Errorf("changed observation: %v", err)
	}
	os.WriteFile(own, data, 0o644)
	// run.toml edited (the configuration no longer matches the checkpoint).
	rt := filepath.Join(runDir, RunFile)
	text, _ := os.ReadFile(rt)
	os.WriteFile(rt, []byte(strings.Replace(string(text), "low = 250.0", "low = 260.0", 1)), 0o644)
	if _, err := Resume(ctx, runDir, ResumeOptions{Stop: config.StopRule{Steps: 10}, DemoCache: testDemoCache(t)}); err == nil || !strings.Contains(err.Error(), "changed since the run started") {
		t.Errorf("edited run.toml: %v", err)
	}
	os.WriteFile(rt, text, 0o644)
	if rep, err := Resume(ctx, runDir, ResumeOptions{Stop: config.StopRule{Steps: 10}, DemoCache: testDemoCache(t)}); err != nil || rep.Outcome.Step != 10 {
		t.Errorf("resume after restoring: %v", err)
	}
	if _, err := Resume(ctx, dir, ResumeOptions{}); err == nil || !strings.Contains(err.Error(), "not a run directory") {
		t.Errorf("resume of a non-run: %v", err)
	}
}
