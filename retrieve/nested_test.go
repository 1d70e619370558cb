package retrieve

import (
	"context"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"chord/chains"
	"chord/config"
	"chord/priors"
	"chord/report"
	"chord/sampler"
)

// nestedGaussSpec samples gaussTarget as a likelihood under a uniform
// prior box, a in [-5, 5], b in [-5, 5], c in [-15, 15] (its first extra,
// the log density, stands for the log posterior).
func nestedGaussSpec(seed uint64, target sampler.Target) *RunSpec {
	box := func(lo, hi float64) sampler.Quantiler { u, _ := priors.NewUniform(lo, hi); return u }
	return &RunSpec{
		Target: target,
		Layout: chains.Layout{Nested: true, Walkers: 1, Dim: 3, NumExtra: 2, Columns: []chains.Column{
			{Name: "a", Role: chains.RoleParameter, Source: 0},
			{Name: "b", Role: chains.RoleParameter, Source: 1},
			{Name: "c", Role: chains.RoleParameter, Source: 2},
			{Name: "a_plus_b", Role: chains.RoleDerived, Source: 1},
		}, Meta: map[string]string{}},
		Seed:   seed,
		Nested: &NestedSpec{Prior: []sampler.Quantiler{box(-5, 5), box(-5, 5), box(-15, 15)}, Live: 60, Batch: 8, EvidenceTol: 0.1},
		RunID:  "test", ConfigSHA256: "digest-1",
	}
}

// gaussLnZ is ln Z of gaussTarget under nestedGaussSpec's box: the
// Gaussian integral (2 pi)^(3/2) sqrt(det C) with det C = 1 x 0.25 x 9
// (standard result; the box cuts off less than 1e-6 of it) over the
// box's volume 10 x 10 x 30.
var gaussLnZ = 1.5*math.Log(2*math.Pi) + 0.5*math.Log(2.25) - math.Log(3000)

// deadWeights reads the log weights of the dead points of the run in dir.
func deadWeights(t *testing.T, dir string) []float64 {
	t.Helper()
	c, err := chains.NewReader(filepath.Join(dir, chains.DirName), nil)
	if err != nil {
		t.Fatal(err)
	}
	defer c.Close()
	var lw []float64
	for {
		if _, err := c.Next(); err != nil {
			return lw
		}
		lw = append(lw, c.Walker(0)[0])
	}
}

func logSumExp(v []float64) float64 {
	m := math.Inf(-1)
	for _, x := range v {
		m = math.Max(m, x)
	}
	s := 0.0
	for _, x := range v {
		s += math.Exp(x - m)
	}
	return m + math.Log(s)
}

