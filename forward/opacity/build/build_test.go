package build_test

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"chord/forward/opacity"
	"chord/forward/opacity/build"
	"chord/forward/opacity/hitran"
	"chord/forward/opacity/lbl"
	"chord/internal/testenv"
)

// grid returns lo..hi cm^-1 in steps of step, in m^-1.
func grid(lo, hi, step float64) []float64 {
	n := int(math.Round((hi-lo)/step)) + 1
	g := make([]float64, n)
	for i := range g {
		g[i] = 100 * (lo + float64(i)*step)
	}
	return g
}

// TestReadLinesHITRAN reads the HITRAN2012 CO list with molparam and
// TIPS-2011 (../shared/data, SOURCES.md): the lines kept are those the
// HITRAN reader gives for the grid widened by the cut-off, the gas is
// HITRAN molecule 5, CO (HITRAN's molparam numbering), the files are
// listed in the order read, and the notes say what was read.
func TestReadLinesHITRAN(t *testing.T) {
	par := filepath.Join(testenv.SharedData(t, "hitran-lines"), "05_hit12_CO_full.par")
	part := testenv.SharedData(t, "partition")
	mp, tips := filepath.Join(part, "molparam_hitran.txt"), filepath.Join(part, "parsum2011_tips.dat")
	var notes []string
	obs := lbl.Observer{Note: func(m string) { notes = append(notes, m) }}
	l, err := build.ReadLines(&build.Source{Files: []string{par, par}, MolParam: mp, TIPS: tips}, grid(2100, 2200, 0.5), 10, obs)
	if err != nil {
		t.Fatal(err)
	}
	want, err := hitran.ReadLineFile(par, hitran.LineFilter{NuMin: 2090, NuMax: 2210})
	if err != nil {
		t.Fatal(err)
	}
	if l.Gas != "CO" || len(l.Lines) != len(want) || l.Iso[lbl.IsoKey{Mol: 5, Iso: 1}].Q == nil {
		t.Errorf("gas %q, %d lines (the reader gives %d without the repeated file), CO 26 partition table %v",
			l.Gas, len(l.Lines), len(want), l.Iso[lbl.IsoKey{Mol: 5, Iso: 1}].Q)
	}
	if strings.Join(l.Files, " ") != strings.Join([]string{mp, tips, par, par}, " ") {
		t.Errorf("files %v", l.Files)
	}
	if len(notes) != 3 || !strings.HasPrefix(notes[0], "partition sums for ") || !strings.HasPrefix(notes[1], "reading HITRAN line list ") {
		t.Errorf("notes %q", notes)
	}
	// The default cut-off (25 cm^-1) widens the window when none is given.
	l25, err := build.ReadLines(&build.Source{Files: []string{par}, MolParam: mp, Gas: "carbon monoxide"}, grid(2100, 2200, 0.5), 0, lbl.Observer{})
	if err != nil {
		t.Fatal(err)
	}
	want25, err := hitran.ReadLineFile(par, hitran.LineFilter{NuMin: 2075, NuMax: 2225})
	if err != nil {
		t.Fatal(err)
	}
	if l25.Gas != "carbon monoxide" || len(l25.Lines) != len(want25) {
		t.Errorf("gas %q, %d lines; want the given name and %d lines", l25.Gas, len(l25.Lines), len(want25))
	}
}

