package main

import (
	"bytes"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"chord/campaign"
	"chord/chains"
	"chord/internal/testenv"
)

const slurmGrid = `
base = "scenario.toml"
seed = 7
[set]
"sampler.steps" = 1500
[[axes]]
key = "observe.noise_ppm"
values = [30, 60, 120]
[slurm]
time = "5"
cpus_per_task = 1
`

// slurmUp skips the test unless a Slurm controller answers and a node
// takes jobs (idle, or partly or wholly allocated to other jobs: ours then
// wait in the queue).
func slurmUp(t *testing.T) {
	t.Helper()
	if _, err := exec.LookPath("sbatch"); err != nil {
		t.Skip("no Slurm here (sbatch not on PATH); .ci/slurm/start.sh starts a single-node cluster")
	}
	out, err := exec.Command("sinfo", "-h", "-o", "%T").Output()
	if err != nil {
		t.Skipf("no Slurm controller reachable (sinfo: %v); .ci/slurm/start.sh starts one", err)
	}
	if !regexp.MustCompile(`(?m)^(idle|mixed|allocated|completing)$`).Match(out) {
		t.Skipf("no Slurm node takes jobs (sinfo says %q)", strings.TrimSpace(string(out)))
	}
}

// chordCmd runs the chord binary; CHORD_LOG_INTERVAL makes the tasks log
// their progress often (sbatch passes the environment on to the tasks).
func chordCmd(t *testing.T, exe string, args ...string) string {
	t.Helper()
	cmd := exec.Command(exe, args...)
	cmd.Env = append(os.Environ(), "CHORD_LOG_INTERVAL=100ms")
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	if err := cmd.Run(); err != nil {
		t.Fatalf("chord %s: %v\n%s%s", strings.Join(args, " "), err, stdout.String(), stderr.String())
	}
	return stdout.String()
}

// waitJob polls squeue until the job has left the queue (no accounting
// here, so not sacct).
func waitJob(t *testing.T, id string, limit time.Duration) {
	t.Helper()
	end := time.Now().Add(limit)
	for time.Now().Before(end) {
		out, _ := exec.Command("squeue", "-h", "-j", id).Output()
		if strings.TrimSpace(string(out)) == "" {
			return
		}
		time.Sleep(300 * time.Millisecond)
	}
	exec.Command("scancel", id).Run()
	t.Fatalf("Slurm job %s still queued or running after %v", id, limit)
}

func taskLog(t *testing.T, grid, job string, task int) string {
	t.Helper()
	b, _ := os.ReadFile(filepath.Join(grid, "slurm", "logs", fmt.Sprintf("%s_%d.out", job, task)))
	return string(b)
}