// A nested run through the run directory: stopped (a cancelled context)
// and resumed with another number of workers, it holds the dead points of
// an uninterrupted one-worker run bit for bit; its stored weights add up
// to the evidence it reports (Z = sum of w_i L_i, Skilling 2006), which
// lies within 3 of its errors of the analytic ln Z.
func TestNestedResumeSameRun(t *testing.T) {
	ref := t.TempDir()
	until := config.StopRule{UntilConverged: true}
	out, err := StartRun(context.Background(), ref, nestedGaussSpec(7, gaussTarget{}), RunOptions{Stop: until, Workers: 1, CheckpointSteps: 50})
	if err != nil {
		t.Fatal(err)
	}
	if out.Stop != sampler.StopEvidence || out.Evidence == nil || !out.Evidence.Finished {
		t.Fatalf("reference: %+v", out)
	}
	want := allRows(t, ref)
	if len(want) != out.Step {
		t.Fatalf("%d rows for %d dead points", len(want), out.Step)
	}
	e := out.Evidence
	if math.Abs(e.LogZ-gaussLnZ) > 3*e.LogZErr {
		t.Errorf("ln Z = %.3f +- %.3f, analytic %.3f", e.LogZ, e.LogZErr, gaussLnZ)
	}
	if got := logSumExp(deadWeights(t, ref)); math.Abs(got-e.LogZ) > 1e-9 {
		t.Errorf("the stored weights add up to ln Z = %.12f, the run reports %.12f", got, e.LogZ)
	}

	for _, after := range []int{30, 700} { // while evaluating the initial points; mid-run
		dir := t.TempDir()
		ctx, cancel := context.WithCancel(context.Background())
		n := 0
		spec := nestedGaussSpec(7, cancelAfter{gaussTarget{}, &n, after, cancel})
		out, err := StartRun(ctx, dir, spec, RunOptions{Stop: until, Workers: 1, CheckpointSteps: 37})
		cancel()
		if err != nil {
			t.Fatal(err)
		}
		if out.Stop != sampler.StopCanceled || out.Evidence == nil || out.Evidence.Finished {
			t.Fatalf("cancelled run: %+v", out)
		}
		if after > 60 {
			// The posterior so far: the dead points and the live points, each
			// of those with the prior mass X/N it would get as a final point.
			ck, err := ReadCheckpoint(filepath.Join(dir, CheckpointFile))
			if err != nil {
				t.Fatal(err)
			}
			st := new(sampler.NestedState)
			if err := st.UnmarshalBinary(ck.State); err != nil {
				t.Fatal(err)
			}
			post, err := nestedPosterior(filepath.Join(dir, chains.DirName), ck, 1)
			if err != nil {
				t.Fatal(err)
			}
			lw := deadWeights(t, dir)
			for _, l := range st.LogL {
				lw = append(lw, l-float64(st.Iter)/60-math.Log(60))
			}
			if z, _, _ := st.Evidence(); post.TotalSteps != ck.Step+60 || math.Abs(logSumExp(lw)-z) > 1e-9 || math.Abs(post.EffectiveSize-sampler.EffectiveSize(lw)) > 1e-9*post.EffectiveSize {
				t.Errorf("posterior of an unfinished run: %d points (want %d), weights add to %v (ln Z so far %v)", post.TotalSteps, ck.Step+60, logSumExp(lw), z)
			}
		}
		out, err = ContinueRun(context.Background(), dir, nestedGaussSpec(7, gaussTarget{}), RunOptions{Workers: 3, CheckpointSteps: 37})
		if err != nil {
			t.Fatal(err)
		}
		if out.Stop != sampler.StopEvidence || out.Evidence.LogZ != e.LogZ {
			t.Errorf("resumed: %+v, ln Z %v", out, out.Evidence)
		}
		sameRows(t, "cancelled and resumed with 3 workers", allRows(t, dir), want)
		// Resuming a finished run does nothing.
		out, err = ContinueRun(context.Background(), dir, nestedGaussSpec(7, gaussTarget{}), RunOptions{})
		if err != nil || out.Steps != 0 || out.Stop != sampler.StopEvidence {
			t.Errorf("resume of a finished run: %+v %v", out, err)
		}
	}
	// Steps do not stop a nested run; the ensemble's checkpoint is not one.
	if _, err := StartRun(context.Background(), t.TempDir(), nestedGaussSpec(7, gaussTarget{}), RunOptions{Stop: config.StopRule{Steps: 10}}); err == nil || !strings.Contains(err.Error(), "step count") {
		t.Errorf("steps accepted: %v", err)
	}
	ens := t.TempDir()
	if _, err := StartRun(context.Background(), ens, gaussSpec(8, 42, 0), RunOptions{Stop: config.StopRule{Steps: 5}, Workers: 1}); err != nil {
		t.Fatal(err)
	}
	if _, err := ContinueRun(context.Background(), ens, nestedGaussSpec(7, gaussTarget{}), RunOptions{}); err == nil || !strings.Contains(err.Error(), "method ensemble") {
		t.Errorf("nested resume of an ensemble run: %v", err)
	}
}

