package retrieve

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"chord/chains"
	"chord/config"
	"chord/internal/atomicfile"
	"chord/internal/testenv"
	"chord/report"
	"chord/sampler"
)

// gaussTarget is a correlated 3-D Gaussian with two extras: the log density
// again (as "log_likelihood") and x0+x1 (a derived quantity). delay makes
// each evaluation slow, for the kill tests.
type gaussTarget struct{ delay time.Duration }

func (gaussTarget) Dim() int                          { return 3 }
func (gaussTarget) NumExtra() int                     { return 2 }
func (g gaussTarget) NewEvaluator() sampler.Evaluator { return g }
func (g gaussTarget) LogProb(x, extra []float64) float64 {
	if g.delay > 0 {
		time.Sleep(g.delay)
	}
	a, b, c := x[0], x[1]-0.5*x[0], x[2]/3
	lp := -0.5 * (a*a + b*b/0.25 + c*c)
	extra[0], extra[1] = lp, x[0]+x[1]
	return lp
}

func gaussSpec(walkers int, seed uint64, delay time.Duration) *RunSpec {
	t := gaussTarget{delay: delay}
	return &RunSpec{
		Target: t,
		Layout: chains.Layout{Walkers: walkers, Dim: 3, NumExtra: 2, Columns: []chains.Column{
			{Name: "log_likelihood", Role: chains.RoleDerived, Source: 0},
			{Name: "a", Role: chains.RoleParameter, Source: 0, Prior: "none"},
			{Name: "b", Role: chains.RoleParameter, Source: 1},
			{Name: "c", Role: chains.RoleParameter, Source: 2, Unit: "K"},
			{Name: "a_plus_b", Role: chains.RoleDerived, Source: 1},
		}},
		Seed: seed,
		Init: func(ctx context.Context, workers int) (*sampler.State, error) {
			return sampler.InitBall(ctx, t, []float64{0, 0, 0}, []float64{0.1, 0.1, 0.1}, sampler.InitSettings{Walkers: walkers, Seed: seed, Workers: workers})
		},
		RunID: "test", ConfigSHA256: "digest-1",
	}
}

// allRows returns the chain rows of a run directory as text, one line per
// row, every value printed exactly (bit-for-bit comparison).
func allRows(t *testing.T, dir string) []string {
	t.Helper()
	r, err := chains.NewReader(filepath.Join(dir, chains.DirName), nil)
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	var rows []string
	for {
		s, err := r.Next()
		if err == io.EOF {
			return rows
		}
		if err != nil {
			t.Fatal(err)
		}
		for k := range r.Walkers() {
			var b strings.Builder
			fmt.Fprintf(&b, "%d %d ", s, k)
			if r.Nested() {
				fmt.Fprintf(&b, "%v ", r.Final())
			}
			for _, v := range r.Walker(k) {
				fmt.Fprintf(&b, "%x ", math.Float64bits(v))
			}
			rows = append(rows, b.String())
		}
	}
}

func sameRows(t *testing.T, what string, got, want []string) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("%s: %d rows, want %d", what, len(got), len(want))
	}
	for i := range got {
		if got[i] != want[i] {
			t.Fatalf("%s: row %d differs:\n got %s\nwant %s", what, i, got[i], want[i])
		}
	}
}

func reference(t *testing.T, stop config.StopRule) []string {
	t.Helper()
	dir := t.TempDir()
	out, err := StartRun(context.Background(), dir, gaussSpec(8, 42, 0), RunOptions{Stop: stop, Workers: 1, CheckpointSteps: 50})
	if err != nil {
		t.Fatal(err)
	}
	if stop.Steps > 0 && out.Step != stop.Steps {
		t.Fatalf("reference ended at step %d", out.Step)
	}
	return allRows(t, dir)
}

