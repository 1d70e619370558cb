package campaign

import (
	"bytes"
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"chord/retrieve"
)

// Issue 12, case 4: a plan started with a relative -o and stopped in its
// second level, then moved and continued by its new absolute path with
// the scenario named another way, carries on where it stopped (before,
// observation files embedding the path as typed made it refuse). A real
// difference is named: the setting that differs, or the line of an
// observation.
func TestPlanRetypedAndMoved(t *testing.T) {
	if testing.Short() {
		t.Skip("fits small retrievals")
	}
	dir := t.TempDir()
	scenario := rayleighScenario(t, 8, 120)
	t.Chdir(dir)
	if err := os.WriteFile("scenario.toml", []byte(scenario), 0o644); err != nil {
		t.Fatal(err)
	}
	spec := PlanSpec{NoisePPM: []float64{30, 60}}
	ctx, cancel := context.WithCancel(context.Background())
	w := &cancelOnProgress{n: 2, cancel: cancel}
	rep, err := RunPlan(ctx, PlanOptions{Dir: "plan-ref", ScenarioPath: "scenario.toml", Spec: spec, Progress: retrieve.Progress{Writer: w, LogInterval: time.Millisecond}})
	cancel()
	if err != nil || !rep.Interrupted {
		t.Fatalf("first session: %+v %v\n%s", rep, err, w.log.String())
	}
	// Moved, then continued by its new absolute path: the finished level
	// is kept, the stopped one resumes from its checkpoint (its run.toml
	// names the observation where it was before the move).
	moved := filepath.Join(dir, "elsewhere", "plan-moved")
	os.MkdirAll(filepath.Dir(moved), 0o755)
	if err := os.Rename("plan-ref", moved); err != nil {
		t.Fatal(err)
	}
	var log bytes.Buffer
	if rep, err = RunPlan(context.Background(), PlanOptions{Dir: moved, ScenarioPath: filepath.Join(dir, "scenario.toml"), Spec: spec, Log: &log}); err != nil || rep.Comparison == nil {
		t.Fatalf("moved plan: %v\n%s", err, log.String())
	}
	if !strings.Contains(log.String(), "noise-0030ppm/run is done; kept") || !strings.Contains(log.String(), "resuming "+filepath.Join(moved, "noise-0060ppm", "run")) {
		t.Errorf("moved plan: not continued where it stopped:\n%s", log.String())
	}
	// Real differences, named.
	other := PlanSpec{NoisePPM: []float64{30, 90}}
	if _, err := RunPlan(context.Background(), PlanOptions{Dir: moved, ScenarioPath: "scenario.toml", Spec: other}); !errors.Is(err, ErrOtherPlan) || !strings.Contains(err.Error(), "its noise levels (ppm) is [30 60], this request's [30 90]") {
		t.Errorf("different levels: %v", err)
	}
	obsPath := filepath.Join(moved, "noise-0060ppm", "observation.csv")
	text, _ := os.ReadFile(obsPath)
	lines := strings.Split(string(text), "\n")
	for i, l := range lines {
		if strings.HasPrefix(l, "1.") || strings.HasPrefix(l, "0.") {
			f := strings.Split(l, ",")
			f[2] = "123.5"
			lines[i] = strings.Join(f, ",")
			if _, err := RunPlan(context.Background(), PlanOptions{Dir: moved}); err != nil {
				t.Fatalf("finished plan run again: %v", err)
			}
			os.WriteFile(obsPath, []byte(strings.Join(lines, "\n")), 0o644)
			_, err := RunPlan(context.Background(), PlanOptions{Dir: moved})
			if err == nil || !strings.Contains(err.Error(), "observation.csv differs from the observation simulated now: line "+itoa(i+1)+" has depth 123.5 ppm, simulated ") {
				t.Errorf("edited observation: %v", err)
			}
			return
		}
	}
	t.Fatalf("no data line in %s", obsPath)
}

// Issue 12, case 5: a signal while a grid runs here stops the running
// point at a checkpoint and starts no other; nothing is marked failed.
func TestGridLocalCancelled(t *testing.T) {
	if testing.Short() {
		t.Skip("fits a small retrieval")
	}
	spec := writeGridFiles(t, strings.Replace(grid2, "values = [30, 60]", "values = [30, 60, 120]", 1))
	g, err := CreateGrid(spec, filepath.Join(t.TempDir(), "grid"), GridOptions{})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	go func() { // the signal, once point 0 has its first checkpoint
		for ctx.Err() == nil {
			if _, err := os.Stat(filepath.Join(g.RunDir(0), retrieve.CheckpointFile)); err == nil {
				cancel()
				return
			}
			time.Sleep(5 * time.Millisecond)
		}
	}()
	var log bytes.Buffer
	rep, err := g.RunLocal(ctx, LocalOptions{Jobs: 1, Log: &log})
	if err != nil {
		t.Fatal(err)
	}
	if len(rep.Failed) != 0 || len(rep.Done) != 0 || len(rep.Stopped) != 1 || rep.Stopped[0] != 0 {
		t.Fatalf("report %+v\n%s", rep, log.String())
	}
	if strings.Contains(log.String(), "point 1") {
		t.Errorf("a point started after the cancellation:\n%s", log.String())
	}
	st, err := g.Status()
	if err != nil {
		t.Fatal(err)
	}
	if st[0].State != PointStopped || st[0].Error != "" || st[1].State != PointNotStarted || st[2].State != PointNotStarted {
		t.Errorf("status %v", st)
	}
}