// The newest part of dead points damaged after the checkpoint: the run
// resumes one part earlier and ends with the same points.
func TestNestedRecoverDamagedPart(t *testing.T) {
	until := config.StopRule{UntilConverged: true}
	ref := t.TempDir()
	if _, err := StartRun(context.Background(), ref, nestedGaussSpec(3, gaussTarget{}), RunOptions{Stop: until, Workers: 1, CheckpointSteps: 40}); err != nil {
		t.Fatal(err)
	}
	want := allRows(t, ref)
	dir := t.TempDir()
	ctx, cancel := context.WithCancel(context.Background())
	n := 0
	if _, err := StartRun(ctx, dir, nestedGaussSpec(3, cancelAfter{gaussTarget{}, &n, 900, cancel}), RunOptions{Stop: until, Workers: 1, CheckpointSteps: 40}); err != nil {
		t.Fatal(err)
	}
	cancel()
	names, _ := filepath.Glob(filepath.Join(dir, chains.DirName, "part-*.parquet"))
	if len(names) < 2 {
		t.Fatalf("%d parts before the cut", len(names))
	}
	last := names[len(names)-1]
	data, err := os.ReadFile(last)
	if err != nil {
		t.Fatal(err)
	}
	os.WriteFile(last, data[:rand.New(rand.NewPCG(1, 1)).IntN(len(data))], 0o644)
	out, err := ContinueRun(context.Background(), dir, nestedGaussSpec(3, gaussTarget{}), RunOptions{Workers: 2, CheckpointSteps: 40})
	if err != nil {
		t.Fatal(err)
	}
	if !out.Recovered {
		t.Errorf("not recovered: %+v", out)
	}
	sameRows(t, "recovered", allRows(t, dir), want)
}

// writeNestedSmall writes the small scenario's observation and a nested
// retrieval configuration of it (60 live points) to dir.
func writeNestedSmall(t *testing.T, dir string) string {
	t.Helper()
	cfg := setupSmall(t, dir, 1, 9, true)
	text, err := os.ReadFile(cfg)
	if err != nil {
		t.Fatal(err)
	}
	s := string(text)
	s = s[:strings.Index(s, "[sampler]")] + "[sampler]\nmethod = \"nested\"\nlive_points = 60\nseed = 9\nworkers = 2\n"
	if err := os.WriteFile(cfg, []byte(s), 0o644); err != nil {
		t.Fatal(err)
	}
	return cfg
}

