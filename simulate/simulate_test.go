package simulate

import (
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat"

	"chord/config"
	"chord/forward/opacity"
	"chord/internal/testenv"
	"chord/obs"
)

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

// greyScenario is the sub-Neptune fixture with a grey absorber (no
// tables), quick to compute, seed 3 and 50 steps.
func greyScenario(t *testing.T) *testenv.TOML {
	return testenv.Fixture(t, "sub-neptune.toml").Set("opacity.grey_cross_section_m2", "1e-29").
		Set("sampler.seed", "3").Set("sampler.steps", "50")
}

func writeScenario(t *testing.T, text string) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), "scenario.toml")
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestSimulateRoundTrip(t *testing.T) {
	sc, err := LoadScenario(writeScenario(t, greyScenario(t).String()))
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
	clean, err := sc.Simulate(set, *bins, Options{Noise: noise})
	if err != nil {
		t.Fatal(err)
	}
	noisy, err := sc.Simulate(set, *bins, Options{Noise: noise, Scatter: true, Seed: 5})
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
	obsPath := filepath.Join(dir, "obs.csv")
	if err := obs.WriteObservation(obsPath, noisy, false); err != nil {
		t.Fatal(err)
	}
	if err := obs.WriteObservation(obsPath, noisy, false); err == nil || !strings.Contains(err.Error(), "exists") {
		t.Fatalf("overwrote without leave: %v", err)
	}
	// The observation reader takes the file back: edges exactly, depths
	// and errors to the 12 digits written.
	d, err := obs.ReadDataset(obsPath)
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
	fc, err := sc.FitConfig(obsPath)
	if err != nil {
		t.Fatal(err)
	}
	cfgPath := filepath.Join(dir, "fit.toml")
	if err := config.Write(cfgPath, fc, []string{"test"}, false); err != nil {
		t.Fatal(err)
	}
	r, err := config.Load(cfgPath)
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
		{greyScenario(t).Set("extra.foo", "1").String(), "extra: unknown key"},
		{greyScenario(t).Set("planet.mas_mjup", "1").String(), "planet.mas_mjup: unknown key"},
		{greyScenario(t).Append("[[observations]]\nfile = \"x.csv\"").String(), "do not belong in a scenario"},
		{greyScenario(t).Set("atmosphere.temperature.temperature_k", "-600").String(), "temperature_k"},
	} {
		if _, err := LoadScenario(writeScenario(t, c.text)); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("case %d: %v, want %q", i, err, c.want)
		}
	}
	if _, err := LoadScenario(filepath.Join(t.TempDir(), "absent.toml")); err == nil {
		t.Error("missing scenario accepted")
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
		o := &obs.Observation{Lo: bins.Lo, Hi: bins.Hi, Depth: make([]float64, bins.Len()), Sigma: make([]float64, bins.Len())}
		for i := range o.Depth {
			o.Depth[i], o.Sigma[i] = 0.01, 1e-4
		}
		dir := t.TempDir()
		obsPath := filepath.Join(dir, "obs.csv")
		if err := obs.WriteObservation(obsPath, o, false); err != nil {
			t.Fatal(err)
		}
		fc, err := sc.FitConfig(obsPath)
		if err != nil {
			t.Fatal(err)
		}
		cfg := filepath.Join(dir, "fit.toml")
		if err := config.Write(cfg, fc, nil, false); err != nil {
			t.Fatal(err)
		}
		if _, err := config.Load(cfg); err != nil {
			t.Fatalf("%s: fit configuration: %v", p, err)
		}
	}
}
