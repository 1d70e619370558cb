package retrieve

import (
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat"

	"chord/forward"
	"chord/forward/opacity"
)

func TestResolvingPowerBins(t *testing.T) {
	const r = 100.0
	b, err := ResolvingPowerBins(1*forward.Micron, 5*forward.Micron, r)
	if err != nil {
		t.Fatal(err)
	}
	// Definition of resolving power, R = centre/width (fact of the trade):
	// every bin has it to rounding, bins are adjacent and inside the range.
	for i := range b.Lo {
		c, w := 0.5*(b.Lo[i]+b.Hi[i]), b.Hi[i]-b.Lo[i]
		if math.Abs(c/w-r) > 1e-9*r {
			t.Fatalf("bin %d: R = %g", i, c/w)
		}
		if i > 0 && b.Lo[i] != b.Hi[i-1] {
			t.Fatalf("bin %d not adjacent", i)
		}
	}
	// The number of bins is ln(hi/lo)/ln((2R+1)/(2R-1)) = 160.94... -> 160.
	if b.Len() != 160 || b.Hi[b.Len()-1] > 5*forward.Micron {
		t.Fatalf("%d bins ending at %g", b.Len(), b.Hi[b.Len()-1])
	}
	for i, c := range []struct{ lo, hi, r float64 }{
		{0, 1e-6, 100}, {2e-6, 1e-6, 100}, {1e-6, 2e-6, 0.5}, {1e-6, 2e-6, math.Inf(1)}, {1e-6, 1.001e-6, 10},
	} {
		if _, err := ResolvingPowerBins(c.lo, c.hi, c.r); err == nil {
			t.Errorf("case %d accepted", i)
		}
	}
}

func TestNoiseErrors(t *testing.T) {
	dst := make([]float64, 3)
	if err := (Noise{PPM: 60, Transits: 4}).Errors(dst); err != nil || math.Abs(dst[2]-30e-6) > 1e-18 {
		t.Fatalf("60 ppm / sqrt(4): %v %v", dst, err)
	}
	if err := (Noise{PerBinPPM: []float64{10, 20, 40}, Transits: 16}).Errors(dst); err != nil || math.Abs(dst[1]-5e-6) > 1e-18 {
		t.Fatalf("per bin: %v %v", dst, err)
	}
	for i, c := range []struct {
		n    Noise
		want string
	}{
		{Noise{PPM: 0}, "must be positive"},
		{Noise{PPM: -30}, "must be positive"},
		{Noise{PPM: math.NaN()}, "must be positive"},
		{Noise{PPM: 30, Transits: -1}, "transits"},
		{Noise{PerBinPPM: []float64{1, 2}}, "2 per-bin errors for 3 bins"},
		{Noise{PerBinPPM: []float64{1, 0, 3}}, "bin 2"},
	} {
		if err := c.n.Errors(dst); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("case %d: %v, want %q", i, err, c.want)
		}
	}
}

// The drawn noise has the stated standard deviation: 2e4 deviates give it
// to 0.5% (one standard error of a sample standard deviation is
// 1/sqrt(2n) = 0.5%); the tolerance is 3 of those.
func TestAddNoise(t *testing.T) {
	const n = 20000
	d, s := make([]float64, n), make([]float64, n)
	for i := range s {
		s[i] = 50e-6
	}
	AddNoise(d, s, rand.New(rand.NewPCG(1, 2)))
	if sd := stat.StdDev(d, nil); math.Abs(sd/50e-6-1) > 0.015 {
		t.Fatalf("sd %g", sd)
	}
}

// greyScenario is a small scenario with a grey absorber only (no tables),
// quick to compute.
const greyScenario = `
[star]
name = "Test Star"
radius_rsun = 0.5

[planet]
name = "Test Planet"
radius_rearth = 2.5
mass_mearth = 6

[atmosphere]
layers = 30
fill = "H2+He"
[atmosphere.temperature]
profile = "isothermal"
temperature_k = 600

[opacity]
grey_cross_section_m2 = 1e-29
rayleigh = ["H2", "He"]

[spectrum]
wavelength_min_um = 0.8
wavelength_max_um = 2.0
resolving_power = 300
bin_resolving_power = 20

[[parameters]]
sets = "radius_rearth"
prior = "uniform"
low = 2
high = 3

[[parameters]]
sets = "temperature_k"
prior = "uniform"
low = 300
high = 900

[sampler]
walkers = 8
seed = 3
steps = 50
`

