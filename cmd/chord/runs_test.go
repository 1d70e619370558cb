package main

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/parquet-go/parquet-go"

	"chord/config"
	"chord/internal/testenv"
	"chord/simulate"
)

// runsModel is greySubNeptune with 30 layers, a stronger grey absorber
// and R = 150: a tiny retrieval that needs no opacity tables.
func runsModel(t *testing.T) *testenv.TOML {
	return greySubNeptune(t).Set("atmosphere.layers", "30").Set("opacity.grey_cross_section_m2", "1e-31").
		Set("spectrum.resolving_power", "150")
}

func setupRuns(t *testing.T) (dir, cfg string) {
	t.Helper()
	dir = t.TempDir()
	truth := runsModel(t).DeleteTable("parameters").DeleteTable("sampler").Set("spectrum.bin_resolving_power", "15").
		Write(filepath.Join(dir, "truth.toml"))
	mc, err := config.LoadModel(truth)
	if err != nil {
		t.Fatal(err)
	}
	if err := simulate.ObserveModel(filepath.Join(dir, "obs.csv"), mc, "", nil, 40, true, 3); err != nil {
		t.Fatal(err)
	}
	cfg = runsModel(t).Delete("planet.radius_rearth").Delete("atmosphere.temperature.temperature_k").Delete("spectrum.bin_resolving_power").
		Set("parameters[2].high", "1500").Set("sampler.seed", "11").Set("sampler.steps", "150").
		Append("[[observations]]\nfile = \"obs.csv\"").Write(filepath.Join(dir, "fit.toml"))
	return dir, cfg
}

// chainRows reads every row of a run's chain files with parquet-go's
// generic row reader (not chord's reader) and prints each exactly.
func chainRows(t *testing.T, run string) (cols []string, rows []string) {
	t.Helper()
	files, cols := testenv.ParquetFiles(t, filepath.Join(run, "chains", "part-*.parquet"))
	for _, pf := range files {
		r := parquet.NewReader(pf.File)
		buf := make([]parquet.Row, 64)
		for {
			n, err := r.ReadRows(buf)
			for _, row := range buf[:n] {
				var b strings.Builder
				for _, v := range row {
					switch v.Kind() {
					case parquet.Int64:
						fmt.Fprintf(&b, "%d ", v.Int64())
					case parquet.Boolean:
						fmt.Fprintf(&b, "%v ", v.Boolean())
					default:
						fmt.Fprintf(&b, "%x ", math.Float64bits(v.Double()))
					}
				}
				rows = append(rows, b.String())
			}
			if err == io.EOF {
				break
			}
			if err != nil {
				t.Fatalf("%s: %v", pf.Name, err)
			}
		}
	}
	return cols, rows
}

func exitCode(err error) int {
	var ee *exec.ExitError
	if errors.As(err, &ee) {
		return ee.ExitCode()
	}
	if err != nil {
		return -1
	}
	return 0
}

// Kill at random moments: `chord fit` and then `chord resume` are killed
// with SIGKILL at random times (and the newest part file sometimes cut to
// a random length, as a lost write would), until the run completes; its
// chain must equal, row for row and bit for bit, that of an uninterrupted
// `chord fit` of the same configuration and seed (the resume guarantee of
// the issue; the reference is this program's own uninterrupted run).
func TestKillResumeBinary(t *testing.T) {
	if testing.Short() {
		t.Skip("builds and runs the chord binary")
	}
	bin := testenv.BuildChord(t)
	dir, cfg := setupRuns(t)
	ref := filepath.Join(dir, "ref")
	start := time.Now()
	if out, err := exec.Command(bin, "fit", "-c", cfg, "-o", ref, "--workers", "1").CombinedOutput(); err != nil {
		t.Fatalf("reference fit: %v\n%s", err, out)
	}
	// Kill moments are drawn within the uninterrupted run's own duration,
	// so the first kill lands whether the machine is idle or loaded.
	refTime := time.Since(start)
	cols, want := chainRows(t, ref)
	if len(want) != 8*150 {
		t.Fatalf("reference chain: %d rows, want walkers x steps = %d", len(want), 8*150)
	}
	if got := strings.Join(cols, ","); got != "step,walker,log_posterior,log_likelihood,radius_rearth,temperature_k,mean_molecular_weight,balance_vmr,chi_square_fitted" {
		t.Errorf("columns %s", got)
	}

	killUntilDone(t, bin, cfg, filepath.Join(dir, "run"), "4", refTime, want)
}

