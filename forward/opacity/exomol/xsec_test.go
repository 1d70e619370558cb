package exomol

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"chord/forward/opacity"
	"chord/forward/opacity/internal/opacitytest"
	"chord/internal/testenv"
)

// TestTwoColumnNaH reads the ExoMol NaH cross-section file (ExoCross output,
// 25001 rows, 0-25000 cm^-1 in 1 cm^-1 steps at 296 K; ../shared/data
// SOURCES.md, exomol/). Each value must be the file's, converted from cm^2
// to m^2 (x 1e-4, unit definition).
func TestTwoColumnNaH(t *testing.T) {
	path := filepath.Join(testenv.SharedData(t, "exomol"), "23Na-1H__Rivlin_296K_gauss0.5_0-25000.xsec")
	x, err := ReadXSec(path, 1e5, 296)
	if err != nil {
		t.Fatal(err)
	}
	if len(x.Wavenumber) != 25001 || x.Wavenumber[0] != 0 || x.Wavenumber[25000] != 25000*100 {
		t.Fatalf("%d rows, %g-%g m^-1; SOURCES.md: 25001 rows, 0-25000 cm^-1", len(x.Wavenumber), x.Wavenumber[0], x.Wavenumber[len(x.Wavenumber)-1])
	}
	lines := opacitytest.FileLines(t, path)
	for _, i := range []int{0, 1, 2, 12345, 24983, 25000} {
		f := strings.Fields(lines[i+1])
		nu, _ := strconv.ParseFloat(f[0], 64)
		sig, _ := strconv.ParseFloat(f[1], 64)
		if x.Wavenumber[i] != nu*100 || x.Sigma[i] != sig*1e-4 {
			t.Errorf("row %d: %g m^-1, %g m^2; file %g cm^-1, %g cm^2", i, x.Wavenumber[i], x.Sigma[i], nu, sig)
		}
	}
	tab, err := AssembleXSec("NaH", []*XSecPoint{x}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(tab.Log10P) != 1 || tab.Log10P[0] != 5 || tab.T[0] != 296 || len(tab.Sigma) != 25001 {
		t.Errorf("table %v Pa (log10), %v K, %d values", tab.Log10P, tab.T, len(tab.Sigma))
	}
	// The strongest value of the file, 7.53912501E-16 cm^2 at 24983 cm^-1.
	if got := tab.Sigma[24983]; got != float32(7.53912501e-20) {
		t.Errorf("sigma(24983 cm^-1) = %g m^2, want 7.53912501e-20", got)
	}
}

func writeTwoCol(t *testing.T, path string, nu []float64, sig func(nu float64) float64) {
	t.Helper()
	var sb strings.Builder
	sb.WriteString("# synthetic test file\n")
	for _, v := range nu {
		fmt.Fprintf(&sb, "%16.8E %16.8E\n", v, sig(v))
	}
	if err := os.WriteFile(path, []byte(sb.String()), 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestAssembleXSec builds a 2 P x 3 T table from six synthetic files and
// checks placement, units, grid checks and resampling (linear, exact for a
// linear function of wavenumber up to float32 rounding: relative 6e-8).
func TestAssembleXSec(t *testing.T) {
	dir := t.TempDir()
	nu := []float64{1000, 1001, 1002, 1004, 1008}
	sig := func(p, temp float64) func(float64) float64 {
		return func(v float64) float64 { return 1e-20 * (1 + p/1e5) * (temp / 100) * (v - 990) }
	}
	var pts []*XSecPoint
	for _, p := range []float64{1e5, 1e3} {
		for _, temp := range []float64{300, 100, 200} {
			path := filepath.Join(dir, fmt.Sprintf("x_%g_%g.txt", p, temp))
			writeTwoCol(t, path, nu, sig(p, temp))
			x, err := ReadXSec(path, p, temp)
			if err != nil {
				t.Fatal(err)
			}
			pts = append(pts, x)
		}
	}
	tab, err := AssembleXSec("CO", pts, nil)
	if err != nil {
		t.Fatal(err)
	}
	opacitytest.EqualF64(t, "log10 P", tab.Log10P, []float64{3, 5})
	opacitytest.EqualF64(t, "T", tab.T, []float64{100, 200, 300})
	if got, want := tab.Row(1, 0)[3], float32(sig(1e5, 100)(1004)*1e-4); got != want {
		t.Errorf("sigma(1e5 Pa, 100 K, 1004 cm^-1) = %g, want %g", got, want)
	}
	src, err := opacity.ParseSources(tab.Meta[opacity.MetaSources])
	if err != nil || len(src) != 6 {
		t.Errorf("sources %v, %v", src, err)
	}

	grid := []float64{999 * 100, 1003 * 100, 1006 * 100, 1009 * 100}
	rs, err := AssembleXSec("CO", pts, grid)
	if err != nil {
		t.Fatal(err)
	}
	r := rs.Row(0, 2) // 1e3 Pa, 300 K
	f := sig(1e3, 300)
	for k, want := range []float64{0, f(1003) * 1e-4, f(1006) * 1e-4, 0} {
		if math.Abs(float64(r[k])-want) > 1e-7*want {
			t.Errorf("resampled sigma(%g cm^-1) = %g, want %g (linear; 0 outside the file's range)", grid[k]/100, r[k], want)
		}
	}

	// Incomplete grid, duplicate point, different axes, unsorted grid.
	if _, err := AssembleXSec("CO", pts[:5], nil); err == nil || !strings.Contains(err.Error(), "incomplete") || !strings.Contains(err.Error(), "1000 Pa, 200 K") {
		t.Errorf("incomplete grid: err = %v", err)
	}
	dup := append(append([]*XSecPoint(nil), pts...), pts[2])
	if _, err := AssembleXSec("CO", dup, nil); err == nil || !strings.Contains(err.Error(), "both at") {
		t.Errorf("duplicate point: err = %v", err)
	}
	other := filepath.Join(dir, "other.txt")
	writeTwoCol(t, other, []float64{1000, 1001, 1002, 1004, 1009}, sig(1e3, 300))
	ox, err := ReadXSec(other, 1e3, 300)
	if err != nil {
		t.Fatal(err)
	}
	mixed := append(append([]*XSecPoint(nil), pts[:5]...), ox)
	if _, err := AssembleXSec("CO", mixed, nil); err == nil || !strings.Contains(err.Error(), "different wavenumbers") || !strings.Contains(err.Error(), other) {
		t.Errorf("different axes: err = %v", err)
	}
	if _, err := AssembleXSec("CO", pts, []float64{2e5, 1e5}); err == nil || !strings.Contains(err.Error(), "ascending") {
		t.Errorf("unsorted grid: err = %v", err)
	}
}

func TestTwoColumnBadInput(t *testing.T) {
	cases := []struct {
		name, text, want string
		line             int
	}{
		{"empty", "", "empty", 0},
		{"comments only", "# nothing\n\n", "empty", 0},
		{"non-numeric", "1000 1e-20\n1001 x\n", "not a number", 2},
		{"three columns", "1000 1e-20 5\n", "3 fields", 1},
		{"unsorted", "1000 1e-20\n1002 1e-20\n1001 1e-20\n", "ascending", 3},
		{"repeated", "1000 1e-20\n1000 1e-20\n", "ascending", 2},
		{"negative", "1000 -1e-20\n", "negative", 1},
		{"infinite", "1000 +Inf\n", "finite", 1},
	}
	dir := t.TempDir()
	for i, c := range cases {
		path := filepath.Join(dir, fmt.Sprintf("case%d.xsec", i))
		os.WriteFile(path, []byte(c.text), 0o644)
		_, err := ReadXSec(path, 1e5, 300)
		if err == nil || !strings.Contains(err.Error(), path) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%d %s: err = %v, want it to name the file and say %q", i, c.name, err, c.want)
			continue
		}
		if c.line > 0 && !strings.Contains(err.Error(), fmt.Sprintf("line %d:", c.line)) {
			t.Errorf("%d %s: err = %v, want line %d", i, c.name, err, c.line)
		}
	}
	path := filepath.Join(dir, "ok.xsec")
	os.WriteFile(path, []byte("1000 1e-20\n"), 0o644)
	for _, pt := range [][2]float64{{0, 300}, {1e5, -1}, {math.NaN(), 300}} {
		if _, err := ReadXSec(path, pt[0], pt[1]); err == nil {
			t.Errorf("stated P = %g, T = %g: no error", pt[0], pt[1])
		}
	}
}
