package main

import (
	"bytes"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"chord/forward/opacity/tablefile"
	"chord/internal/synthlines"
	"chord/internal/testenv"
)

// TestOpacityBuildK builds a CO k-table from the HITRAN2012 CO list with
// H2/He-free air widths on R = 100 bins of the anchored grid 4.5-4.8 um,
// with TIPS-2021 sums named by their headers: the bins are exp(k/100) um
// (k = 151 to 156: 4.5267 to 4.7588 um),
// the default pressure axis (55 points, 1e-7-100 bar) is used with the
// temperatures asked, and `chord opacity info` shows the table in bar,
// um and K with its quadrature, partition sources, cuts and line counts,
// and warns when the fine grid was coarser than the Doppler rule.
func TestOpacityBuildK(t *testing.T) {
	lines := filepath.Join(testenv.SharedData(t, "hitran-lines"), "05_hit12_CO_full.par")
	part := testenv.SharedData(t, "partition")
	out := t.TempDir()
	stdout, stderr, err := runBuild(t, "-o", out, "--lines", lines, "--molparam", filepath.Join(part, "molparam_hitran.txt"),
		"--partition", filepath.Join(part, "q26_CO_26_tips2021_hapi.txt"), "--tips", filepath.Join(part, "parsum2011_tips.dat"),
		"--wavelength-range-um", "4.5:4.8", "--resolving-power", "100", "--temperatures-k", "500,1000", "--fine-resolving-power", "2e5", "--mixture", "H2:0.85,He:0.15")
	if err != nil {
		t.Fatalf("%v\n%s", err, stderr)
	}
	path := filepath.Join(out, "CO.k.parquet")
	if strings.TrimSpace(stdout) != path {
		t.Errorf("stdout %q", stdout)
	}
	k, err := tablefile.ReadK(path)
	if err != nil {
		t.Fatal(err)
	}
	if k.Bins() != 5 || math.Abs(k.Lo[0]-math.Exp(151.0/100)*1e-6) > 1e-18 || len(k.Log10P) != 55 || len(k.G) != 16 {
		t.Errorf("%d bins from %g m, %d pressures, %d nodes", k.Bins(), k.Lo[0], len(k.Log10P), len(k.G))
	}
	if !strings.Contains(stderr, "building k-table of CO") || !strings.Contains(stderr, "no broadening parameters") && !strings.Contains(stderr, "use the air values") {
		t.Errorf("stderr lacks the build note or the fallback warning:\n%s", stderr)
	}
	if _, err := os.Stat(filepath.Join(out, ".CO.k.checkpoint")); !os.IsNotExist(err) {
		t.Errorf("checkpoint left after a finished build: %v", err)
	}
	info, err := runChord(t, "opacity", "info", path)
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{
		"k-distribution of CO (kind ktable",
		"55 pressures x 2 temperatures x 5 bins x 16 g-points",
		"pressure:     1e-07 .. 100 bar, 6 points per decade",
		"temperature:  2 points: 500, 1000 K",
		"bins:         5, 4.52673 .. 4.75882 um, resolving power 100.001",
		"quadrature:   16 nodes",
		"mixture H2:0.85,He:0.15",
		"5/1: TIPS-2021 (q26_CO_26_tips2021_hapi.txt)",
		"cut-off 25 cm^-1; lines below 0.0001 of the strongest",
		"binned into the pseudo-continuum",
		"WARNING:      the fine grid (resolving power 2e+05) was coarser than a third of the Doppler half-width at 500 K",
	} {
		if !strings.Contains(info, want) {
			t.Errorf("info lacks %q:\n%s", want, info)
		}
	}
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--wavelength-range-um", "4.5:4.8", "--resolving-power", "100", "--wavenumber-range", "2000:2100", "--wavenumber-step", "1"}, "--wavenumber-range makes a cross-section table"},
		{[]string{"--wavenumber-range", "2000:2100", "--wavenumber-step", "1", "--weak-cut", "1e-3"}, "--weak-cut applies to k-tables"},
		{[]string{"--wavelength-range-um", "4.5:4.51", "--resolving-power", "10"}, "no bin of the grid"},
		{[]string{"--wavelength-range-um", "4.5:4.8", "--resolving-power", "100", "--quadrature", "12,4@1.5"}, "--quadrature"},
		{[]string{"--wavelength-range-um", "4.5:4.8", "--resolving-power", "100", "--mixture", "H2:0.5"}, "--mixture: broadening mixture: fractions sum to 0.5"},
	} {
		args := append([]string{"-o", t.TempDir(), "--lines", lines, "--molparam", filepath.Join(part, "molparam_hitran.txt")}, c.args...)
		if _, _, err := runBuild(t, args...); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%v: %v, want %q", c.args, err, c.want)
		}
	}
}