// chord fit of a nested configuration: the run directory holds the dead
// points and a report made from the equal-weight samples (ln Z in the
// summary, a corner plot, no trace plot); chord report remakes the same
// summary; ReadPosterior gives the samples the summary was made from; a
// budget stops the run resumably; --without fits the reduced model.
func TestNestedFit(t *testing.T) {
	if testing.Short() {
		t.Skip("fits the small scenario by nested sampling three times (about 10 s)")
	}
	dir := t.TempDir()
	cfg := writeNestedSmall(t, dir)
	run := filepath.Join(dir, "run")
	rep, err := Fit(context.Background(), FitOptions{ConfigPath: cfg, RunDir: run, DemoCache: testDemoCache(t)})
	if err != nil {
		t.Fatal(err)
	}
	s := rep.Summary
	if s == nil || s.Evidence == nil || !s.Evidence.Finished || s.Method != report.MethodNested || s.Evidence.LivePoints != 60 || s.Evidence.Data == "" {
		t.Fatalf("summary %+v", s)
	}
	for _, f := range []string{"summary.json", "summary.txt", "corner.png", "spectrum.png"} {
		if _, err := os.Stat(filepath.Join(run, f)); err != nil {
			t.Errorf("%s: %v", f, err)
		}
	}
	if _, err := os.Stat(filepath.Join(run, "traces.png")); err == nil {
		t.Error("a nested run has a trace plot")
	}
	if !strings.Contains(rep.SummaryText, "ln Z = ") {
		t.Errorf("summary text:\n%s", rep.SummaryText)
	}
	again, _, err := Report(run, ReportRunOptions{BurnAuto: true, DemoCache: testDemoCache(t)})
	if err != nil {
		t.Fatal(err)
	}
	if again.Evidence.LogZ != s.Evidence.LogZ || again.Parameters[0].Median != s.Parameters[0].Median || again.Samples != s.Samples {
		t.Errorf("chord report differs: %+v vs %+v", again.Parameters[0], s.Parameters[0])
	}
	if _, _, err := Report(run, ReportRunOptions{Burn: 10, DemoCache: testDemoCache(t)}); err == nil {
		t.Error("a burn-in was accepted for a nested run")
	}
	post, err := ReadPosterior(run)
	if err != nil {
		t.Fatal(err)
	}
	if len(post.Steps) != s.Samples || post.Column("log10_vmr_H2O")[0] != post.Column("log10_vmr_H2O")[0] {
		t.Errorf("posterior of %d samples, summary of %d", len(post.Steps), s.Samples)
	}

	// A budget too short to finish: resumable, the summary says so.
	short := filepath.Join(dir, "short")
	rep, err = Fit(context.Background(), FitOptions{ConfigPath: cfg, RunDir: short, DemoCache: testDemoCache(t), Stop: config.StopRule{Budget: 0.3}, CheckpointSteps: 20})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Outcome.Stop != sampler.StopBudget {
		t.Fatalf("budget run: stop %v", rep.Outcome.Stop)
	}
	// Early in a run one point carries the weight: no summary yet, or one
	// from the dead and live points that says it is not final.
	if s := rep.Summary; s == nil && !strings.Contains(rep.SummaryText, "no summary yet") || s != nil && (s.Evidence.Finished || s.Converged) {
		t.Errorf("budget run: summary %+v, text %q", s, rep.SummaryText)
	}
	rep, err = Resume(context.Background(), short, ResumeOptions{Stop: config.StopRule{UntilConverged: true}, DemoCache: testDemoCache(t)})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Summary.Evidence.LogZ != s.Evidence.LogZ {
		t.Errorf("resumed after a budget: ln Z %v, uninterrupted %v", rep.Summary.Evidence.LogZ, s.Evidence.LogZ)
	}
	sameRows(t, "budget and resume", allRows(t, short), allRows(t, run))

	// The reduced model.
	red := filepath.Join(dir, "without")
	rep, err = Fit(context.Background(), FitOptions{ConfigPath: cfg, RunDir: red, DemoCache: testDemoCache(t), Without: []string{"H2O"}})
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range rep.Summary.Parameters {
		if p.Name == "log10_vmr_H2O" {
			t.Error("H2O is free in the reduced model")
		}
	}
	if rep.Summary.Evidence.Data != s.Evidence.Data || !(rep.Summary.Evidence.LogZ < s.Evidence.LogZ) {
		t.Errorf("reduced model: ln Z %v (full %v), data %s vs %s", rep.Summary.Evidence.LogZ, s.Evidence.LogZ, rep.Summary.Evidence.Data, s.Evidence.Data)
	}
	runToml, _ := os.ReadFile(filepath.Join(red, RunFile))
	if !strings.Contains(string(runToml), `prior = "fixed"`) {
		t.Errorf("run.toml does not hold H2O fixed:\n%s", runToml)
	}
	if _, err := Fit(context.Background(), FitOptions{ConfigPath: cfg, RunDir: filepath.Join(dir, "x"), DemoCache: testDemoCache(t), Without: []string{"NH3"}}); err == nil || !strings.Contains(err.Error(), "NH3") {
		t.Errorf("without an absent gas: %v", err)
	}
	if _, err := Fit(context.Background(), FitOptions{ConfigPath: cfg, RunDir: filepath.Join(dir, "y"), DemoCache: testDemoCache(t), Stop: config.StopRule{Steps: 5}}); err == nil || !strings.Contains(err.Error(), "step count") {
		t.Errorf("steps for a nested run: %v", err)
	}
}
