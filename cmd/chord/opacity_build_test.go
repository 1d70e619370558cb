package main

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"chord/forward/opacity"
	"chord/forward/opacity/hitran"
	"chord/forward/opacity/lbl"
	"chord/forward/opacity/tablefile"
	"chord/internal/testenv"
)

// runBuild runs "chord opacity build ARGS..." as main does.
func runBuild(t *testing.T, args ...string) (stdout, stderr string, err error) {
	t.Helper()
	var o, e bytes.Buffer
	app := newApp()
	app.Writer, app.ErrWriter = &o, &e
	err = runApp(app, append([]string{"chord", "opacity", "build"}, args...))
	return o.String(), e.String(), err
}

func TestOpacityBuildDemo(t *testing.T) {
	out := filepath.Join(t.TempDir(), "tables")
	stdout, stderr, err := runBuild(t, "--demo", "-o", out)
	if err != nil {
		t.Fatal(err)
	}
	set, err := tablefile.LoadDir(out)
	if err != nil {
		t.Fatal(err)
	}
	if !set.Demo || len(set.K) != 8 || len(set.CIA) != 2 {
		t.Errorf("demo tables: Demo %v, %d gases, %d CIA pairs", set.Demo, len(set.K), len(set.CIA))
	}
	if strings.Count(stdout, ".parquet\n") != 10 || !strings.Contains(stderr, opacity.DemoNote) {
		t.Errorf("stdout %q, stderr %q: want the 10 files and the demo note", stdout, stderr)
	}
	// A second run refuses to overwrite, before building anything.
	_, _, err = runBuild(t, "--demo", "-o", out, "-q")
	if err == nil || !strings.Contains(err.Error(), "use --force") {
		t.Errorf("second --demo run: %v, want a refusal to overwrite", err)
	}
}

// TestOpacityBuildHITRAN builds a small CO table from the HITRAN2012 CO
// list and checks that the file holds what the line-by-line engine gives
// for the same lines and grid, with its sources recorded; a second run
// needs --force.
func TestOpacityBuildHITRAN(t *testing.T) {
	lines := filepath.Join(testenv.SharedData(t, "hitran-lines"), "05_hit12_CO_full.par")
	part := testenv.SharedData(t, "partition")
	molparam, tips := filepath.Join(part, "molparam_hitran.txt"), filepath.Join(part, "parsum2011_tips.dat")
	out := t.TempDir()
	args := []string{"-o", out, "--lines", lines, "--molparam", molparam, "--tips", tips,
		"--pressure-range-bar", "1e-3:1", "--pressure-points", "3", "--temperatures-k", "296,600", "--wavenumber-range", "2100:2200", "--wavenumber-step", "0.05", "-q"}
	stdout, _, err := runBuild(t, args...)
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(out, "CO.parquet")
	if strings.TrimSpace(stdout) != path {
		t.Errorf("stdout %q, want %q", stdout, path)
	}
	got, err := tablefile.ReadXSec(path)
	if err != nil {
		t.Fatal(err)
	}
	if len(got.Log10P) != 3 || math.Abs(got.Log10P[0]-2) > 1e-12 || math.Abs(got.Log10P[2]-5) > 1e-12 ||
		len(got.T) != 2 || len(got.Wavenumber) != 2001 || math.Abs(got.Wavenumber[2000]-220000) > 1e-6 {
		t.Fatalf("axes: log10 P %v, T %v, %d wavenumbers", got.Log10P, got.T, len(got.Wavenumber))
	}
	src, err := opacity.ParseSources(got.Meta[opacity.MetaSources])
	if err != nil || len(src) != 3 {
		t.Errorf("sources %v (%v), want molparam, TIPS and the line list", src, err)
	}
	// The same build through the library.
	iso, err := hitran.ReadMolParam(molparam)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := hitran.ReadTIPSTable(tips, iso); err != nil {
		t.Fatal(err)
	}
	l, err := hitran.ReadLineFile(lines, hitran.LineFilter{NuMin: 2075, NuMax: 2225})
	if err != nil {
		t.Fatal(err)
	}
	want, err := lbl.BuildXSec(l, iso, &lbl.XSecSettings{Gas: "CO", Log10P: got.Log10P, T: got.T, Wavenumber: got.Wavenumber})
	if err != nil {
		t.Fatal(err)
	}
	for k := range want.Sigma {
		if got.Sigma[k] != want.Sigma[k] {
			t.Fatalf("sigma[%d] = %g from the command, %g from BuildXSec", k, got.Sigma[k], want.Sigma[k])
		}
	}
	if _, _, err := runBuild(t, args...); err == nil || !strings.Contains(err.Error(), "use --force") {
		t.Errorf("second run: %v, want a refusal naming --force", err)
	}
	if _, _, err := runBuild(t, append(args, "--force")...); err != nil {
		t.Errorf("second run with --force: %v", err)
	}
}