// TestOpacityBuildKInterrupt runs the chord binary on a synthetic 1e5-line
// list in bzip2 chunks, stops it with SIGINT once its checkpoint holds a
// window: it exits with code 3, says how to resume, and leaves no
// temporary table file. Run again, it resumes from the checkpoint and
// writes the same table as a build never stopped, then removes the
// checkpoint.
func TestOpacityBuildKInterrupt(t *testing.T) {
	if testing.Short() {
		t.Skip("builds and runs the chord binary")
	}
	bin := testenv.BuildChord(t)
	dir := t.TempDir()
	def, err := synthlines.Write(synthlines.Spec{Dir: dir, Name: "1H2-16O__Synth", Lines: 100_000, NuMin: 2000, NuMax: 2400, Chunk: 100, Compress: "bz2", States: 5000, Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	args := func(out string) []string {
		return []string{"opacity", "build", "-o", out, "--lines", def, "--wavelength-range-um", "4.2:4.95", "--resolving-power", "200", "--pressure-range-bar", "1e-4:1", "--pressure-points", "3",
			"--temperatures-k", "600,1200", "--fine-resolving-power", "2e5", "--window-lines", "5000", "-j", "2"}
	}
	whole := filepath.Join(dir, "whole")
	if b, err := exec.Command(bin, args(whole)...).CombinedOutput(); err != nil {
		t.Fatalf("%v\n%s", err, b)
	}
	out := filepath.Join(dir, "stopped")
	cmd := exec.Command(bin, args(out)...)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	cp := filepath.Join(out, ".H2O.k.checkpoint")
	for i := 0; i < 3000; i++ {
		if st, err := os.Stat(cp); err == nil && st.Size() > 200 {
			break
		}
		time.Sleep(5 * time.Millisecond)
	}
	cmd.Process.Signal(os.Interrupt)
	err = cmd.Wait()
	if code := exitCode(err); code != exitInterrupted {
		t.Fatalf("exit code %d after SIGINT, want %d\n%s", code, exitInterrupted, stderr.String())
	}
	if !strings.Contains(stderr.String(), "run the same command again to resume") {
		t.Errorf("no resume hint:\n%s", stderr.String())
	}
	if tmp, _ := filepath.Glob(filepath.Join(out, ".H2O.k.parquet.tmp-*")); len(tmp) > 0 || fileExists(filepath.Join(out, "H2O.k.parquet")) {
		t.Errorf("table or temporary files after the stop: %v", tmp)
	}
	b, err := exec.Command(bin, args(out)...).CombinedOutput()
	if err != nil || !strings.Contains(string(b), "resuming: ") {
		t.Fatalf("resume: %v\n%s", err, b)
	}
	a, err := tablefile.ReadK(filepath.Join(whole, "H2O.k.parquet"))
	if err != nil {
		t.Fatal(err)
	}
	r, err := tablefile.ReadK(filepath.Join(out, "H2O.k.parquet"))
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(a.K, r.K) {
		t.Error("resumed table differs from the one built without a stop")
	}
	if fileExists(cp) {
		t.Error("checkpoint left after the resumed build finished")
	}
}

func fileExists(p string) bool {
	_, err := os.Stat(p)
	return err == nil
}
