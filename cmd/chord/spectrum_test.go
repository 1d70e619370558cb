package main

import (
	"bytes"
	"encoding/csv"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"chord/internal/testenv"
)

func runSpectrumCmd(t *testing.T, args ...string) (string, string, error) {
	t.Helper()
	app := newApp()
	var out, errOut bytes.Buffer
	app.Writer, app.ErrWriter = &out, &errOut
	err := runApp(app, append([]string{"chord", "spectrum"}, args...))
	return out.String(), errOut.String(), err
}

// greySubNeptune is the sub-Neptune fixture with a grey absorber, 40
// layers at 700 K, a heavier planet and a 0.4-3 um model grid at R = 200.
func greySubNeptune(t *testing.T) *testenv.TOML {
	return testenv.Fixture(t, "sub-neptune.toml").
		Set("planet.mass_mearth", "7").Set("atmosphere.layers", "40").Set("atmosphere.temperature.temperature_k", "700").
		Set("opacity.grey_cross_section_m2", "1e-32").Set("spectrum.wavelength_min_um", "0.4").Set("spectrum.wavelength_max_um", "3").
		Set("spectrum.resolving_power", "200")
}

// spectrumModel is greySubNeptune as an unbinned model configuration (no
// parameters, no sampler), which needs no tables.
func spectrumModel(t *testing.T) *testenv.TOML {
	return greySubNeptune(t).DeleteTable("parameters").DeleteTable("sampler").Delete("spectrum.bin_resolving_power")
}

func readCSV(t *testing.T, path string) [][]string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	r := csv.NewReader(bytes.NewReader(b))
	r.Comment = '#'
	rows, err := r.ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return rows
}

func TestSpectrumCommand(t *testing.T) {
	dir := t.TempDir()
	cfg := filepath.Join(dir, "m.toml")
	if err := os.WriteFile(cfg, []byte(spectrumModel(t).String()), 0o644); err != nil {
		t.Fatal(err)
	}
	out, png := filepath.Join(dir, "s.csv"), filepath.Join(dir, "s.png")
	if _, _, err := runSpectrumCmd(t, "-c", cfg, "-o", out, "--plot", png); err != nil {
		t.Fatal(err)
	}
	rows := readCSV(t, out)
	if strings.Join(rows[0], ",") != "wavelength_um,depth" {
		t.Errorf("header %v", rows[0])
	}
	// 200 ln(7.5) = 403.0 steps: 404 points (forward.WavelengthGrid).
	if len(rows) != 1+404 {
		t.Errorf("%d rows, want 404 points", len(rows)-1)
	}
	first, _ := strconv.ParseFloat(rows[1][0], 64)
	d, _ := strconv.ParseFloat(rows[1][1], 64)
	if first != 0.4 || !(d > 0 && d < 1) {
		t.Errorf("first row %v", rows[1])
	}
	if st, err := os.Stat(png); err != nil || st.Size() < 1000 {
		t.Errorf("plot: %v", err)
	}

	// Binned: bin edges add two columns.
	binned := spectrumModel(t).Set("spectrum.bin_edges_um", "[0.5, 1, 2]").String()
	if err := os.WriteFile(cfg, []byte(binned), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, _, err := runSpectrumCmd(t, "-c", cfg, "-o", out); err != nil {
		t.Fatal(err)
	}
	rows = readCSV(t, out)
	if strings.Join(rows[0], ",") != "wavelength_um,depth,bin_lo_um,bin_hi_um" || len(rows) != 3 || rows[2][2] != "1" || rows[2][3] != "2" || rows[2][0] != "1.5" {
		t.Errorf("binned CSV %v", rows)
	}
}

func TestSpectrumCommandErrors(t *testing.T) {
	dir := t.TempDir()
	cfg := filepath.Join(dir, "m.toml")
	for _, c := range []struct{ text, want string }{
		{spectrumModel(t).Set("spectrum.resolution", "3").String(), "spectrum.resolution: unknown key"},
		{spectrumModel(t).Delete("planet.mass_mearth").String(), "planet.mass_mjup: missing (one of planet.mass_mjup"},
		{spectrumModel(t).Set("planet.mass_mearth", "1e-6").String(), "unbound"},
	} {
		if err := os.WriteFile(cfg, []byte(c.text), 0o644); err != nil {
			t.Fatal(err)
		}
		_, _, err := runSpectrumCmd(t, "-c", cfg, "-o", filepath.Join(dir, "x.csv"))
		if err == nil || !strings.Contains(err.Error(), c.want) || !strings.Contains(err.Error(), cfg) {
			t.Errorf("error %v, want one naming %s and containing %q", err, cfg, c.want)
		}
	}
	if _, _, err := runSpectrumCmd(t, "-c", filepath.Join(dir, "none.toml"), "-o", "x.csv"); err == nil {
		t.Error("missing config file: no error")
	}
	if _, _, err := runSpectrumCmd(t, "-o", "x.csv"); err == nil {
		t.Error("no -c: no error")
	}
}

// TestSpectrumExample runs the example configuration of testdata with the
// demo tables from the default cache (built once per machine, shared with
// the other tests).
func TestSpectrumExample(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the demo opacity tables")
	}
	dir := t.TempDir()
	out := filepath.Join(dir, "example.csv")
	_, stderr, err := runSpectrumCmd(t, "-c", filepath.Join("..", "..", "testdata", "spectrum-example.toml"), "-o", out)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(stderr, "not for science") {
		t.Errorf("no demo warning on stderr: %q", stderr)
	}
	b, _ := os.ReadFile(out)
	if !strings.Contains(string(b), "# demo opacity tables: not for science") {
		t.Error("no demo warning in the CSV")
	}
	if rows := readCSV(t, out); len(rows) < 100 || len(rows[0]) != 4 {
		t.Errorf("%d rows of %d columns", len(rows), len(rows[0]))
	}
}