// Stopped at a step count, resumed with the same total: the rows of an
// uninterrupted run (the sampler's resume guarantee, through our store).
func TestResumeSameChain(t *testing.T) {
	want := reference(t, config.StopRule{Steps: 60})
	dir := t.TempDir()
	ctx := context.Background()
	if _, err := StartRun(ctx, dir, gaussSpec(8, 42, 0), RunOptions{Stop: config.StopRule{Steps: 25}, Workers: 2, CheckpointSteps: 7}); err != nil {
		t.Fatal(err)
	}
	out, err := ContinueRun(ctx, dir, gaussSpec(8, 42, 0), RunOptions{Stop: config.StopRule{Steps: 60}, Workers: 1, CheckpointSteps: 7})
	if err != nil {
		t.Fatal(err)
	}
	if out.Step != 60 || out.Steps != 35 {
		t.Errorf("resumed run: %+v", out)
	}
	sameRows(t, "resumed", allRows(t, dir), want)

	// Without a stopping rule, resume keeps the run's (60 steps): nothing to do.
	out, err = ContinueRun(ctx, dir, gaussSpec(8, 42, 0), RunOptions{})
	if err != nil || out.Steps != 0 || out.Stop != sampler.StopMaxSteps {
		t.Errorf("resume of a finished run: %+v %v", out, err)
	}
	if _, err := ContinueRun(ctx, dir, gaussSpec(8, 42, 0), RunOptions{Stop: config.StopRule{Steps: 50}}); err == nil || !strings.Contains(err.Error(), "already holds 60 steps") {
		t.Errorf("shorter total: %v", err)
	}
	// A changed configuration is refused.
	spec := gaussSpec(8, 42, 0)
	spec.ConfigSHA256 = "digest-2"
	if _, err := ContinueRun(ctx, dir, spec, RunOptions{Stop: config.StopRule{Steps: 80}}); err == nil || !strings.Contains(err.Error(), "changed since the run started") {
		t.Errorf("mismatched configuration: %v", err)
	}
	// No checkpoint: a clear error, no restart.
	if _, err := ContinueRun(ctx, t.TempDir(), gaussSpec(8, 42, 0), RunOptions{Stop: config.StopRule{Steps: 80}}); err == nil || !strings.Contains(err.Error(), "does not exist") {
		t.Errorf("missing checkpoint: %v", err)
	}
}

// A cancelled context stops after the current step with a checkpoint; the
// resumed chain is the uninterrupted one.
func TestCancelResume(t *testing.T) {
	want := reference(t, config.StopRule{Steps: 60})
	dir := t.TempDir()
	ctx, cancel := context.WithCancel(context.Background())
	spec := gaussSpec(8, 42, 0)
	n := 0
	spec.Target = cancelAfter{gaussTarget{}, &n, 8 * 20, cancel}
	out, err := StartRun(ctx, dir, spec, RunOptions{Stop: config.StopRule{Steps: 60}, Workers: 1, CheckpointSteps: 1000})
	if err != nil {
		t.Fatal(err)
	}
	if out.Stop != sampler.StopCanceled || out.Step >= 60 {
		t.Fatalf("cancelled run: %+v", out)
	}
	ck, err := ReadCheckpoint(filepath.Join(dir, CheckpointFile))
	if err != nil || ck.Step != out.Step {
		t.Fatalf("checkpoint after cancel: %v, step %v", err, ck)
	}
	if _, err := ContinueRun(context.Background(), dir, gaussSpec(8, 42, 0), RunOptions{}); err != nil {
		t.Fatal(err)
	}
	sameRows(t, "cancelled and resumed", allRows(t, dir), want)
}

// cancelAfter cancels the context after n evaluations (single worker).
type cancelAfter struct {
	gaussTarget
	n      *int
	after  int
	cancel func()
}

func (c cancelAfter) NewEvaluator() sampler.Evaluator { return c }
func (c cancelAfter) LogProb(x, extra []float64) float64 {
	if *c.n++; *c.n == c.after {
		c.cancel()
	}
	return c.gaussTarget.LogProb(x, extra)
}

