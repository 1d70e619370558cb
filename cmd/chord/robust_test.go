package main

import (
	"bytes"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"chord/internal/runlock"
	"chord/internal/testenv"
	"chord/retrieve"
)

// The reproductions of issue 12 at the command line: each numbered case
// as the reliability tester met it.

// started is a chord process running in the background.
type started struct {
	cmd    *exec.Cmd
	stderr *bytes.Buffer
	done   chan error
}

func startChord(t *testing.T, bin string, args ...string) *started {
	t.Helper()
	s := &started{cmd: exec.Command(bin, args...), stderr: new(bytes.Buffer), done: make(chan error, 1)}
	s.cmd.Stderr = s.stderr
	if err := s.cmd.Start(); err != nil {
		t.Fatal(err)
	}
	go func() { s.done <- s.cmd.Wait() }()
	t.Cleanup(func() { s.cmd.Process.Kill() })
	return s
}

// waitFor polls until path exists (and, with text, holds it), failing the
// test after 60 s or when the process ends first.
func (s *started) waitFor(t *testing.T, path, text string) {
	t.Helper()
	for i := 0; i < 6000; i++ {
		if b, err := os.ReadFile(path); err == nil && strings.Contains(string(b), text) {
			return
		}
		select {
		case err := <-s.done:
			t.Fatalf("%v ended (%v) before %s appeared:\n%s", s.cmd.Args[1:], err, path, s.stderr.String())
		case <-time.After(10 * time.Millisecond):
		}
	}
	t.Fatalf("%s did not appear", path)
}

// stop signals the process and returns its exit code.
func (s *started) stop(t *testing.T, sig os.Signal) int {
	t.Helper()
	s.cmd.Process.Signal(sig)
	select {
	case err := <-s.done:
		return exitCode(err)
	case <-time.After(30 * time.Second):
		t.Fatalf("%v did not stop within 30 s of %v:\n%s", s.cmd.Args[1:], sig, s.stderr.String())
	}
	return -1
}

// Case 1: while `chord fit` writes a run, a second resume (with another
// checkpoint interval), a fit --force and a report of it fail at once,
// naming the writer; two fits into one new directory: the second fails.
// A writer killed with SIGKILL leaves no lock: the run resumes and
// reports (every part verified) afterwards.
func TestTwoProcessesOneRun(t *testing.T) {
	if testing.Short() {
		t.Skip("builds and runs the chord binary")
	}
	bin := testenv.BuildChord(t)
	dir, cfg := setupRuns(t)
	run := filepath.Join(dir, "run")
	a := startChord(t, bin, "fit", "-c", cfg, "-o", run, "--steps", "1000000", "--checkpoint-every", "5")
	a.waitFor(t, filepath.Join(run, retrieve.CheckpointFile), "")
	host, _ := os.Hostname()
	holder := fmt.Sprintf("another chord process (pid %d, host %s, chord fit) is writing", a.cmd.Process.Pid, host)
	for _, args := range [][]string{
		{"resume", run, "--checkpoint-every", "7"},
		{"fit", "-c", cfg, "-o", run, "--force"},
		{"report", run},
	} {
		t0 := time.Now()
		out, err := exec.Command(bin, args...).CombinedOutput()
		if exitCode(err) != exitError || !strings.Contains(string(out), holder) {
			t.Errorf("%v while a fit writes the run: exit %d, %q; want exit %d naming the writer (%q)", args, exitCode(err), out, exitError, holder)
		}
		if d := time.Since(t0); d > 10*time.Second {
			t.Errorf("%v took %v to fail", args, d)
		}
	}
	run2 := filepath.Join(dir, "run2")
	b := startChord(t, bin, "fit", "-c", cfg, "-o", run2, "--steps", "1000000")
	b.waitFor(t, filepath.Join(run2, runlock.FileName), "chord fit")
	out, err := exec.Command(bin, "fit", "-c", cfg, "-o", run2).CombinedOutput()
	if exitCode(err) != exitError || !strings.Contains(string(out), fmt.Sprintf("(pid %d, host %s, chord fit) is writing", b.cmd.Process.Pid, host)) {
		t.Errorf("a second fit into a new directory: exit %d, %q", exitCode(err), out)
	}
	if code := b.stop(t, syscall.SIGINT); code != exitInterrupted {
		t.Errorf("first fit into run2: exit %d after SIGINT\n%s", code, b.stderr.String())
	}
	a.stop(t, syscall.SIGKILL)
	ck, err := retrieve.ReadCheckpoint(filepath.Join(run, retrieve.CheckpointFile))
	if err != nil {
		t.Fatal(err)
	}
	if out, err := exec.Command(bin, "resume", run, "--steps", strconv.Itoa(ck.Step+10)).CombinedOutput(); err != nil {
		t.Fatalf("resume after the writer was killed: %v\n%s", err, out)
	}
	if out, err := exec.Command(bin, "report", run).CombinedOutput(); err != nil {
		t.Fatalf("report after the writer was killed: %v\n%s", err, out)
	}
}

