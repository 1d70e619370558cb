package main

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"chord/config"
	"chord/internal/testenv"
	"chord/obs"
	"chord/simulate"
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
	if strings.Join(rows[0], ",") != "wavelength_um,depth_ppm" {
		t.Errorf("header %v", rows[0])
	}
	// 200 ln(7.5) = 403.0 steps: 404 points (forward.WavelengthGrid).
	if len(rows) != 1+404 {
		t.Errorf("%d rows, want 404 points", len(rows)-1)
	}
	first, _ := strconv.ParseFloat(rows[1][0], 64)
	d, _ := strconv.ParseFloat(rows[1][1], 64)
	if first != 0.4 || !(d > 1 && d < 1e6) {
		t.Errorf("first row %v", rows[1])
	}
	if st, err := os.Stat(png); err != nil || st.Size() < 1000 {
		t.Errorf("plot: %v", err)
	}

	// Binned: the layout of an observation file.
	binned := spectrumModel(t).Set("spectrum.bin_edges_um", "[0.5, 1, 2]").String()
	if err := os.WriteFile(cfg, []byte(binned), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, _, err := runSpectrumCmd(t, "-c", cfg, "-o", out); err != nil {
		t.Fatal(err)
	}
	rows = readCSV(t, out)
	if strings.Join(rows[0], ",") != "edge_low_um,edge_high_um,depth_ppm" || len(rows) != 3 || rows[2][0] != "1" || rows[2][1] != "2" {
		t.Errorf("binned CSV %v", rows)
	}
	// --error-ppm needs bins, and a positive error.
	if err := os.WriteFile(cfg, []byte(spectrumModel(t).String()), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, _, err := runSpectrumCmd(t, "-c", cfg, "-o", out, "--error-ppm", "30"); err == nil || !strings.Contains(err.Error(), "needs bins") {
		t.Errorf("--error-ppm on an unbinned spectrum: %v", err)
	}
	if _, _, err := runSpectrumCmd(t, "-c", cfg, "-o", out, "--error-ppm", "-3"); err == nil || !strings.Contains(err.Error(), "--error-ppm -3") {
		t.Errorf("--error-ppm -3: %v", err)
	}
}

// A binned spectrum written with --error-ppm is an observation: chord fit
// fits it, obs reads it as the observation a noise-free chord simulate
// writes (the same bins, depths and errors: a noise-free simulated
// observation is the model spectrum, fact of the trade), and as a bins
// and noise file.
func TestSpectrumRoundTrip(t *testing.T) {
	dir := t.TempDir()
	truth := runsModel(t).DeleteTable("parameters").DeleteTable("sampler").Set("spectrum.bin_resolving_power", "15").
		Write(filepath.Join(dir, "truth.toml"))
	spec := filepath.Join(dir, "spectrum.csv")
	if _, _, err := runSpectrumCmd(t, "-c", truth, "-o", spec, "--error-ppm", "40"); err != nil {
		t.Fatal(err)
	}
	// As the observation chord simulate writes without noise.
	mc, err := config.LoadModel(truth)
	if err != nil {
		t.Fatal(err)
	}
	sim := filepath.Join(dir, "simulated.csv")
	if err := simulate.ObserveModel(sim, mc, "", nil, 40, false, 0); err != nil {
		t.Fatal(err)
	}
	got, err := obs.ReadDataset(spec)
	if err != nil {
		t.Fatalf("the spectrum as an observation: %v", err)
	}
	want, err := obs.ReadDataset(sim)
	if err != nil {
		t.Fatal(err)
	}
	if got.Len() != want.Len() || got.Len() < 10 {
		t.Fatalf("%d bins, the simulated observation %d", got.Len(), want.Len())
	}
	for i := range got.Len() {
		// To the digits of chord simulate's file (edges to 8 significant
		// digits, depths to 0.001 ppm).
		if !near(got.Lo[i], want.Lo[i], 1e-7) || !near(got.Hi[i], want.Hi[i], 1e-7) || math.Abs(got.Depth[i]-want.Depth[i]) > 1e-9 || !near(got.Sigma[i], 40e-6, 1e-12) {
			t.Errorf("bin %d: spectrum %g-%g m depth %g error %g; simulated %g-%g m depth %g", i, got.Lo[i], got.Hi[i], got.Depth[i], got.Sigma[i], want.Lo[i], want.Hi[i], want.Depth[i])
		}
	}
	// As a bins and noise file.
	bins, errPPM, err := obs.ReadBins(spec)
	if err != nil {
		t.Fatalf("the spectrum as a bins file: %v", err)
	}
	if bins.Len() != got.Len() || len(errPPM) != got.Len() || errPPM[0] != 40 || !near(bins.Lo[3], got.Lo[3], 1e-12) {
		t.Errorf("as bins: %d bins, errors %v", bins.Len(), errPPM)
	}
	// And fitted: a short run reads it and reports on it.
	cfg := runsModel(t).Delete("planet.radius_rearth").Delete("atmosphere.temperature.temperature_k").Delete("spectrum.bin_resolving_power").
		Set("parameters[2].high", "1500").Set("sampler.seed", "11").
		Append("[[observations]]\nfile = \"spectrum.csv\"").Write(filepath.Join(dir, "fit.toml"))
	run := filepath.Join(dir, "run")
	if _, stderr, err := runCmd(t, "fit", "-c", cfg, "-o", run, "--steps", "30"); err != nil {
		t.Fatalf("fit: %v\n%s", err, stderr)
	}
	var s struct {
		Parameters    []struct{} `json:"parameters"`
		GoodnessOfFit struct {
			DegreesOfFreedom int `json:"degrees_of_freedom"`
		} `json:"goodness_of_fit"`
	}
	b, err := os.ReadFile(filepath.Join(run, "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &s); err != nil {
		t.Fatal(err)
	}
	// Degrees of freedom: the bins less the free parameters.
	if dof := s.GoodnessOfFit.DegreesOfFreedom; dof+len(s.Parameters) != got.Len() {
		t.Errorf("summary.json: %d degrees of freedom and %d parameters, want %d bins in all", dof, len(s.Parameters), got.Len())
	}
}

func near(a, b, rel float64) bool { return math.Abs(a-b) <= rel*math.Max(math.Abs(a), math.Abs(b)) }

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
	if rows := readCSV(t, out); len(rows) < 100 || strings.Join(rows[0], ",") != "edge_low_um,edge_high_um,depth_ppm" {
		t.Errorf("%d rows of %d columns", len(rows), len(rows[0]))
	}
}