// The newest part damaged after the checkpoint (truncated at random
// lengths): the run resumes one part earlier and ends with the same rows.
func TestRecoverDamagedNewestPart(t *testing.T) {
	want := reference(t, config.StopRule{Steps: 60})
	rng := rand.New(rand.NewPCG(11, 12))
	for trial := 0; trial < 3; trial++ {
		dir := t.TempDir()
		ctx := context.Background()
		if _, err := StartRun(ctx, dir, gaussSpec(8, 42, 0), RunOptions{Stop: config.StopRule{Steps: 30}, Workers: 1, CheckpointSteps: 10}); err != nil {
			t.Fatal(err)
		}
		p := filepath.Join(dir, chains.DirName, "part-000003.parquet")
		data, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		os.WriteFile(p, data[:rng.IntN(len(data))], 0o644)
		out, err := ContinueRun(ctx, dir, gaussSpec(8, 42, 0), RunOptions{Stop: config.StopRule{Steps: 60}, Workers: 2, CheckpointSteps: 10})
		if err != nil {
			t.Fatal(err)
		}
		if !out.Recovered || out.Steps != 40 {
			t.Errorf("trial %d: %+v", trial, out)
		}
		sameRows(t, "recovered", allRows(t, dir), want)
	}
	// An older part damaged: a clear error naming it.
	dir := t.TempDir()
	StartRun(context.Background(), dir, gaussSpec(8, 42, 0), RunOptions{Stop: config.StopRule{Steps: 30}, Workers: 1, CheckpointSteps: 10})
	os.WriteFile(filepath.Join(dir, chains.DirName, "part-000001.parquet"), []byte("PAR1"), 0o644)
	_, err := ContinueRun(context.Background(), dir, gaussSpec(8, 42, 0), RunOptions{Stop: config.StopRule{Steps: 60}})
	if err == nil || !strings.Contains(err.Error(), "part-000001.parquet") || !strings.Contains(err.Error(), "cannot be recovered") {
		t.Errorf("damaged old part: %v", err)
	}
}