// TestOpacityBuildExoMolAndCIA builds a CaH table from the ExoMol files
// (gas name from the .def formula) and a CIA table from the HITRAN N2-N2
// file on the same grid.
func TestOpacityBuildExoMolAndCIA(t *testing.T) {
	def := filepath.Join(testenv.SharedData(t, "exomol"), "40Ca-1H__Yadin.def")
	cia := filepath.Join(testenv.SharedData(t, "cia"), "N2-N2_2011.cia")
	out := t.TempDir()
	stdout, stderr, err := runBuild(t, "-o", out, "--lines", def, "--cia", cia,
		"--pressure-range-bar", "1e-3:1", "--pressure-points", "2", "--temperatures-k", "500,1000", "--wavelength-range-um", "2:1000", "--resolving-power", "200", "--cross-sections") // down to 10 cm^-1: the line window starts at 0
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(stdout, "CaH.parquet") || !strings.Contains(stdout, "N2-N2.parquet") || !strings.Contains(stderr, "ExoMol") {
		t.Errorf("stdout %q stderr %q", stdout, stderr)
	}
	set, err := tablefile.LoadDir(out)
	if err != nil {
		t.Fatal(err)
	}
	x := set.XSec["CaH"]
	if x == nil || set.Demo || len(set.CIA) != 1 || len(set.CIA[0].Wavenumber) != len(x.Wavenumber) {
		t.Fatalf("set: %+v", set)
	}
	peak := float32(0)
	for _, v := range x.Sigma {
		peak = max(peak, v)
	}
	if !(peak > 0) {
		t.Error("CaH table is all zero")
	}
}

// TestOpacityBuildErrors checks that bad invocations are clear errors.
func TestOpacityBuildErrors(t *testing.T) {
	dir := t.TempDir()
	par := filepath.Join(dir, "x.par")
	if err := os.WriteFile(par, []byte("not a line list\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	mp := filepath.Join(dir, "molparam.txt")
	if err := os.WriteFile(mp, []byte("   CO (5)\n         26  9.86544E-01    1.0712E+02    1     27.994915\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	def := filepath.Join(dir, "a__b.def")
	if err := os.WriteFile(def, []byte("EXOMOL.def # ID\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	grid := []string{"--wavenumber-range", "2000:2100", "--wavenumber-step", "1"}
	cases := []struct {
		args []string
		want string
	}{
		{[]string{}, "Required flag"},
		{[]string{"-o", dir}, "nothing to build"},
		{[]string{"-o", dir, "--lines", par, "--molparam", mp}, "need bins or a grid"},
		{append([]string{"-o", dir, "--lines", par}, grid...), "molparam"},
		{append([]string{"-o", dir, "--lines", par, "--molparam", mp}, grid...), "x.par:1"},
		{append([]string{"-o", dir, "--lines", par, "--molparam", mp, "--pressure-range-bar", "100:1", "--pressure-points", "5"}, grid...), "--pressure-range-bar"},
		{append([]string{"-o", dir, "--lines", par, "--molparam", mp, "--pressure-range-bar", "a:b", "--pressure-points", "3"}, grid...), "give LO:HI"},
		{append([]string{"-o", dir, "--lines", par, "--molparam", mp, "--temperatures-k", "300,200"}, grid...), "strictly ascending"},
		{append([]string{"-o", dir, "--lines", par, "--molparam", mp, "--temperatures-k", "0,200"}, grid...), "positive temperature"},
		{[]string{"-o", dir, "--lines", par, "--molparam", mp, "--wavenumber-range", "2100:2000", "--wavenumber-step", "1"}, "--wavenumber-range"},
		{[]string{"-o", dir, "--lines", par, "--molparam", mp, "--wavelength-range-um", "1:2", "--cross-sections"}, "--wavelength-range-um needs --resolving-power"},
		{[]string{"-o", dir, "--lines", par, "--molparam", mp, "--wavenumber-range", "1:2", "--wavenumber-step", "1", "--wavelength-range-um", "1:2", "--resolving-power", "3", "--cross-sections"}, "not both"},
		{append([]string{"-o", dir, "--lines", par, "--molparam", mp, "--partition", "1-1=q.txt"}, grid...), "MOL/ISO=FILE"},
		{append([]string{"-o", dir, "--lines", par, "--molparam", mp, "--partition", "1/1=q.txt"}, grid...), "not in the molparam table"},
		{append([]string{"-o", dir, "--lines", def, "--lines", par}, grid...), "not both"},
		{append([]string{"-o", dir, "--lines", def, "--molparam", mp}, grid...), "--molparam: applies to HITRAN"},
		{append([]string{"-o", dir, "--lines", def}, grid...), "no isotopologue mass"},
		{append([]string{"-o", dir, "--lines", par, "--molparam", mp, "--abundance", "0.5"}, grid...), "ExoMol line lists only"},
		{append([]string{"-o", dir, "--demo"}, grid...), "--wavenumber-range cannot be used"},
		{[]string{"-o", dir, "--cia", par}, "x.par"},
		{[]string{"-o", dir, "--lines", par, "--molparam", mp, "--pressure-range-bar", "1e-5:1", "--pressure-points", "1000", "--wavenumber-range", "1000:3000", "--wavenumber-step", "0.001"}, "too large"},
		{[]string{"-o", dir, "stray"}, "unexpected argument"},
	}
	for i, c := range cases {
		_, _, err := runBuild(t, c.args...)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("case %d %v: error %v, want one containing %q", i, c.args, err, c.want)
		}
	}
	// Lines of two molecules make no single table.
	hl := testenv.SharedData(t, "hitran-lines")
	part := testenv.SharedData(t, "partition")
	_, _, err := runBuild(t, "-o", dir, "--lines", filepath.Join(hl, "CO_fragment_3.7_radis.par"), "--lines", filepath.Join(hl, "CO2_fragment_3000_radis.par"),
		"--molparam", filepath.Join(part, "molparam_hitran.txt"), "--wavenumber-range", "1:4000", "--wavenumber-step", "1", "--pressure-range-bar", "1:1", "--pressure-points", "1", "--temperatures-k", "296", "-q")
	if err == nil || !strings.Contains(err.Error(), "a table is one gas") {
		t.Errorf("two molecules: %v", err)
	}
}
