package retrieve

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"chord/config"
)

// fitGood fits testdata/cfg/good.toml (grey opacity, no tables) for steps
// steps into dir/run, its observation file (testdata/obs/wide.csv) copied
// into dir/data; it returns the run directory and the observation's text.
func fitGood(t *testing.T, dir string, steps int) (string, []byte) {
	t.Helper()
	cfgText, err := os.ReadFile(filepath.Join("..", "testdata", "cfg", "good.toml"))
	if err != nil {
		t.Fatal(err)
	}
	obsText, err := os.ReadFile(filepath.Join("..", "testdata", "obs", "wide.csv"))
	if err != nil {
		t.Fatal(err)
	}
	cfg := filepath.Join(dir, "fit.toml")
	os.WriteFile(cfg, []byte(strings.Replace(string(cfgText), "../obs/wide.csv", "data/wide.csv", 1)), 0o644)
	os.MkdirAll(filepath.Join(dir, "data"), 0o755)
	os.WriteFile(filepath.Join(dir, "data", "wide.csv"), obsText, 0o644)
	run := filepath.Join(dir, "run")
	if _, err := Fit(context.Background(), FitOptions{ConfigPath: cfg, RunDir: run, Stop: config.StopRule{Steps: steps}, CheckpointSteps: 20}); err != nil {
		t.Fatal(err)
	}
	return run, obsText
}

// A run travels: its observation files are copied into it (inputs/) and
// run.toml names them relative to the run directory, so a run moved to
// another path, with the configuration and observation files it was made
// from gone (a run copied from a cluster to a laptop), is reported and
// resumed. Its digests, not its paths, decide whether it may continue: a
// changed copy is refused, naming the file.
func TestMovedRunReportsAndResumes(t *testing.T) {
	src := t.TempDir()
	ctx := context.Background()
	run, obsText := fitGood(t, src, 60)
	runTOML, _ := os.ReadFile(filepath.Join(run, RunFile))
	if !strings.Contains(string(runTOML), `file = "inputs/wide.csv"`) || strings.Contains(string(runTOML), filepath.Join(src, "data")) {
		t.Errorf("run.toml does not name the copy of the observations relative to the run:\n%s", runTOML)
	}

	// Move the run away and remove everything it was made from.
	dst := filepath.Join(t.TempDir(), "laptop", "run")
	os.MkdirAll(filepath.Dir(dst), 0o755)
	if err := os.Rename(run, dst); err != nil {
		t.Fatal(err)
	}
	if err := os.RemoveAll(src); err != nil {
		t.Fatal(err)
	}
	s, _, err := Report(dst, ReportRunOptions{})
	if err != nil {
		t.Fatalf("report of the moved run: %v", err)
	}
	if s.Steps != 60 {
		t.Errorf("report of the moved run: %d steps, want 60", s.Steps)
	}
	rep, err := Resume(ctx, dst, ResumeOptions{Stop: config.StopRule{Steps: 80}, CheckpointSteps: 20})
	if err != nil {
		t.Fatalf("resume of the moved run: %v", err)
	}
	if rep.Summary == nil || rep.Summary.Steps != 80 {
		t.Errorf("resume of the moved run: summary %+v, want 80 steps", rep.Summary)
	}

	// A changed copy is refused by its digest.
	copyPath := filepath.Join(dst, InputsDir, "wide.csv")
	os.WriteFile(copyPath, append(obsText, []byte("# edited\n")...), 0o644)
	_, err = Resume(ctx, dst, ResumeOptions{Stop: config.StopRule{Steps: 100}})
	if err == nil || !strings.Contains(err.Error(), "changed since the run started") || !strings.Contains(err.Error(), "wide.csv") {
		t.Errorf("resume with a changed copy: %v", err)
	}
}
