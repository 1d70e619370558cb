package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// "k of N points done, about T left": the time left is the session's
// time per finished point times the points left (arithmetic on an
// invented clock).
func TestPointsProgress(t *testing.T) {
	var b bytes.Buffer
	p := newPointsProgress(&b, "chord grid", "points")
	clock := time.Unix(0, 0)
	p.now = func() time.Time { return clock }
	p.update(1, 5) // one point was done before this session
	clock = clock.Add(10 * time.Second)
	p.update(2, 5)
	clock = clock.Add(10 * time.Second)
	p.update(2, 5) // a point stopped: nothing new
	clock = clock.Add(10 * time.Second)
	p.update(3, 5)
	clock = clock.Add(20 * time.Second)
	p.update(5, 5)
	// After 3 of 5: 30 s for 2 points, 15 s each, 2 left: 30 s raw; the
	// finish shown before was 10 s away, so the display moves halfway
	// (eta.Smoother): 20 s.
	want := "chord grid: 1 of 5 points done\n" +
		"chord grid: 2 of 5 points done, about 30s left\n" +
		"chord grid: 3 of 5 points done, about 20s left\n" +
		"chord grid: 5 of 5 points done\n"
	if b.String() != want {
		t.Errorf("got\n%s\nwant\n%s", b.String(), want)
	}
}

// A fit's last lines agree with its summary: the progress line's final
// redraw carries no tau of its own, and the line after it states tau and
// the chain's length in tau as summary.txt does (issue 15: the progress
// said tau 99.8 where the summary said 93.5).
func TestFitFinalLineAgreesWithSummary(t *testing.T) {
	if testing.Short() {
		t.Skip("runs a small fit")
	}
	_, cfg := setupRuns(t)
	run := filepath.Join(t.TempDir(), "run")
	t.Setenv("CHORD_LOG_INTERVAL", "1ms")
	_, errOut, err := runCmd(t, "fit", "-c", cfg, "-o", run)
	if err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(filepath.Join(run, "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	var s struct {
		MaxTau    float64 `json:"max_tau"`
		ChainTaus float64 `json:"chain_taus"`
	}
	if err := json.Unmarshal(b, &s); err != nil {
		t.Fatal(err)
	}
	want := fmt.Sprintf("largest autocorrelation time %.1f steps; the chain is %.1f of them long", s.MaxTau, s.ChainTaus)
	if !strings.Contains(errOut, want) {
		t.Errorf("no line %q in\n%s", want, errOut)
	}
	txt, _ := os.ReadFile(filepath.Join(run, "summary.txt"))
	if !strings.Contains(string(txt), fmt.Sprintf("largest tau %.1f steps", s.MaxTau)) {
		t.Errorf("summary.txt states another tau than %.1f", s.MaxTau)
	}
	lines := strings.Split(errOut, "\n")
	var last string
	for _, l := range lines {
		if strings.HasPrefix(l, "chord: step ") {
			last = l
		}
	}
	if last == "" || strings.Contains(last, "tau") {
		t.Errorf("final progress line %q: want one, without a tau of its own", last)
	}
}
