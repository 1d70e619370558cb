package main

import (
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"chord/internal/testenv"
)

// nestedRunsConfig is setupRuns's configuration fitted by nested sampling
// (200 live points).
func nestedRunsConfig(t *testing.T) (dir, cfg string) {
	t.Helper()
	dir, cfg = setupRuns(t)
	text, err := os.ReadFile(cfg)
	if err != nil {
		t.Fatal(err)
	}
	s := string(text)
	i := strings.Index(s, "[sampler]")
	j := strings.Index(s[i:], "\n[")
	rest := ""
	if j > 0 {
		rest = s[i+j:]
	}
	s = s[:i] + "[sampler]\nmethod = \"nested\"\nlive_points = 200\nseed = 11\n" + rest
	cfg = filepath.Join(dir, "nested.toml")
	if err := os.WriteFile(cfg, []byte(s), 0o644); err != nil {
		t.Fatal(err)
	}
	return dir, cfg
}

// Kill at random moments, nested sampling: `chord fit` and `chord resume`
// of a nested run, killed with SIGKILL (and the newest part sometimes cut
// short) until the run completes with two workers, hold the dead points of
// an uninterrupted one-worker `chord fit`, bit for bit: resume after
// SIGKILL and worker-count equality through chord's run directory.
func TestKillResumeNestedBinary(t *testing.T) {
	if testing.Short() {
		t.Skip("builds and runs the chord binary")
	}
	bin := testenv.BuildChord(t)
	dir, cfg := nestedRunsConfig(t)
	ref := filepath.Join(dir, "ref")
	start := time.Now()
	if out, err := exec.Command(bin, "fit", "-c", cfg, "-o", ref, "--workers", "1").CombinedOutput(); err != nil {
		t.Fatalf("reference fit: %v\n%s", err, out)
	}
	refTime := time.Since(start)
	cols, want := chainRows(t, ref)
	if got := strings.Join(cols, ","); got != "point,final,log_weight,log_posterior,log_likelihood,radius_rearth,temperature_k,mean_molecular_weight,balance_vmr,chi_square_fitted" {
		t.Errorf("columns %s", got)
	}
	if n := strings.Count(strings.Join(want, "\n"), " true "); n != 200 {
		t.Errorf("%d final points, want the 200 live points", n)
	}
	killUntilDone(t, bin, cfg, filepath.Join(dir, "run"), "20", refTime, want)
}
