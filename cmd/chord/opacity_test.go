package main

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"chord/forward/opacity"
	"chord/forward/opacity/tablefile"
)

// runChord runs the chord command line with args and returns its output.
func runChord(t *testing.T, args ...string) (string, error) {
	t.Helper()
	app := newApp()
	var out, errOut bytes.Buffer
	app.Writer, app.ErrWriter = &out, &errOut
	err := runApp(app, append([]string{"chord"}, args...))
	return out.String(), err
}

// TestOpacityInfo writes a small demo cross-section table and a CIA table
// and checks what `chord opacity info` says about them. The wavelength
// range is 1e6/wavenumber in um for wavenumbers in m^-1 (unit definition):
// 1e4..1e5 m^-1 is 100..1000 cm^-1 and 10..100 um.
func TestOpacityInfo(t *testing.T) {
	dir := t.TempDir()
	x := &opacity.XSecTable{
		Gas:        "H2O",
		Log10P:     []float64{0, 2, 4},
		T:          []float64{300, 1000},
		Wavenumber: []float64{1e4, 5e4, 1e5},
		Sigma:      make([]float32, 18),
		Meta: map[string]string{
			opacity.MetaProgramVersion: "9.9.9-test",
			opacity.MetaDemo:           "true",
			opacity.MetaBuildSettings:  `{"cutoff_cm-1":25}`,
			"generator_version":        "7",
		},
	}
	for i := range x.Sigma {
		x.Sigma[i] = float32(i) * 1e-26
	}
	xp := filepath.Join(dir, "H2O.parquet")
	if err := tablefile.WriteXSec(xp, x, false); err != nil {
		t.Fatal(err)
	}
	out, err := runChord(t, "opacity", "info", xp)
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{
		"DEMO TABLE:   demo, not for science",
		"cross-sections of H2O (kind xsec, schema 1)",
		"3 pressures x 2 temperatures x 3 wavenumbers = 18 values",
		"pressure:     3 points, 1e-05 .. 0.1 bar",
		"2 points, 300 .. 1000 K",
		"wavenumber:   3 points, 100 .. 1000 cm^-1",
		"wavelength:   10 .. 100 um",
		"sigma in cm^2 molecule^-1: non-zero 1e-22 .. 1.7e-21; 1 of 18 zero", // 1 m^2 = 1e4 cm^2 (unit definition)
		"the file stores SI: log10_pressure in log10(Pa)",
		"program:      9.9.9-test",
		"sources:      (none recorded)",
		`build:        {"cutoff_cm-1":25}`,
		"generator_version = 7",
		"(verified)",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q:\n%s", want, out)
		}
	}

	src := filepath.Join(dir, "lines.par")
	os.WriteFile(src, []byte("abc"), 0o644)
	sm, err := opacity.SourcesMeta(src)
	if err != nil {
		t.Fatal(err)
	}
	c := &opacity.CIATable{
		Pair: [2]string{"H2", "He"}, T: []float64{200, 400}, Wavenumber: []float64{2e4, 4e4},
		K:    []float64{1e-60, 2e-60, 3e-60, math.SmallestNonzeroFloat64},
		Meta: map[string]string{opacity.MetaProgramVersion: "9.9.9-test", opacity.MetaSources: sm},
	}
	cp := filepath.Join(dir, "H2-He.parquet")
	if err := tablefile.WriteCIA(cp, c, false); err != nil {
		t.Fatal(err)
	}
	out, err = runChord(t, "opacity", "info", cp)
	if err != nil {
		t.Fatal(err)
	}
	// SHA-256("abc"): FIPS 180-2, appendix B.1.
	for _, want := range []string{
		"collision-induced absorption of H2-He",
		"2 temperatures x 2 wavenumbers",
		"k in cm^5 molecule^-2: non-zero 4.94066e-314 .. 3e-50", // 1 m^5 = 1e10 cm^5 (unit definition)
		"lines.par  sha256 ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad  (3 bytes)",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q:\n%s", want, out)
		}
	}
	if strings.Contains(out, "demo") {
		t.Errorf("science table described as demo:\n%s", out)
	}

	if _, err := runChord(t, "opacity", "info"); err == nil || !strings.Contains(err.Error(), "want one table file") {
		t.Errorf("no argument: err = %v", err)
	}
	bad := filepath.Join(dir, "bad.parquet")
	os.WriteFile(bad, []byte("not parquet"), 0o644)
	if _, err := runChord(t, "opacity", "info", bad); err == nil || !strings.Contains(err.Error(), bad) {
		t.Errorf("bad file: err = %v", err)
	}
}
