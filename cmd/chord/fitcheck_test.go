package main

import (
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"chord/obs"
)

// fit --check loads everything, evaluates the posterior once and writes
// nothing; the log-likelihood it reports is at most the Gaussian
// likelihood's normalisation, sum of -ln(sigma sqrt(2 pi)) (fact of the
// trade: the exponent is never positive).
func TestFitCheck(t *testing.T) {
	dir, cfg := setupRuns(t)
	before, _ := os.ReadDir(dir)
	run := filepath.Join(dir, "run")
	out, stderr, err := runCmd(t, "fit", "-c", cfg, "--check", "-o", run)
	if err != nil {
		t.Fatalf("%v\n%s", err, stderr)
	}
	for _, want := range []string{"configuration: " + cfg + ": valid", "observations:", "obs.csv", "priors:", "problem:", "posterior:", "stopping rule: 150 steps"} {
		if !strings.Contains(out, want) {
			t.Errorf("--check output lacks %q:\n%s", want, out)
		}
	}
	if !strings.Contains(stderr, "nothing was written") {
		t.Errorf("stderr: %s", stderr)
	}
	after, _ := os.ReadDir(dir)
	if len(after) != len(before) {
		t.Errorf("--check wrote into %s: %d entries, %d before", dir, len(after), len(before))
	}
	m := regexp.MustCompile(`ln likelihood (\S+) at`).FindStringSubmatch(out)
	if m == nil {
		t.Fatalf("no ln likelihood in %s", out)
	}
	ll, err := strconv.ParseFloat(m[1], 64)
	if err != nil {
		t.Fatal(err)
	}
	d, err := obs.ReadDataset(filepath.Join(dir, "obs.csv"))
	if err != nil {
		t.Fatal(err)
	}
	bound := 0.0
	for _, s := range d.Sigma {
		bound -= math.Log(s * math.Sqrt(2*math.Pi))
	}
	if !(ll <= bound*(1+1e-6)) || math.IsInf(ll, 0) {
		t.Errorf("ln likelihood %g: want finite and at most the normalisation %g", ll, bound)
	}

	// Bad input is refused, naming the file.
	bad := filepath.Join(dir, "bad.toml")
	text, _ := os.ReadFile(cfg)
	if err := os.WriteFile(bad, []byte(strings.Replace(string(text), "obs.csv", "missing.csv", 1)), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, _, err := runCmd(t, "fit", "-c", bad, "--check"); err == nil || !strings.Contains(err.Error(), "missing.csv") {
		t.Errorf("--check with a missing observation file: %v", err)
	}
	// Without --check, -o is needed.
	if _, _, err := runCmd(t, "fit", "-c", cfg); err == nil || !strings.Contains(err.Error(), "-o DIR") {
		t.Errorf("fit without -o: %v", err)
	}
}

// A configuration without a stopping rule is warned about (until
// converged may run for days), with how to bound it; a rule in the
// configuration or on the line silences it.
func TestFitWarnsWithoutStoppingRule(t *testing.T) {
	dir, cfg := setupRuns(t)
	text, _ := os.ReadFile(cfg)
	open := filepath.Join(dir, "open.toml")
	if err := os.WriteFile(open, []byte(strings.Replace(string(text), "steps = 150", "", 1)), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		args []string
		warn bool
	}{
		{[]string{"-c", open}, true},
		{[]string{"-c", open, "--budget", "1h"}, false},
		{[]string{"-c", open, "--steps", "10"}, false},
		{[]string{"-c", cfg}, false},
	} {
		_, stderr, err := runCmd(t, append(append([]string{"fit"}, tc.args...), "--check")...)
		if err != nil {
			t.Fatalf("%v: %v\n%s", tc.args, err, stderr)
		}
		warned := strings.Contains(stderr, "may take days") && strings.Contains(stderr, "--budget DURATION") && strings.Contains(stderr, "--steps N")
		if warned != tc.warn {
			t.Errorf("fit %v: warned %v, want %v:\n%s", tc.args, warned, tc.warn, stderr)
		}
	}
}