// Until-converged, interrupted and resumed, stops at the same step with the
// same rows (the convergence history is rebuilt from the stored chain).
func TestResumeUntilConverged(t *testing.T) {
	want := reference(t, config.StopRule{UntilConverged: true})
	dir := t.TempDir()
	ctx, cancel := context.WithCancel(context.Background())
	spec := gaussSpec(8, 42, 0)
	n := 0
	spec.Target = cancelAfter{gaussTarget{}, &n, 8 * 250, cancel}
	if _, err := StartRun(ctx, dir, spec, RunOptions{Stop: config.StopRule{UntilConverged: true}, Workers: 1, CheckpointSteps: 50}); err != nil {
		t.Fatal(err)
	}
	out, err := ContinueRun(context.Background(), dir, gaussSpec(8, 42, 0), RunOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if out.Stop != sampler.StopConverged {
		t.Fatalf("resumed run stopped by %v", out.Stop)
	}
	sameRows(t, "until converged", allRows(t, dir), want)
}

// A full disk mid-run: the error says what happened, the chain up to the
// last checkpoint is intact and resumes to the uninterrupted rows.
func TestRunFullDisk(t *testing.T) {
	want := reference(t, config.StopRule{Steps: 60})
	dir := t.TempDir()
	spec := gaussSpec(8, 42, 0)
	r := &runner{dir: dir, spec: spec, opt: RunOptions{Workers: 1, CheckpointSteps: 10}, stop: config.StopRule{Steps: 60}}
	st, err := spec.Init(context.Background(), 1)
	if err != nil {
		t.Fatal(err)
	}
	// The third part's file fails (the checkpoint files do not count:
	// they are written to the operating system's file system).
	disk := &countdownDisk{FullDisk: &testenv.FullDisk{Limit: math.MaxInt64}, creates: 3}
	if r.w, err = chains.NewWriter(disk, filepath.Join(dir, chains.DirName), spec.Layout, nil); err != nil {
		t.Fatal(err)
	}
	if err := r.checkpoint(st); err != nil {
		t.Fatal(err)
	}
	_, err = r.sample(context.Background(), st, &RunOutcome{})
	var se *StoppedError
	if !errors.Is(err, syscall.ENOSPC) || !errors.As(err, &se) || se.Step != 20 || se.Dir != dir {
		t.Fatalf("error %v", err)
	}
	if _, err := ContinueRun(context.Background(), dir, gaussSpec(8, 42, 0), RunOptions{}); err != nil {
		t.Fatal(err)
	}
	sameRows(t, "after a full disk", allRows(t, dir), want)
}

// countdownDisk fills up when the creates-th file is written.
type countdownDisk struct {
	*testenv.FullDisk
	creates int
}

func (d *countdownDisk) Create(name string) (atomicfile.File, error) {
	if d.creates--; d.creates == 0 {
		d.Limit = 50
	}
	return d.FullDisk.Create(name)
}

// Kill at random moments: a child process (this test binary) samples a slow
// target and is killed with SIGKILL at random times, then resumed each time;
// the final chain equals an uninterrupted run's.
func TestKillResume(t *testing.T) {
	if testing.Short() {
		t.Skip("kill test skipped in -short mode")
	}
	want := reference(t, config.StopRule{Steps: 60})
	rng := rand.New(rand.NewPCG(21, 22))
	dir := t.TempDir()
	kills := 0
	for attempt := 0; attempt < 30; attempt++ {
		mode := "start"
		if _, err := os.Stat(filepath.Join(dir, CheckpointFile)); err == nil {
			mode = "resume"
		}
		cmd := exec.Command(os.Args[0], "-test.run=^TestKillChild$")
		cmd.Env = append(os.Environ(), "CHORD_KILL_CHILD="+mode+":"+dir)
		var out bytes.Buffer
		cmd.Stdout, cmd.Stderr = &out, &out
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		done := make(chan error, 1)
		go func() { done <- cmd.Wait() }()
		select {
		case err := <-done:
			if err != nil {
				t.Fatalf("child: %v\n%s", err, out.Bytes())
			}
			rows := allRows(t, dir)
			sameRows(t, fmt.Sprintf("after %d kills", kills), rows, want)
			if kills < 3 {
				t.Errorf("only %d kills landed", kills)
			}
			t.Logf("%d SIGKILLs, then the run finished with identical rows", kills)
			return
		case <-time.After(time.Duration(50+rng.IntN(250)) * time.Millisecond):
			cmd.Process.Signal(syscall.SIGKILL)
			<-done
			kills++
			// Sometimes also damage the newest part file, as a lost write
			// would: one the checkpoint does not list yet, or its newest.
			// Parts it lists before its newest were synced before it was
			// written, and a resume that recovered from a damaged newest
			// part can leave an older one newest on disk until it writes
			// the next checkpoint: damaging that is no lost write, and no
			// chain could survive it.
			names, _ := filepath.Glob(filepath.Join(dir, chains.DirName, "part-*.parquet"))
			newest := ""
			if ck, err := ReadCheckpoint(filepath.Join(dir, CheckpointFile)); err == nil && len(ck.Parts) > 0 {
				newest = ck.Parts[len(ck.Parts)-1].Name
			}
			if len(names) > 0 && filepath.Base(names[len(names)-1]) >= newest && rng.IntN(3) == 0 {
				p := names[len(names)-1]
				if data, err := os.ReadFile(p); err == nil && len(data) > 0 {
					os.WriteFile(p, data[:rng.IntN(len(data))], 0o644)
				}
			}
		}
	}
	t.Fatal("the run never finished")
}

// TestKillChild is the child process of TestKillResume.
func TestKillChild(t *testing.T) {
	env := os.Getenv("CHORD_KILL_CHILD")
	if env == "" {
		t.Skip("child of TestKillResume")
	}
	mode, dir, _ := strings.Cut(env, ":")
	spec := gaussSpec(8, 42, 300*time.Microsecond)
	opt := RunOptions{Stop: config.StopRule{Steps: 60}, Workers: 2, CheckpointSteps: 3}
	var err error
	if mode == "start" {
		// A kill before the step-0 checkpoint leaves a half-made store.
		os.RemoveAll(dir)
		_, err = StartRun(context.Background(), dir, spec, opt)
	} else {
		_, err = ContinueRun(context.Background(), dir, spec, opt)
	}
	if err != nil {
		t.Fatal(err)
	}
}

// lineModel is a report.Model: depth = 1000 + 10 a + b lambda at 20 bins
// in two data sets, the second with a fixed offset of 5 ppm, a temperature
// 500 + 10 a, and a gas "X" whose removal takes 3 ppm off.
type lineModel struct{}

func (lineModel) Datasets() []report.Dataset {
	var d [2]report.Dataset
	d[0].Name, d[1].Name = "blue", "red"
	for i := 0; i < 20; i++ {
		k := i / 10
		wl := 1 + 0.1*float64(i)
		d[k].Wavelength = append(d[k].Wavelength, wl)
		d[k].HalfWidth = append(d[k].HalfWidth, 0.05)
		d[k].Depth = append(d[k].Depth, 1000+0.3*wl+5*float64(k))
		d[k].Sigma = append(d[k].Sigma, 2)
	}
	return d[:]
}

func (lineModel) Pressures() []float64 { return []float64{1e-4, 1e-2, 1} }
func (lineModel) Gases() []string      { return []string{"X"} }

func (lineModel) Evaluate(v *report.SampleView, x []float64) error {
	for i := range v.Depth {
		v.Depth[i] = 1000 + 10*x[0] + x[1]*(1+0.1*float64(i))
	}
	v.Offset[0], v.Offset[1] = 0, 5
	for j := range v.Temperature {
		v.Temperature[j] = 500 + 10*x[0]
	}
	return nil
}

func (m lineModel) Without(dst, x []float64, gas string) error {
	v := &report.SampleView{Depth: dst, Offset: make([]float64, 2), Inflation: make([]float64, 2), Temperature: make([]float64, 3)}
	m.Evaluate(v, x)
	for i := range dst {
		dst[i] -= 3
	}
	return nil
}

func TestWriteReport(t *testing.T) {
	dir := t.TempDir()
	if _, err := StartRun(context.Background(), dir, gaussSpec(8, 42, 0), RunOptions{Stop: config.StopRule{Steps: 300}, Workers: 1, CheckpointSteps: 100}); err != nil {
		t.Fatal(err)
	}
	ck, err := ReadCheckpoint(filepath.Join(dir, CheckpointFile))
	if err != nil {
		t.Fatal(err)
	}
	s, err := report.Write(dir, ck.Parts, report.Options{BurnAuto: true, Model: lineModel{}, Fill: func(s *report.Summary) { s.RunID = "test" }})
	if err != nil {
		t.Fatal(err)
	}
	if s.Burn < 1 || s.Burn > 150 || len(s.Parameters) != 3 || len(s.Derived) != 2 || s.RunID != "test" {
		t.Errorf("summary: burn %d, %d parameters, %d derived", s.Burn, len(s.Parameters), len(s.Derived))
	}
	// chi-square of the best sample, recomputed here from its max-posterior values.
	a, b := s.Parameters[0].MaxPost, s.Parameters[1].MaxPost
	want := 0.0
	for k, d := range (lineModel{}).Datasets() {
		for i := range d.Depth {
			r := (d.Depth[i] - (1000 + 10*a + b*d.Wavelength[i]) - 5*float64(k)) / d.Sigma[i]
			want += r * r
		}
	}
	if math.Abs(s.Best.ChiSquare-want) > 1e-9*want || s.Best.DataPoints != 20 || s.Best.FreeParameters != 3 {
		t.Errorf("chi-square %v (%d points, %d parameters), want %v", s.Best.ChiSquare, s.Best.DataPoints, s.Best.FreeParameters, want)
	}
	for _, f := range report.Files() {
		if f == report.HTMLFile {
			continue // not asked for
		}
		if st, err := os.Stat(filepath.Join(dir, f)); err != nil || st.Size() == 0 {
			t.Errorf("%s: %v", f, err)
		}
	}
}