// The grid as a Slurm job array on a real (single-node) cluster: an
// uninterrupted run, and a run with one task cancelled mid-fit and
// resubmitted, which must continue that point's chain from its checkpoint
// and collect to the very same table.
func TestGridOnSlurm(t *testing.T) {
	slurmUp(t)
	if testing.Short() {
		t.Skip("runs two small grids on Slurm (about a minute)")
	}
	tmp := t.TempDir()
	exe := testenv.BuildChord(t)
	os.WriteFile(filepath.Join(tmp, "scenario.toml"), []byte(testenv.Fixture(t, "sub-neptune.toml").String()), 0o644)
	spec := filepath.Join(tmp, "grid.toml")
	os.WriteFile(spec, []byte(slurmGrid), 0o644)

	// Uninterrupted.
	whole := filepath.Join(tmp, "whole")
	job := strings.TrimSpace(chordCmd(t, exe, "grid", "-c", spec, "-o", whole, "--slurm", "--submit"))
	if !regexp.MustCompile(`^\d+$`).MatchString(job) {
		t.Fatalf("chord grid --submit printed %q, want a job id", job)
	}
	waitJob(t, job, 150*time.Second)
	if st := chordCmd(t, exe, "grid", "status", whole); !strings.Contains(st, "3 points: 3 done") {
		t.Fatalf("status after the array:\n%s\ntask 0 log:\n%s", st, taskLog(t, whole, job, 0))
	}
	chordCmd(t, exe, "grid", "collect", whole)
	want, err := os.ReadFile(filepath.Join(whole, "summary.csv"))
	if err != nil {
		t.Fatal(err)
	}
	if n := strings.Count(string(want), "\n"); n != 1+3*2 {
		t.Fatalf("summary.csv has %d lines, want a header and 3 points x 2 parameters:\n%s", n, want)
	}

	// Cancelled and resubmitted.
	cut := filepath.Join(tmp, "cut")
	job = strings.TrimSpace(chordCmd(t, exe, "grid", "-c", spec, "-o", cut, "--slurm", "--submit"))
	// Wait until task 0 is sampling (a progress line after its first
	// checkpoint), then cancel it: Slurm's SIGTERM makes chord write a
	// checkpoint at the current step.
	end := time.Now().Add(150 * time.Second)
	for !regexp.MustCompile(`step \d+`).MatchString(taskLog(t, cut, job, 0)) {
		if time.Now().After(end) {
			exec.Command("scancel", job).Run()
			t.Fatalf("task 0 never started sampling; log:\n%s", taskLog(t, cut, job, 0))
		}
		time.Sleep(100 * time.Millisecond)
	}
	if out, err := exec.Command("scancel", job+"_0").CombinedOutput(); err != nil {
		t.Fatalf("scancel: %v %s", err, out)
	}
	waitJob(t, job, 150*time.Second)
	g, err := campaign.OpenGrid(cut)
	if err != nil {
		t.Fatal(err)
	}
	st, err := g.Status()
	if err != nil {
		t.Fatal(err)
	}
	if st[0].State != campaign.PointStopped || st[0].Step < 1 || st[0].Step >= 1500 || st[1].State != campaign.PointDone || st[2].State != campaign.PointDone {
		t.Fatalf("after scancel: %v / %v / %v; task 0 log:\n%s", st[0], st[1], st[2], taskLog(t, cut, job, 0))
	}
	k := st[0].Step
	if out := chordCmd(t, exe, "grid", "status", cut); !strings.Contains(out, fmt.Sprintf("stopped with checkpoint at step %d of 1500", k)) {
		t.Errorf("status does not show the checkpoint at step %d:\n%s", k, out)
	}
	job2 := strings.TrimSpace(chordCmd(t, exe, "grid", "resubmit", cut, "--submit"))
	scripts, _ := filepath.Glob(filepath.Join(cut, "slurm", "array-*.sh"))
	slices.Sort(scripts)
	if b, _ := os.ReadFile(scripts[len(scripts)-1]); !strings.Contains(string(b), "#SBATCH --array=0\n") {
		t.Errorf("resubmitted array is not point 0 alone:\n%s", b)
	}
	// While the resubmitted task is queued or running, the point is not
	// resubmitted again.
	if st, err := g.Status(); err != nil || st[0].State == campaign.PointStopped || st[0].State == campaign.PointNotStarted {
		t.Errorf("status of a resubmitted point: %v %v", st[0], err)
	}
	if again, err := g.Unfinished(); err != nil || len(again) != 0 {
		t.Errorf("unfinished points right after the resubmission: %v %v", again, err)
	}
	waitJob(t, job2, 150*time.Second)
	log := taskLog(t, cut, job2, 0)
	// Resumed, not restarted: the session sampled the 1500-k steps after
	// the checkpoint.
	if !strings.Contains(log, "chord grid: resuming") || !strings.Contains(log, "1500 steps in the chain ("+strconv.Itoa(1500-k)+" this session") {
		t.Fatalf("point 0 was not resumed from step %d; log:\n%s", k, log)
	}
	t.Logf("task 0 cancelled with a checkpoint at step %d, resumed for the remaining %d steps", k, 1500-k)
	chordCmd(t, exe, "grid", "collect", cut)
	got, _ := os.ReadFile(filepath.Join(cut, "summary.csv"))
	if !bytes.Equal(got, want) {
		t.Errorf("summary after cancel and resubmit differs from the uninterrupted grid's:\n%s\n----\n%s", got, want)
	}
	// The chain itself is the uninterrupted one, row for row.
	a, err := chains.Read(filepath.Join(whole, "points", "p0000", "run", "chains"), nil, 0, 1)
	if err != nil {
		t.Fatal(err)
	}
	b, err := chains.Read(filepath.Join(cut, "points", "p0000", "run", "chains"), nil, 0, 1)
	if err != nil {
		t.Fatal(err)
	}
	if a.TotalSteps != 1500 || b.TotalSteps != 1500 || !slices.Equal(a.Column("temperature_k"), b.Column("temperature_k")) || !slices.Equal(a.Column("log_posterior"), b.Column("log_posterior")) {
		t.Errorf("resumed chain differs from the uninterrupted one (%d and %d steps)", a.TotalSteps, b.TotalSteps)
	}
}
