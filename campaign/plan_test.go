package campaign

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"chord/config"
	"chord/internal/testenv"
	"chord/report"
	"chord/retrieve"
	"chord/simulate"
)

// rayleighScenario is the sub-neptune.toml fixture: a clear H2/He
// atmosphere whose Rayleigh slope (-4 H per e-fold of wavelength;
// Lecavelier des Etangs et al. 2008) fixes the temperature and whose level
// fixes the radius, so both parameters are well constrained and nearly
// linear in the data at tens of ppm.
func rayleighScenario(t *testing.T, walkers, steps int) string {
	return testenv.Fixture(t, "sub-neptune.toml").Set("sampler.seed", "3").
		Set("sampler.walkers", itoa(walkers)).Set("sampler.steps", itoa(steps)).String()
}

func itoa(n int) string { return strconv.Itoa(n) }

// Doubling the noise doubles the 68% width of a well-constrained
// parameter: in the linear-Gaussian regime the posterior covariance is
// (A^T N^-1 A)^-1, proportional to the noise variance (standard result).
// Noise-free observations at 20 and 40 ppm, fixed seeds. Tolerance 15%:
// the 68% width from n effective samples has a relative standard error of
// about 0.96/sqrt(n) for a Gaussian (asymptotic variance of sample
// quantiles), 3.4% at the ~800 effective samples of these chains, so 4.8%
// for the ratio of two runs; 15% is three of those.
func TestPlanWidthsScaleWithNoise(t *testing.T) {
	if testing.Short() {
		t.Skip("fits two small retrievals (a few seconds)")
	}
	dir := t.TempDir()
	sc := filepath.Join(dir, "scenario.toml")
	if err := os.WriteFile(sc, []byte(rayleighScenario(t, 16, 1500)), 0o644); err != nil {
		t.Fatal(err)
	}
	plan := filepath.Join(dir, "plan")
	rep, err := RunPlan(context.Background(), PlanOptions{Dir: plan, ScenarioPath: sc, Spec: PlanSpec{NoisePPM: []float64{20, 40}}})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Interrupted || rep.Comparison == nil {
		t.Fatalf("plan did not finish: %+v", rep)
	}
	for _, name := range []string{"radius_rearth", "temperature_k"} {
		p := rep.Comparison.Parameter(name)
		if p == nil {
			t.Fatalf("no %s in the comparison", name)
		}
		if r := p.Width[1].Ratio68; r < 1.7 || r > 2.3 {
			t.Errorf("%s: 68%% width ratio %.3f for twice the noise, want 2 within 15%%", name, r)
		}
	}
	if n := rep.Comparison.Runs[1].NoisePPM; n != 40 {
		t.Errorf("noise level of the second run %g, want 40", n)
	}
	// The scenario is the truth of each level's report (retrieve.ReadTruth).
	truth, err := retrieve.ReadTruth(filepath.Join(plan, "noise-0040ppm", "run"))
	if err != nil || len(truth) != 2 {
		t.Errorf("truth of a level: %v %v, want the 2 free parameters' true values", truth, err)
	}
	for _, f := range []string{"comparison.txt", "comparison.json", "widths.png", PlanFile, "scenario.toml", "noise-0020ppm/observation.csv", "noise-0040ppm/run/summary.json", "noise-0040ppm/run/temperature.png"} {
		if _, err := os.Stat(filepath.Join(plan, f)); err != nil {
			t.Errorf("plan lacks %s: %v", f, err)
		}
	}

	// chord compare on the plan's run directories reads the noise from
	// the runs' observations; a run with another parameter set has its
	// extra parameter dropped, by name.
	runs := []string{filepath.Join(plan, "noise-0020ppm", "run"), filepath.Join(plan, "noise-0040ppm", "run")}
	c, err := CompareDirs(runs)
	if err != nil {
		t.Fatal(err)
	}
	if c.Runs[0].NoisePPM != 20 || c.Runs[1].NoisePPM != 40 || c.Parameter("temperature_k").Width[1].Ratio68 != rep.Comparison.Parameter("temperature_k").Width[1].Ratio68 {
		t.Fatalf("CompareDirs disagrees with the plan: %+v", c.Runs)
	}
	odd := filepath.Join(dir, "odd-run")
	if err := os.CopyFS(odd, os.DirFS(runs[1])); err != nil {
		t.Fatal(err)
	}
	s, err := report.ReadSummary(odd)
	if err != nil {
		t.Fatal(err)
	}
	s.Parameters = s.Parameters[:1] // radius only
	var b bytes.Buffer
	if err := s.WriteJSON(&b); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(odd, "summary.json"), b.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	c, err = CompareDirs([]string{runs[0], odd})
	if err != nil {
		t.Fatal(err)
	}
	if len(c.Parameters) != 1 || len(c.Dropped) != 1 || c.Dropped[0].Name != "temperature_k" {
		t.Fatalf("parameters %d, dropped %+v", len(c.Parameters), c.Dropped)
	}
	if _, err := CompareDirs([]string{runs[0], runs[0]}); err == nil || !strings.Contains(err.Error(), "given twice") {
		t.Errorf("same run twice: %v", err)
	}
	if _, err := CompareDirs([]string{dir}); err == nil || !strings.Contains(err.Error(), "summary.json") {
		t.Errorf("not a run directory: %v", err)
	}
	// A plan's run is a normal run directory: chord resume extends it.
	r, err := retrieve.Resume(context.Background(), runs[0], retrieve.ResumeOptions{Stop: config.StopRule{Steps: 1600}})
	if err != nil {
		t.Fatal(err)
	}
	if r.Summary == nil || r.Summary.Steps != 1600 {
		t.Fatalf("resumed plan run: %+v", r.Outcome)
	}
}