func writeScenario(t *testing.T, text string) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), "scenario.toml")
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestSimulateRoundTrip(t *testing.T) {
	sc, err := LoadScenario(writeScenario(t, greyScenario))
	if err != nil {
		t.Fatal(err)
	}
	bins, err := sc.Bins()
	if err != nil || bins == nil {
		t.Fatalf("bins %v %v", bins, err)
	}
	set := &opacity.Set{}
	truth, err := sc.Spectrum(set, *bins)
	if err != nil {
		t.Fatal(err)
	}
	noise := Noise{PPM: 80, Transits: 4}
	clean, err := sc.Simulate(set, *bins, SimulateOptions{Noise: noise})
	if err != nil {
		t.Fatal(err)
	}
	noisy, err := sc.Simulate(set, *bins, SimulateOptions{Noise: noise, Scatter: true, Seed: 5})
	if err != nil {
		t.Fatal(err)
	}
	// The noisy observation is the truth plus AddNoise with the same seed.
	want := slices.Clone(truth)
	AddNoise(want, clean.Sigma, rand.New(rand.NewPCG(5, 0)))
	for i := range truth {
		if clean.Depth[i] != truth[i] || math.Abs(clean.Sigma[i]-40e-6) > 1e-20 || noisy.Depth[i] != want[i] {
			t.Fatalf("bin %d: clean %g truth %g sigma %g noisy %g want %g", i, clean.Depth[i], truth[i], clean.Sigma[i], noisy.Depth[i], want[i])
		}
	}
	dir := t.TempDir()
	obs := filepath.Join(dir, "obs.csv")
	if err := WriteObservation(obs, noisy, false); err != nil {
		t.Fatal(err)
	}
	if err := WriteObservation(obs, noisy, false); err == nil || !strings.Contains(err.Error(), "exists") {
		t.Fatalf("overwrote without leave: %v", err)
	}
	// The observation reader takes the file back: edges exactly, depths
	// and errors to the 12 digits written.
	d, err := ReadDataset(obs)
	if err != nil {
		t.Fatal(err)
	}
	for i := range truth {
		if d.Lo[i] != bins.Lo[i] || d.Hi[i] != bins.Hi[i] ||
			math.Abs(d.Depth[i]/noisy.Depth[i]-1) > 1e-11 || math.Abs(d.Sigma[i]/noisy.Sigma[i]-1) > 1e-11 {
			t.Fatalf("bin %d read back as %g-%g %g +- %g", i, d.Lo[i], d.Hi[i], d.Depth[i], d.Sigma[i])
		}
	}
	// The fit configuration is accepted as is by the retrieval loader.
	fc, err := sc.FitConfig(obs)
	if err != nil {
		t.Fatal(err)
	}
	cfgPath := filepath.Join(dir, "fit.toml")
	if err := WriteConfig(cfgPath, fc, []string{"test"}, false); err != nil {
		t.Fatal(err)
	}
	r, err := LoadConfig(cfgPath)
	if err != nil {
		t.Fatal(err)
	}
	if len(r.Free) != 2 || r.Datasets[0].Len() != bins.Len() || r.Seed != 3 {
		t.Fatalf("resolved %d free, %d bins, seed %d", len(r.Free), r.Datasets[0].Len(), r.Seed)
	}
}

func TestScenarioBadInput(t *testing.T) {
	for i, c := range []struct {
		text, want string
	}{
		{greyScenario + "\n[extra]\nfoo = 1\n", "unknown key extra.foo"},
		{strings.Replace(greyScenario, "mass_mearth = 6", "mass_mearth = 6\nmas_mjup = 1", 1), "unknown key planet.mas_mjup"},
		{greyScenario + "\n[[observations]]\nfile = \"x.csv\"\n", "do not belong in a scenario"},
		{strings.Replace(greyScenario, "temperature_k = 600", "temperature_k = -600", 1), "temperature_k"},
	} {
		if _, err := LoadScenario(writeScenario(t, c.text)); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("case %d: %v, want %q", i, err, c.want)
		}
	}
	if _, err := LoadScenario(filepath.Join(t.TempDir(), "absent.toml")); err == nil {
		t.Error("missing scenario accepted")
	}
}

