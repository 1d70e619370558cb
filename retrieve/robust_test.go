package retrieve

import (
	"context"
	"errors"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"chord/chains"
	"chord/config"
	"chord/sampler"
)

// Issue 12, case 3: a run that stopped converged is left as it is by any
// number of resumes under its own rule (before, each resume added a few
// hundred steps, each "stopped: converged"); a new rule (a step count)
// extends it, and the extension is itself idempotent.
func TestResumeConvergedIdempotent(t *testing.T) {
	dir := t.TempDir()
	ctx := context.Background()
	conv := config.StopRule{UntilConverged: true}
	out, err := StartRun(ctx, dir, gaussSpec(8, 42, 0), RunOptions{Stop: conv, Workers: 1, CheckpointSteps: 50})
	if err != nil {
		t.Fatal(err)
	}
	if out.Stop != sampler.StopConverged {
		t.Fatalf("the reference run stopped by %v", out.Stop)
	}
	want := allRows(t, dir)
	for i, stop := range []config.StopRule{{}, {}, conv, {}} {
		out, err := ContinueRun(ctx, dir, gaussSpec(8, 42, 0), RunOptions{Stop: stop, Workers: 2})
		if err != nil {
			t.Fatal(err)
		}
		if !out.Met || out.Steps != 0 || out.Stop != sampler.StopConverged || out.Step*8 != len(want) {
			t.Errorf("resume %d of a converged run: %+v", i, out)
		}
		sameRows(t, "converged run resumed", allRows(t, dir), want)
	}
	n := len(want) / 8
	for i := range 2 {
		out, err = ContinueRun(ctx, dir, gaussSpec(8, 42, 0), RunOptions{Stop: config.StopRule{Steps: n + 30}, Workers: 1})
		if err != nil {
			t.Fatal(err)
		}
		if got := allRows(t, dir); len(got) != 8*(n+30) || out.Met != (i == 1) {
			t.Errorf("extension %d to %d steps: %d rows, %+v", i, n+30, len(got), out)
		}
	}
	// The rule given last is the run's: a plain resume leaves it.
	if out, err = ContinueRun(ctx, dir, gaussSpec(8, 42, 0), RunOptions{}); err != nil || !out.Met || out.Stop != sampler.StopMaxSteps {
		t.Errorf("resume after the extension: %+v %v", out, err)
	}
}

// "Also" of issue 12: a resume keeps the run's own checkpoint interval
// (here 7 steps) unless told another; parts end where checkpoints were.
func TestResumeKeepsCheckpointInterval(t *testing.T) {
	dir := t.TempDir()
	ctx, cancel := context.WithCancel(context.Background())
	spec := gaussSpec(8, 42, 0)
	n := 0
	spec.Target = cancelAfter{gaussTarget{}, &n, 8 * 17, cancel}
	if _, err := StartRun(ctx, dir, spec, RunOptions{Stop: config.StopRule{Steps: 60}, Workers: 1, CheckpointSteps: 7}); err != nil {
		t.Fatal(err)
	}
	if _, err := ContinueRun(context.Background(), dir, gaussSpec(8, 42, 0), RunOptions{Workers: 1}); err != nil {
		t.Fatal(err)
	}
	ck, err := ReadCheckpoint(filepath.Join(dir, CheckpointFile))
	if err != nil {
		t.Fatal(err)
	}
	if ck.CheckpointSteps != 7 || ck.Step != 60 {
		t.Fatalf("checkpoint: interval %d, step %d", ck.CheckpointSteps, ck.Step)
	}
	// The interrupted session's last part ends at its interruption (step
	// 17); the resumed session's parts end every 7 steps, then at 60.
	resumed := 0
	for _, p := range ck.Parts[:len(ck.Parts)-1] {
		if p.FirstStep <= 17 {
			continue
		}
		resumed++
		if p.LastStep%7 != 0 {
			t.Errorf("part %s ends at step %d, not at a checkpoint every 7 steps (%v)", p.Name, p.LastStep, ck.Parts)
		}
	}
	if resumed != 6 { // 18-21, 22-28, ..., 50-56
		t.Errorf("%d parts before the last in the resumed session, want 6: %v", resumed, ck.Parts)
	}
}

// Issue 12, case 6: a start interrupted while the initial walkers are
// made writes no checkpoint and no chain and says so (BeforeStart); case
// 7: a start that fails says "initial walkers:" once.
func TestStartInterruptedAndFailed(t *testing.T) {
	dir := t.TempDir()
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	out, err := StartRun(ctx, dir, gaussSpec(8, 42, 0), RunOptions{Stop: config.StopRule{Steps: 10}, Workers: 1})
	if err != nil || !out.BeforeStart || out.Stop != sampler.StopCanceled {
		t.Fatalf("cancelled start: %+v %v", out, err)
	}
	if ents, _ := os.ReadDir(dir); len(ents) != 0 {
		t.Errorf("a cancelled start wrote %v", ents)
	}
	spec := gaussSpec(8, 42, 0)
	noDraw := errors.New("no prior draw in 10000 tries gives a valid atmosphere")
	spec.Init = func(ctx context.Context, workers int) (*sampler.State, error) {
		_, _, err := sampler.StartBall(ctx, spec.Target, func([]float64, *rand.Rand) error { return noDraw }, []float64{1, 1, 1}, sampler.StartSettings{Walkers: 8, Seed: 42})
		return nil, err
	}
	_, err = StartRun(context.Background(), t.TempDir(), spec, RunOptions{Stop: config.StopRule{Steps: 10}})
	if !errors.Is(err, noDraw) || strings.Count(err.Error(), "initial walkers") != 1 {
		t.Errorf("failed start: %v", err)
	}
}

// Issue 12, case 2 (the part of resume that report shares): a checkpoint
// copied from another run is refused, naming both runs.
func TestCheckpointOfAnotherRun(t *testing.T) {
	a, b := t.TempDir(), t.TempDir()
	ctx := context.Background()
	for _, d := range []string{a, b} {
		spec := gaussSpec(8, 42, 0)
		spec.RunID = filepath.Base(d)
		if _, err := StartRun(ctx, d, spec, RunOptions{Stop: config.StopRule{Steps: 20}, Workers: 1, CheckpointSteps: 10}); err != nil {
			t.Fatal(err)
		}
	}
	data, _ := os.ReadFile(filepath.Join(b, CheckpointFile))
	os.WriteFile(filepath.Join(a, CheckpointFile), data, 0o644)
	spec := gaussSpec(8, 42, 0)
	spec.RunID = filepath.Base(a)
	_, err := ContinueRun(ctx, a, spec, RunOptions{Stop: config.StopRule{Steps: 30}})
	if err == nil || !strings.Contains(err.Error(), "the checkpoint belongs to run "+filepath.Base(b)+", run.toml to run "+filepath.Base(a)) {
		t.Errorf("checkpoint of another run: %v", err)
	}
	if _, err := os.Stat(filepath.Join(a, chains.DirName, "part-000002.parquet")); err != nil {
		t.Errorf("the refused resume touched the chain: %v", err)
	}
}