// cancelOnProgress cancels a context at the first progress line after the
// n-th "chord plan: fitting" message: the middle of the n-th fit of a plan;
// with n = 0 (a grid's log has no such message), the first progress line.
type cancelOnProgress struct {
	mu      sync.Mutex
	n, seen int
	cancel  context.CancelFunc
	log     bytes.Buffer
}

func (c *cancelOnProgress) Write(p []byte) (int, error) {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.log.Write(p)
	s := string(p)
	if strings.Contains(s, "chord plan: fitting") {
		c.seen++
	} else if c.seen == c.n && strings.Contains(s, "step ") {
		c.cancel()
	}
	return len(p), nil
}

// A plan stopped in its second fit resumes there: the first fit is kept,
// the second resumed from its checkpoint to its full length, and the
// comparison is written.
func TestPlanResume(t *testing.T) {
	if testing.Short() {
		t.Skip("fits small retrievals")
	}
	dir := t.TempDir()
	sc := filepath.Join(dir, "scenario.toml")
	if err := os.WriteFile(sc, []byte(rayleighScenario(t, 8, 400)), 0o644); err != nil {
		t.Fatal(err)
	}
	plan := filepath.Join(dir, "plan")
	ctx, cancel := context.WithCancel(context.Background())
	w := &cancelOnProgress{n: 2, cancel: cancel}
	spec := PlanSpec{Transits: []int{1, 4}, SingleNoisePPM: 40}
	rep, err := RunPlan(ctx, PlanOptions{Dir: plan, ScenarioPath: sc, Spec: spec, Progress: retrieve.Progress{Writer: w, LogInterval: time.Millisecond}})
	cancel()
	if err != nil {
		t.Fatal(err)
	}
	if !rep.Interrupted {
		t.Fatalf("plan not interrupted; log:\n%s", w.log.String())
	}
	if _, err := os.Stat(filepath.Join(plan, "transits-0004", "run", retrieve.CheckpointFile)); err != nil {
		t.Fatalf("no checkpoint of the interrupted fit: %v", err)
	}
	// A different request on the same directory is refused.
	other := spec
	other.Transits = []int{1, 9}
	if _, err := RunPlan(context.Background(), PlanOptions{Dir: plan, ScenarioPath: sc, Spec: other}); err == nil || !strings.Contains(err.Error(), "holds a different plan") {
		t.Fatalf("different plan accepted: %v", err)
	}
	var log bytes.Buffer
	rep, err = RunPlan(context.Background(), PlanOptions{Dir: plan, Log: &log})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Interrupted || rep.Comparison == nil {
		t.Fatalf("resumed plan did not finish")
	}
	if !strings.Contains(log.String(), "transits-0001/run is done; kept") || !strings.Contains(log.String(), "resuming") {
		t.Errorf("resume log:\n%s", log.String())
	}
	s, err := report.ReadSummary(filepath.Join(plan, "transits-0004", "run"))
	if err != nil {
		t.Fatal(err)
	}
	if s.Steps != 400 {
		t.Errorf("resumed fit has %d steps, want 400", s.Steps)
	}
	// 40 ppm for one transit, 20 ppm for four (1/sqrt(N); fact of the trade).
	if n := rep.Comparison.Runs[1].NoisePPM; n != 20 {
		t.Errorf("noise of 4 transits %g ppm, want 20", n)
	}
}

