package main

import (
	"path/filepath"
	"strings"
	"testing"

	"chord/forward/opacity"
	"chord/forward/opacity/tablefile"
	"chord/internal/testenv"
)

// TestOpacityBuildCellAverage checks the --cell-average default: on for a
// grid far coarser than the lines at the lowest pressure (1 cm^-1 against
// CO's 0.0025 cm^-1 Doppler half-width at 1e-3 bar; the same criterion as
// BuildXSec's sampling warning, lbl.CoarseGridRatio), off for a grid
// that resolves them (0.02 cm^-1 against about 0.07 cm^-1 at 1 bar), and
// --cell-average=false or --cell-average overriding it. The table's
// build_settings say which; --demo refuses the flag.
func TestOpacityBuildCellAverage(t *testing.T) {
	lines := filepath.Join(testenv.SharedData(t, "hitran-lines"), "05_hit12_CO_full.par")
	part := testenv.SharedData(t, "partition")
	base := []string{"--lines", lines, "--molparam", filepath.Join(part, "molparam_hitran.txt"), "--tips", filepath.Join(part, "parsum2011_tips.dat"),
		"--temperature", "296,600"}
	for i, c := range []struct {
		args []string
		cell bool
	}{
		{[]string{"--pressure", "1e-3:1:2", "--wavenumber", "2100:2200:1"}, true},
		{[]string{"--pressure", "1e-3:1:2", "--wavenumber", "2100:2200:1", "--cell-average=false"}, false},
		{[]string{"--pressure", "1:1:1", "--wavenumber", "2140:2150:0.02"}, false},
		{[]string{"--pressure", "1:1:1", "--wavenumber", "2140:2150:0.02", "--cell-average"}, true},
	} {
		out := t.TempDir()
		_, stderr, err := runBuild(t, append(append([]string{"-o", out}, base...), c.args...)...)
		if err != nil {
			t.Fatalf("case %d: %v", i, err)
		}
		tab, err := tablefile.ReadXSec(filepath.Join(out, "CO.parquet"))
		if err != nil {
			t.Fatal(err)
		}
		if got := strings.Contains(tab.Meta[opacity.MetaBuildSettings], `"sampling":"cell means`); got != c.cell {
			t.Errorf("case %d: cell means %v, want %v (build settings %s)", i, got, c.cell, tab.Meta[opacity.MetaBuildSettings])
		}
		if want := map[bool]string{true: "cell means", false: "point values"}[c.cell]; !strings.Contains(stderr, want) {
			t.Errorf("case %d: progress %q does not say %q", i, stderr, want)
		}
	}
	if _, _, err := runBuild(t, "--demo", "-o", t.TempDir(), "--cell-average"); err == nil || !strings.Contains(err.Error(), "--cell-average cannot be used") {
		t.Errorf("--demo --cell-average: %v, want a refusal", err)
	}
}