// Case 2: `chord report` verifies what resume verifies. A chain part
// replaced by the same-numbered part of another run, a checkpoint copied
// from another run, or both together (another run's chain and checkpoint)
// are refused, naming the part or the runs; the report files are not
// touched. Restored, the run reports again. Case 3 at the command line: a
// finished run resumed says there is nothing to do and does nothing.
func TestReportVerifiesTheRun(t *testing.T) {
	dir, cfg := setupRuns(t)
	runA, runB := filepath.Join(dir, "a"), filepath.Join(dir, "b")
	for i, r := range []string{runA, runB} {
		if _, errOut, err := runCmd(t, "fit", "-c", cfg, "-o", r, "--steps", "20", "--checkpoint-every", "5", "--seed", strconv.Itoa(11+i)); err != nil {
			t.Fatalf("fit %s: %v\n%s", r, err, errOut)
		}
	}
	summary, _ := os.ReadFile(filepath.Join(runA, "summary.json"))
	swap := func(rel string) func() {
		orig := filepath.Join(t.TempDir(), "orig")
		if err := os.Rename(filepath.Join(runA, rel), orig); err != nil {
			t.Fatal(err)
		}
		if err := os.CopyFS(filepath.Join(runA, rel), os.DirFS(filepath.Join(runB, rel))); err != nil {
			t.Fatal(err)
		}
		return func() {
			os.RemoveAll(filepath.Join(runA, rel))
			os.Rename(orig, filepath.Join(runA, rel))
		}
	}
	swapFile := func(rel string) func() {
		orig, _ := os.ReadFile(filepath.Join(runA, rel))
		other, _ := os.ReadFile(filepath.Join(runB, rel))
		os.WriteFile(filepath.Join(runA, rel), other, 0o644)
		return func() { os.WriteFile(filepath.Join(runA, rel), orig, 0o644) }
	}
	ckB, _ := retrieve.ReadCheckpoint(filepath.Join(runB, retrieve.CheckpointFile))
	ckA, _ := retrieve.ReadCheckpoint(filepath.Join(runA, retrieve.CheckpointFile))
	for _, tc := range []struct {
		what    string
		swap    func() func()
		command []string
		want    string
	}{
		{"a part of another run", func() func() { return swapFile("chains/part-000002.parquet") }, []string{"report", runA},
			"chain part part-000002.parquet (steps 6-10) is missing, damaged or replaced: size "},
		{"a part of another run, at resume", func() func() { return swapFile("chains/part-000002.parquet") }, []string{"resume", "--steps", "30", runA},
			"part-000002.parquet (steps 6-10) is missing, damaged or replaced"},
		{"a checkpoint of another run", func() func() { return swapFile(retrieve.CheckpointFile) }, []string{"report", runA},
			"the checkpoint belongs to run " + ckB.RunID + ", run.toml to run " + ckA.RunID},
		{"the chain and checkpoint of another run", func() func() {
			a, b := swap("chains"), swapFile(retrieve.CheckpointFile)
			return func() { a(); b() }
		}, []string{"report", runA}, "the checkpoint belongs to run " + ckB.RunID},
	} {
		restore := tc.swap()
		_, _, err := runCmd(t, tc.command...)
		restore()
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: %v, want %q", tc.what, err, tc.want)
		}
		if now, _ := os.ReadFile(filepath.Join(runA, "summary.json")); !bytes.Equal(now, summary) {
			t.Errorf("%s: summary.json changed", tc.what)
		}
	}
	// The newest part damaged: report refuses and says resume recovers it.
	p := filepath.Join(runA, "chains", "part-000004.parquet")
	data, _ := os.ReadFile(p)
	os.WriteFile(p, data[:len(data)/2], 0o644)
	if _, _, err := runCmd(t, "report", runA); err == nil || !strings.Contains(err.Error(), "part-000004.parquet") || !strings.Contains(err.Error(), "chord resume "+runA+" samples its steps again") {
		t.Errorf("damaged newest part: %v", err)
	}
	os.WriteFile(p, data, 0o644)
	if out, _, err := runCmd(t, "report", runA); err != nil || !strings.Contains(out, "radius_rearth") {
		t.Errorf("report of the restored run: %v", err)
	}
	parts, _ := filepath.Glob(filepath.Join(runA, "chains", "*"))
	for range 2 {
		_, errOut, err := runCmd(t, "resume", runA)
		if err != nil || !strings.Contains(errOut, "has already met its stopping rule (step count reached, 20 steps in the chain): nothing to do") {
			t.Errorf("resume of a finished run: %v\n%s", err, errOut)
		}
	}
	if now, _ := filepath.Glob(filepath.Join(runA, "chains", "*")); len(now) != len(parts) {
		t.Errorf("resume of a finished run changed the chain: %v, was %v", now, parts)
	}
}