func TestPlanBadInput(t *testing.T) {
	dir := t.TempDir()
	sc := filepath.Join(dir, "scenario.toml")
	if err := os.WriteFile(sc, []byte(rayleighScenario(t, 8, 50)), 0o644); err != nil {
		t.Fatal(err)
	}
	bad := filepath.Join(dir, "bad.toml")
	if err := os.WriteFile(bad, []byte(testenv.Fixture(t, "sub-neptune.toml").Set("planet.orbit.period_days", "3").String()), 0o644); err != nil {
		t.Fatal(err)
	}
	for i, c := range []struct {
		scenario string
		spec     PlanSpec
		want     string
	}{
		{sc, PlanSpec{NoisePPM: []float64{30, 0}}, "noise level 0 ppm"},
		{sc, PlanSpec{NoisePPM: []float64{-30}}, "must be positive"},
		{sc, PlanSpec{}, "give the noise levels"},
		{sc, PlanSpec{NoisePPM: []float64{30}, Transits: []int{1}}, "not both"},
		{sc, PlanSpec{Transits: []int{1, 4}}, "single-transit noise"},
		{sc, PlanSpec{Transits: []int{0}, SingleNoisePPM: 30}, "0 transits"},
		{sc, PlanSpec{NoisePPM: []float64{30, 30}}, "given twice"},
		{bad, PlanSpec{NoisePPM: []float64{30}}, "planet.orbit: unknown key"},
		{"", PlanSpec{}, "holds no plan"},
	} {
		p := filepath.Join(dir, "plan"+itoa(i))
		if _, err := RunPlan(context.Background(), PlanOptions{Dir: p, ScenarioPath: c.scenario, Spec: c.spec}); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("case %d: %v, want %q", i, err, c.want)
		}
		if ents, _ := os.ReadDir(p); len(ents) > 0 {
			t.Errorf("case %d: a refused plan left files in %s", i, p)
		}
	}
	if _, err := RunPlan(context.Background(), PlanOptions{Dir: filepath.Join(dir, "both"), ScenarioPath: sc, Demo: true, Spec: PlanSpec{NoisePPM: []float64{30}}}); err == nil || !strings.Contains(err.Error(), "both given") {
		t.Errorf("scenario and demo: %v", err)
	}
	// A non-empty directory that is not a plan is refused.
	if _, err := RunPlan(context.Background(), PlanOptions{Dir: dir, ScenarioPath: sc, Spec: PlanSpec{NoisePPM: []float64{30}}}); err == nil || !strings.Contains(err.Error(), "not empty") {
		t.Errorf("non-empty directory: %v", err)
	}
}