// TestReadLinesErrors: misuse of a Source field is an *OptionError naming
// the field; other problems are plain errors naming the files.
func TestReadLinesErrors(t *testing.T) {
	hl := testenv.SharedData(t, "hitran-lines")
	part := testenv.SharedData(t, "partition")
	co, co2 := filepath.Join(hl, "CO_fragment_3.7_radis.par"), filepath.Join(hl, "CO2_fragment_3000_radis.par")
	mp := filepath.Join(part, "molparam_hitran.txt")
	def := filepath.Join(testenv.SharedData(t, "exomol"), "40Ca-1H__Yadin.def")
	nu := grid(1, 4000, 1)
	for i, c := range []struct {
		src    build.Source
		option string // "" for a plain error
		want   string
	}{
		{build.Source{}, "Files", "no line-list files"},
		{build.Source{Files: []string{def, co}}, "Files", "not both"},
		{build.Source{Files: []string{def, def}}, "Files", "not both or several"},
		{build.Source{Files: []string{def}, MolParam: mp}, "MolParam", "ExoMol lists bring their own states"},
		{build.Source{Files: []string{def}, Partition: []build.PartitionFile{{Path: "a.pf"}, {Path: "b.pf"}}}, "Partition", "at most one partition file"},
		{build.Source{Files: []string{co}, MolParam: mp, Broad: []string{"x__H2.broad"}}, "Broad", "ExoMol line lists only"},
		{build.Source{Files: []string{co}}, "MolParam", "molparam table"},
		{build.Source{Files: []string{co}, MolParam: mp, Gamma: 0.05}, "Gamma", "ExoMol line lists only"},
		{build.Source{Files: []string{co}, MolParam: mp, Partition: []build.PartitionFile{{Iso: lbl.IsoKey{Mol: 5, Iso: 99}, Path: "q.txt"}}}, "Partition", "not in the molparam table"},
		{build.Source{Files: []string{co, co2}, MolParam: mp}, "", "2 molecules (CO (5), CO2 (2)); a table is one gas"},
		{build.Source{Files: []string{filepath.Join(hl, "missing.par")}, MolParam: mp}, "", "missing.par"},
	} {
		_, err := build.ReadLines(&c.src, nu, 0, lbl.Observer{})
		var oe *build.OptionError
		isOpt := errors.As(err, &oe)
		switch {
		case err == nil || !strings.Contains(err.Error(), c.want):
			t.Errorf("case %d: error %v, want one containing %q", i, err, c.want)
		case c.option != "" && (!isOpt || oe.Option != c.option):
			t.Errorf("case %d: error %v is not an OptionError for %s", i, err, c.option)
		case c.option == "" && isOpt:
			t.Errorf("case %d: error %v is an OptionError for %s", i, err, oe.Option)
		}
	}
	// No line within the cut-off of the grid.
	if _, err := build.ReadLines(&build.Source{Files: []string{co}, MolParam: mp}, grid(9000, 9100, 1), 0, lbl.Observer{}); err == nil ||
		!strings.Contains(err.Error(), "no lines within 25 cm^-1") {
		t.Errorf("grid beyond the lines: %v", err)
	}
}

// TestTable: the point-value table of a list is the one lbl.BuildXSec
// makes, bit for bit, with the files recorded and the build noted.
func TestTable(t *testing.T) {
	src := filepath.Join(t.TempDir(), "line.par")
	if err := os.WriteFile(src, []byte("one line\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	l := &build.Lines{
		Gas:   "CO",
		Lines: []lbl.Line{{Mol: 5, Iso: 1, Nu: 2000, S: 1e-20, GammaAir: 0.06}},
		Iso:   lbl.IsoData{{Mol: 5, Iso: 1}: {Name: "CO_26", Q296: 107.42, Mass: 27.994915, Q: &lbl.RigidRotor{Q296: 107.42, Exponent: 1}}},
		Files: []string{src},
	}
	var notes []string
	s := lbl.XSecSettings{Log10P: []float64{math.Log10(1e-3 * lbl.StandardAtmosphere)}, T: []float64{lbl.TRef, 500},
		Wavenumber: grid(1999, 2001, 0.0005), Observer: lbl.Observer{Note: func(m string) { notes = append(notes, m) }}}
	got, err := l.Table(s)
	if err != nil {
		t.Fatal(err)
	}
	s.Gas, s.Observer = "CO", lbl.Observer{}
	want, err := lbl.BuildXSec(l.Lines, l.Iso, &s)
	if err != nil {
		t.Fatal(err)
	}
	for k := range want.Sigma {
		if math.Float32bits(got.Sigma[k]) != math.Float32bits(want.Sigma[k]) {
			t.Fatalf("value %d is %g, BuildXSec gives %g", k, got.Sigma[k], want.Sigma[k])
		}
	}
	if len(notes) != 1 || !strings.HasSuffix(notes[0], "point values") {
		t.Errorf("notes %q", notes)
	}
	if srcs, err := opacity.ParseSources(got.Meta[opacity.MetaSources]); err != nil || len(srcs) != 1 || srcs[0].File != "line.par" {
		t.Errorf("sources %v (%v)", srcs, err)
	}
}