// Case 8: `fit --force` in a directory that is not a chord run (no
// run.toml) but holds chains/, summary.txt and checkpoint of the user's
// own refuses and leaves every file as it was.
func TestForceForeignDirectory(t *testing.T) {
	dir, cfg := setupRuns(t)
	mine := filepath.Join(dir, "mine")
	os.MkdirAll(filepath.Join(mine, "chains"), 0o755)
	files := map[string]string{"chains/part-000001.parquet": "my data", "summary.txt": "my notes", "checkpoint": "my state"}
	for f, text := range files {
		os.WriteFile(filepath.Join(mine, f), []byte(text), 0o644)
	}
	_, _, err := runCmd(t, "fit", "-c", cfg, "-o", mine, "--force")
	if err == nil || !strings.Contains(err.Error(), mine+" is not a chord run directory (no run.toml)") {
		t.Errorf("fit --force in a directory that is not a run: %v", err)
	}
	ents, _ := os.ReadDir(mine)
	if len(ents) != 3 {
		t.Errorf("entries after the refusal: %v", ents)
	}
	for f, text := range files {
		if b, err := os.ReadFile(filepath.Join(mine, f)); err != nil || string(b) != text {
			t.Errorf("%s: %q %v", f, b, err)
		}
	}
}

// "Also": a report that cannot write its files still prints the summary
// to standard output and says why nothing was saved. As root (who may
// write a read-only directory) the files are made unwritable by a
// directory in the place of summary.json.
func TestReportCannotWrite(t *testing.T) {
	dir, cfg := setupRuns(t)
	run := filepath.Join(dir, "run")
	if _, errOut, err := runCmd(t, "fit", "-c", cfg, "-o", run, "--steps", "20"); err != nil {
		t.Fatalf("%v\n%s", err, errOut)
	}
	before := snapshotDir(t, run)
	if os.Geteuid() == 0 {
		os.Remove(filepath.Join(run, "summary.json"))
		os.MkdirAll(filepath.Join(run, "summary.json", "x"), 0o755)
	} else {
		filepath.Walk(run, func(p string, _ os.FileInfo, _ error) error { return os.Chmod(p, 0o555) })
		defer filepath.Walk(run, func(p string, _ os.FileInfo, _ error) error { return os.Chmod(p, 0o755) })
	}
	out, _, err := runCmd(t, "report", run)
	if err == nil || !strings.Contains(err.Error(), "the summary above is not saved: could not write the report files in "+run) {
		t.Errorf("report of an unwritable run: %v", err)
	}
	if !strings.Contains(out, "radius_rearth") || !strings.Contains(out, "temperature_k") {
		t.Errorf("no summary on standard output:\n%s", out)
	}
	if os.Geteuid() != 0 {
		if after := snapshotDir(t, run); len(after) != len(before) {
			t.Errorf("files of the run changed: %d, were %d", len(after), len(before))
		}
	}
}

func snapshotDir(t *testing.T, dir string) map[string]string {
	t.Helper()
	m := map[string]string{}
	filepath.Walk(dir, func(p string, info os.FileInfo, err error) error {
		if err == nil && !info.IsDir() {
			b, _ := os.ReadFile(p)
			m[p] = string(b)
		}
		return nil
	})
	return m
}