func TestReadBinsFile(t *testing.T) {
	b, e, err := parseBins(strings.NewReader("# bins\nwavelength_um width_um error_ppm\n1.0 0.1 50\n1.1 0.1 60\n"), "b.txt")
	if err != nil || b.Len() != 2 || e[1] != 60 || math.Abs(b.Lo[1]-1.05e-6) > 1e-18 {
		t.Fatalf("%+v %v %v", b, e, err)
	}
	b, e, err = parseBins(strings.NewReader("edge_low_nm,edge_high_nm\n1000,1100\n1100,1200\n"), "b.csv")
	if err != nil || b.Len() != 2 || e != nil || math.Abs(b.Hi[1]-1200e-9) > 1e-20 {
		t.Fatalf("%+v %v %v", b, e, err)
	}
	for i, c := range []struct{ text, want string }{
		{"lo,hi\n1,2\n", "b.csv:1: unknown column \"lo\""},
		{"edge_low_um,width_um\n1,2\n", "must name edge_low_um and edge_high_um"},
		{"edge_low_um,edge_high_um\n1,2,3\n", "b.csv:2: 3 fields"},
		{"edge_low_um,edge_high_um\n2,1\n", "b.csv:2: bin 2-1 um"},
		{"edge_low_um,edge_high_um\n1,2\n1.5,3\n", "b.csv:3: bin 1.5-3 um overlaps"},
		{"edge_low_um,edge_high_um\n1,NaN\n", "not a finite number"},
		{"edge_low_um,edge_high_um,error_ppm\n1,2,0\n", "error_ppm 0"},
		{"# nothing\n", "no bins"},
	} {
		if _, _, err := parseBins(strings.NewReader(c.text), "b.csv"); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("case %d: %v, want %q", i, err, c.want)
		}
	}
}

// The shipped scenarios load, and each one's fit configuration resolves.
func TestShippedScenarios(t *testing.T) {
	paths, _ := filepath.Glob(filepath.Join("..", "testdata", "scenarios", "*.toml"))
	if len(paths) == 0 {
		t.Fatal("no scenarios in testdata/scenarios")
	}
	for _, p := range paths {
		sc, err := LoadScenario(p)
		if err != nil {
			t.Fatal(err)
		}
		bins, err := sc.Bins()
		if err != nil || bins == nil {
			t.Fatalf("%s: bins %v", p, err)
		}
		// A flat fake observation on the scenario's bins, to resolve the
		// parameters against.
		o := &Observation{Lo: bins.Lo, Hi: bins.Hi, Depth: make([]float64, bins.Len()), Sigma: make([]float64, bins.Len())}
		for i := range o.Depth {
			o.Depth[i], o.Sigma[i] = 0.01, 1e-4
		}
		dir := t.TempDir()
		obs := filepath.Join(dir, "obs.csv")
		if err := WriteObservation(obs, o, false); err != nil {
			t.Fatal(err)
		}
		fc, err := sc.FitConfig(obs)
		if err != nil {
			t.Fatal(err)
		}
		cfg := filepath.Join(dir, "fit.toml")
		if err := WriteConfig(cfg, fc, nil, false); err != nil {
			t.Fatal(err)
		}
		if _, err := LoadConfig(cfg); err != nil {
			t.Fatalf("%s: fit configuration: %v", p, err)
		}
	}
}

// FuzzParseBins: any bins file gives bins or an error naming the file,
// never a panic; accepted bins are positive, ordered and have matching
// error counts.
func FuzzParseBins(f *testing.F) {
	f.Add("edge_low_um,edge_high_um\n1,2\n2,3\n")
	f.Add("wavelength_nm width_nm error_ppm\n1000 10 40\n1010 10 45\n")
	f.Add("# c\nedge_low_um,edge_high_um,error_ppm\n1,NaN,3\n")
	f.Fuzz(func(t *testing.T, text string) {
		b, e, err := parseBins(strings.NewReader(text), "f.csv")
		if err != nil {
			if !strings.Contains(err.Error(), "f.csv") {
				t.Fatalf("error without the file name: %v", err)
			}
			return
		}
		if e != nil && len(e) != b.Len() {
			t.Fatalf("%d errors for %d bins", len(e), b.Len())
		}
		for i := range b.Lo {
			if !(b.Lo[i] > 0 && b.Hi[i] > b.Lo[i]) {
				t.Fatalf("bin %d: %g-%g", i, b.Lo[i], b.Hi[i])
			}
		}
	})
}