// The demo's scenario is a scenario like any other: it has bins, and its
// TOML text (a plan's copy) loads back with the same parameters.
func TestDemoScenario(t *testing.T) {
	sc, err := DemoScenario()
	if err != nil {
		t.Fatal(err)
	}
	b, err := sc.Bins()
	if err != nil || b == nil || b.Len() < 10 {
		t.Fatalf("demo bins %v %v", b, err)
	}
	text, err := scenarioText(sc)
	if err != nil {
		t.Fatal(err)
	}
	p := filepath.Join(t.TempDir(), "demo.toml")
	if err := os.WriteFile(p, text, 0o644); err != nil {
		t.Fatal(err)
	}
	back, err := simulate.LoadScenario(p)
	if err != nil {
		t.Fatal(err)
	}
	if len(back.Config.Parameters) != len(sc.Config.Parameters) || len(back.Config.Parameters) == 0 || back.Config.Atmosphere.Gases["CH4"] != 1e-3 {
		t.Fatalf("demo scenario did not round-trip: %d parameters", len(back.Config.Parameters))
	}
	if bb, _ := back.Bins(); bb == nil || bb.Len() != b.Len() {
		t.Fatal("bins lost in the copy")
	}
}

// detectionScenario: an H2/He atmosphere with demo opacities, water
// injected strongly (1e-3) and ammonia not at all; both fitted with priors
// uniform in log10 from 1e-10.
const detectionScenario = `
[star]
radius_rsun = 0.45
[planet]
name = "Test Planet"
radius_rearth = 2.5
mass_mearth = 7
[atmosphere]
top_pressure_bar = 1e-6
bottom_pressure_bar = 10
layers = 30
balance_gas = "H2+He"
[atmosphere.gases]
H2O = 1e-3
[atmosphere.temperature]
profile = "isothermal"
temperature_k = 500
[opacity]
demo = true
cia = ["H2-H2", "H2-He"]
rayleigh = ["H2", "He"]
[spectrum]
wavelength_min_um = 1.0
wavelength_max_um = 5.0
resolving_power = 300
bin_resolving_power = 40
[[parameters]]
sets = "radius_rearth"
prior = "uniform"
low = 2
high = 3
[[parameters]]
sets = "log10_vmr"
gas = "H2O"
prior = "uniform"
low = -10
high = -1
[[parameters]]
sets = "log10_vmr"
gas = "NH3"
prior = "uniform"
low = -10
high = -1
[sampler]
walkers = 16
seed = 11
steps = 1800
`

// On demo opacities, a gas injected strongly is detected and a gas not
// injected is an upper limit (the Savage-Dickey verdicts of the summary).
func TestPlanDetectionOnDemoOpacities(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the demo opacities and fits a small retrieval")
	}
	dir := t.TempDir()
	sc := filepath.Join(dir, "scenario.toml")
	if err := os.WriteFile(sc, []byte(detectionScenario), 0o644); err != nil {
		t.Fatal(err)
	}
	// The default demo cache (config.DemoCacheDir), shared with the other
	// tests, so that the demo tables are built once per machine.
	rep, err := RunPlan(context.Background(), PlanOptions{Dir: filepath.Join(dir, "plan"), ScenarioPath: sc,
		Spec: PlanSpec{NoisePPM: []float64{30}}})
	if err != nil {
		t.Fatal(err)
	}
	s := rep.Levels[0].Report.Summary
	verdict := map[string]*report.GasVerdict{}
	for _, p := range s.Parameters {
		if p.Gas != nil {
			verdict[p.Gas.Gas] = p.Gas
		}
	}
	if v := verdict["H2O"]; v == nil || v.Class != report.Detected {
		t.Errorf("H2O injected at 1e-3: %+v", v)
	}
	if v := verdict["NH3"]; v == nil || v.Class != report.UpperLimit {
		t.Errorf("NH3 not injected: %+v", v)
	}
	t.Logf("H2O: %s; NH3: %s", verdict["H2O"].Verdict, verdict["NH3"].Verdict)
}