// Case 6: SIGINT while the starting point is searched for (400 walkers:
// 3200 prior draws, about 2 s on this machine, before the first step)
// ends the fit within a few seconds with exit code 3, and leaves a run that `chord resume`
// continues (from the run's seed) and that `chord fit` without --force
// names as a run to resume.
func TestInterruptAtStartup(t *testing.T) {
	if testing.Short() {
		t.Skip("builds and runs the chord binary")
	}
	bin := testenv.BuildChord(t)
	dir, cfg := setupRuns(t)
	slow := filepath.Join(dir, "slow.toml")
	text, _ := os.ReadFile(cfg)
	os.WriteFile(slow, []byte(strings.Replace(string(text), "walkers = 8", "walkers = 400", 1)), 0o644)
	run := filepath.Join(dir, "run")
	f := startChord(t, bin, "fit", "-c", slow, "-o", run, "--steps", "2")
	f.waitFor(t, filepath.Join(run, retrieve.RunFile), "")
	time.Sleep(200 * time.Millisecond)
	t0 := time.Now()
	if code := f.stop(t, os.Interrupt); code != exitInterrupted {
		t.Fatalf("exit %d after SIGINT at start-up, want %d\n%s", code, exitInterrupted, f.stderr.String())
	}
	if d := time.Since(t0); d > 5*time.Second {
		t.Errorf("SIGINT at start-up took %v", d)
	}
	if !strings.Contains(f.stderr.String(), "interrupted while the starting point and initial walkers (or live points) were being made") || !strings.Contains(f.stderr.String(), "chord resume "+run) {
		t.Errorf("stderr:\n%s", f.stderr.String())
	}
	if _, err := os.Stat(filepath.Join(run, retrieve.CheckpointFile)); err == nil {
		t.Fatal("a checkpoint was written: the start was not interrupted; make it slower")
	}
	out, err := exec.Command(bin, "fit", "-c", slow, "-o", run).CombinedOutput()
	if exitCode(err) != exitError || !strings.Contains(string(out), "continue it with chord resume "+run) {
		t.Errorf("fit without --force: exit %d, %s", exitCode(err), out)
	}
	out, err = exec.Command(bin, "resume", run).CombinedOutput()
	if err != nil || !strings.Contains(string(out), "stopped before its first checkpoint; starting it again from its seed 11") {
		t.Fatalf("resume of the interrupted start: %v\n%s", err, out)
	}
	if ck, err := retrieve.ReadCheckpoint(filepath.Join(run, retrieve.CheckpointFile)); err != nil || ck.Step != 2 {
		t.Errorf("after the resume: %v, %+v", err, ck)
	}
}

// Case 5: SIGTERM while `chord grid --local` runs its first of three
// points stops that point at a checkpoint, starts no other, and exits
// with code 3; status shows it stopped and the others not started, none
// failed.
func TestGridLocalSIGTERM(t *testing.T) {
	if testing.Short() {
		t.Skip("builds and runs the chord binary")
	}
	bin := testenv.BuildChord(t)
	base, err := filepath.Abs("../../testdata/grid/marrow-d.toml")
	if err != nil {
		t.Fatal(err)
	}
	spec := filepath.Join(t.TempDir(), "three.toml")
	os.WriteFile(spec, []byte("base = \""+base+"\"\nseed = 3\n[set]\n\"sampler.steps\" = 1000000\n[[axes]]\nkey = \"observe.noise_ppm\"\nvalues = [40, 80, 160]\n"), 0o644)
	dir := filepath.Join(t.TempDir(), "grid")
	g := startChord(t, bin, "grid", "-c", spec, "-o", dir, "--local", "--jobs", "1")
	g.waitFor(t, filepath.Join(dir, "points", "p0000", "run", retrieve.CheckpointFile), "")
	if code := g.stop(t, syscall.SIGTERM); code != exitInterrupted {
		t.Errorf("exit %d after SIGTERM, want %d\n%s", code, exitInterrupted, g.stderr.String())
	}
	errOut := g.stderr.String()
	if !strings.Contains(errOut, "0 points done, 1 stopped, 0 failed") || strings.Contains(errOut, "point 1 (") || strings.Contains(errOut, "failed:") {
		t.Errorf("stderr:\n%s", errOut)
	}
	out, _, err := runCmd(t, "grid", "status", dir)
	if err != nil || !strings.Contains(out, "3 points: 1 stopped, 2 not started") {
		t.Errorf("status: %v\n%s", err, out)
	}
}