// killUntilDone starts `chord fit -c cfg -o run` (checkpoints every
// checkpoint steps or dead points) and kills it, then `chord resume run`
// with two workers, with SIGKILL at random moments within refTime (the
// uninterrupted run's duration, so that kills land whether the machine is
// idle or loaded), sometimes cutting the newest part file short as a lost
// write would, until the run completes; its chain rows must equal want,
// bit for bit.
func killUntilDone(t *testing.T, bin, cfg, run, checkpoint string, refTime time.Duration, want []string) {
	t.Helper()
	rng := rand.New(rand.NewPCG(7, 8))
	kills, truncations := 0, 0
	const maxKills = 6 // then the run is let finish
	for attempt := 0; attempt < 40; attempt++ {
		args := []string{"resume", run, "--workers", "2", "--checkpoint-every", checkpoint}
		if _, err := os.Stat(filepath.Join(run, "checkpoint")); err != nil {
			args = []string{"fit", "-c", cfg, "-o", run, "--force", "--checkpoint-every", checkpoint}
		}
		cmd := exec.Command(bin, args...)
		var stderr bytes.Buffer
		cmd.Stderr = &stderr
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		done := make(chan error, 1)
		go func() { done <- cmd.Wait() }()
		var killAt <-chan time.Time // nil: never
		if kills < maxKills {
			killAt = time.After(time.Duration((0.1 + 0.5*rng.Float64()) * float64(refTime)))
		}
		select {
		case err := <-done:
			if err != nil {
				t.Fatalf("%v: %v\n%s", args, err, stderr.String())
			}
			_, got := chainRows(t, run)
			if len(got) != len(want) {
				t.Fatalf("after %d kills: %d rows, want %d", kills, len(got), len(want))
			}
			for i := range got {
				if got[i] != want[i] {
					t.Fatalf("after %d kills: row %d differs:\n got %s\nwant %s", kills, i, got[i], want[i])
				}
			}
			t.Logf("%d SIGKILLs (%d newest parts cut short), then the run finished with the uninterrupted run's %d rows", kills, truncations, len(got))
			if kills < 1 {
				t.Errorf("no kill landed before the run finished")
			}
			return
		case <-killAt:
			cmd.Process.Signal(syscall.SIGKILL)
			<-done
			kills++
			names, _ := filepath.Glob(filepath.Join(run, "chains", "part-*.parquet"))
			sort.Strings(names)
			if len(names) > 0 && rng.IntN(3) == 0 {
				p := names[len(names)-1]
				if data, err := os.ReadFile(p); err == nil && len(data) > 0 {
					os.WriteFile(p, data[:rng.IntN(len(data))], 0o644)
					truncations++
				}
			}
		}
	}
	t.Fatal("the run never finished")
}

// SIGINT finishes the step, checkpoints, says how to resume and exits
// with code 3; resume then completes the same chain; report rereads it.
func TestInterruptBinary(t *testing.T) {
	if testing.Short() {
		t.Skip("builds and runs the chord binary")
	}
	bin := testenv.BuildChord(t)
	dir, cfg := setupRuns(t)
	run := filepath.Join(dir, "run")
	cmd := exec.Command(bin, "fit", "-c", cfg, "-o", run, "--steps", "100000")
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	// Wait for the first part of the chain, then interrupt.
	for i := 0; i < 600; i++ {
		if names, _ := filepath.Glob(filepath.Join(run, "chains", "*")); len(names) > 0 {
			break
		}
		time.Sleep(50 * time.Millisecond)
	}
	time.Sleep(300 * time.Millisecond)
	cmd.Process.Signal(os.Interrupt)
	err := cmd.Wait()
	if code := exitCode(err); code != exitInterrupted {
		t.Fatalf("exit code %d after SIGINT, want %d\n%s", code, exitInterrupted, stderr.String())
	}
	if !strings.Contains(stderr.String(), "chord resume "+run) {
		t.Errorf("no resume hint:\n%s", stderr.String())
	}
	out, err := exec.Command(bin, "resume", run, "--steps", "40").CombinedOutput()
	if err != nil && !strings.Contains(string(out), "already holds") {
		t.Fatalf("resume: %v\n%s", err, out)
	}
	out, err = exec.Command(bin, "report", run, "--burn", "5", "--thin", "2").CombinedOutput()
	if err != nil {
		t.Fatalf("report: %v\n%s", err, out)
	}
	for _, want := range []string{"radius_rearth", "temperature_k", "burn-in 5", "thinning 2"} {
		if !strings.Contains(string(out), want) {
			t.Errorf("report output lacks %q:\n%s", want, out)
		}
	}
	for _, f := range []string{"summary.json", "summary.txt", "corner.png", "spectrum.png", "run.toml"} {
		if _, err := os.Stat(filepath.Join(run, f)); err != nil {
			t.Errorf("%s: %v", f, err)
		}
	}
	// Bad inputs at the command line.
	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{"fit", "-c", cfg, "-o", run}, "holds a run (run.toml): continue it with chord resume"},
		{[]string{"fit", "-c", filepath.Join(dir, "missing.toml"), "-o", filepath.Join(dir, "r2")}, "missing.toml"},
		{[]string{"fit", "-c", cfg, "-o", filepath.Join(dir, "r3"), "--steps", "5", "--until-converged"}, "at most one"},
		{[]string{"resume", dir}, "not a run directory"},
		{[]string{"report", run, "--burn", "soon"}, "--burn"},
	} {
		out, err := exec.Command(bin, tc.args...).CombinedOutput()
		if exitCode(err) != exitError || !strings.Contains(string(out), tc.want) {
			t.Errorf("%v: exit %d, output %q; want exit %d mentioning %q", tc.args, exitCode(err), out, exitError, tc.want)
		}
	}
}
