package config

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"chord/forward"
	"chord/forward/opacity"
)

// greyConfig is a complete model configuration with only grey and Rayleigh
// opacities (no tables), for an invented hot Neptune.
const greyConfig = `
[star]
name = "Pellucid"
radius_rsun = 0.7

[planet]
name = "Pellucid c"
radius_rearth = 4.1
mass_mearth = 18

[atmosphere]
layers = 60
[atmosphere.gases]
H2O = 0.01
[atmosphere.temperature]
temperature_k = 900

[opacity]
grey_cross_section_m2 = 1e-31

[spectrum]
wavelength_min_um = 0.5
wavelength_max_um = 5
resolving_power = 300
bin_edges_um = [0.6, 1.0, 2.0, 4.0]
`

func writeConfig(t *testing.T, text string) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), "model.toml")
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestModelConfigBuild(t *testing.T) {
	c, err := LoadModel(writeConfig(t, greyConfig))
	if err != nil {
		t.Fatal(err)
	}
	set, err := c.LoadOpacity("", nil)
	if err != nil {
		t.Fatal(err)
	}
	m, s, err := c.Build(set)
	if err != nil {
		t.Fatal(err)
	}
	// Units: IAU 2015 B3 nominal radii and masses (forward's constants).
	near := func(a, b float64) bool { return math.Abs(a-b) <= 1e-15*b }
	if !near(s.RefRadius, 4.1*forward.EarthRadius) || !near(s.Mass, 18*forward.EarthMass) || !near(s.StarRadius, 0.7*forward.SolarRadius) {
		t.Errorf("units: radius %g, mass %g, star %g", s.RefRadius, s.Mass, s.StarRadius)
	}
	if got := m.Gases(); len(got) != 1 || got[0] != "H2O" || s.VMR[0] != 0.01 {
		t.Errorf("gases %v, VMR %v", got, s.VMR)
	}
	if m.Layers() != 60 || m.RefPressure() != 10*forward.Bar || m.OutputLen() != 3 {
		t.Errorf("layers %d, reference pressure %g, outputs %d", m.Layers(), m.RefPressure(), m.OutputLen())
	}
	d := make([]float64, m.OutputLen())
	if err := m.Transit(d, &s, m.NewWorkspace()); err != nil {
		t.Fatal(err)
	}
	// The planet's disc alone gives (R/R_star)^2 = 0.00287; the atmosphere adds to it.
	base := math.Pow(4.1*forward.EarthRadius/(0.7*forward.SolarRadius), 2)
	for i, v := range d {
		if !(v > 0.8*base && v < 1.5*base) {
			t.Errorf("bin %d: depth %g, want near %g", i, v, base)
		}
	}
}

// TestModelConfigExample keeps testdata/spectrum-example.toml valid.
func TestModelConfigExample(t *testing.T) {
	c, err := LoadModel(filepath.Join("..", "testdata", "spectrum-example.toml"))
	if err != nil {
		t.Fatal(err)
	}
	if !c.Opacity.Demo || c.Planet.Name == "" {
		t.Errorf("example: demo %v, planet %q", c.Opacity.Demo, c.Planet.Name)
	}
}

// TestModelConfigErrors: every malformed model configuration is a KeyError
// naming the file and the key at fault (or the line of a syntax error).
func TestModelConfigErrors(t *testing.T) {
	for _, c := range []struct {
		name, old, new, key string // key "": a TOML error (a syntax error names its line)
	}{
		{"unknown key", "mass_mearth = 18", "mass_mearth = 18\nmas_mjup = 1", "planet.mas_mjup"},
		{"unknown section key", "[opacity]", "[opacity]\nfoo = 1", "opacity.foo"},
		{"missing star radius", "radius_rsun = 0.7", "", "star.radius_rsun"},
		{"missing mass", "mass_mearth = 18", "", "planet.mass_mjup"},
		{"two radii", "radius_rearth = 4.1", "radius_rearth = 4.1\nradius_m = 2e7", "planet.radius_m"},
		{"negative radius", "radius_rearth = 4.1", "radius_rearth = -4.1", "planet.radius_rearth"},
		{"zero layers", "layers = 60", "layers = 0", "atmosphere.layers"},
		{"top below bottom", "layers = 60", "layers = 60\ntop_pressure_bar = 1000", "atmosphere.bottom_pressure_bar"},
		{"unknown gas", "H2O = 0.01", "H2O = 0.01\nXy = 0.1", "atmosphere.gases.Xy"},
		{"negative mixing ratio", "H2O = 0.01", "H2O = -0.01", "atmosphere.gases.H2O"},
		{"sum over 1", "H2O = 0.01", "H2O = 0.6\nCO = 0.6", "atmosphere.gases"},
		{"fill as trace", "H2O = 0.01", "He = 0.01", "atmosphere.gases.He"},
		{"bad fill", "layers = 60", "layers = 60\nbalance_gas = \"Xq\"", "atmosphere.balance_gas"},
		{"missing temperature", "temperature_k = 900", "", "atmosphere.temperature.temperature_k"},
		{"wrong profile key", "temperature_k = 900", "temperature_k = 900\nt_irr_k = 1000", "atmosphere.temperature.t_irr_k"},
		{"unknown profile", "temperature_k = 900", "profile = \"warm\"", "atmosphere.temperature.profile"},
		{"cloud below bottom", "[opacity]", "[clouds]\ncloud_top_bar = 1000\n[opacity]", "clouds.cloud_top_bar"},
		{"cloud fraction", "[opacity]", "[clouds]\ncloud_top_bar = 0.1\ncloud_fraction = 1.5\n[opacity]", "clouds.cloud_fraction"},
		{"missing wavelength", "wavelength_min_um = 0.5", "", "spectrum.wavelength_min_um"},
		{"reversed wavelengths", "wavelength_max_um = 5", "wavelength_max_um = 0.4", "spectrum.wavelength_max_um"},
		{"too many points", "resolving_power = 300", "resolving_power = 1e6", "spectrum.resolving_power"},
		{"two kinds of bins", "resolving_power = 300", "resolving_power = 300\nbin_resolving_power = 10", "spectrum"},
		{"bad edges", "bin_edges_um = [0.6, 1.0, 2.0, 4.0]", "bin_edges_um = [0.6, 0.5]", "spectrum.bin_edges_um"},
		{"bad Rayleigh gas", "[opacity]", "[opacity]\nrayleigh = [\"Ar\"]", "opacity.rayleigh"},
		{"bad CIA pair", "[opacity]", "[opacity]\ncia = [\"H2+He\"]", "opacity.cia"},
		{"dir and demo", "[opacity]", "[opacity]\ndemo = true\ndir = \"x\"", "opacity.dir"},
		{"wrong type", "layers = 60", "layers = \"sixty\"", ""},
		{"syntax error", "layers = 60", "layers = = 60", ""},
	} {
		text := strings.Replace(greyConfig, c.old, c.new, 1)
		if text == greyConfig {
			t.Fatalf("%s: edit did not apply", c.name)
		}
		path := writeConfig(t, text)
		_, err := LoadModel(path)
		var ke *KeyError
		if !errors.As(err, &ke) || ke.File != path || ke.Key != c.key || (c.name == "syntax error") != (ke.Line > 0) {
			t.Errorf("%s: error %v, want a KeyError of %s, key %q", c.name, err, path, c.key)
		}
	}
}

// TestModelConfigOpacityErrors: keys checked against the loaded tables.
func TestModelConfigOpacityErrors(t *testing.T) {
	text := strings.Replace(greyConfig, "[opacity]", "[opacity]\ncia = [\"H2-He\"]", 1)
	c, err := LoadModel(writeConfig(t, text))
	if err != nil {
		t.Fatal(err)
	}
	_, _, err = c.Build(&opacity.Set{})
	if ke := (*KeyError)(nil); !errors.As(err, &ke) || ke.Key != "opacity.cia" {
		t.Errorf("missing CIA table: %v", err)
	}
	text = strings.Replace(greyConfig, "[opacity]", "[opacity]\ndir = \"no-such-dir\"", 1)
	c, err = LoadModel(writeConfig(t, text))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := c.LoadOpacity("", nil); !errors.As(err, new(*KeyError)) || !strings.HasPrefix(err.Error(), "opacity.dir: ") {
		t.Errorf("missing table directory: %v", err)
	}
}

func TestModelConfigProfilesAndBins(t *testing.T) {
	guillot := strings.Replace(greyConfig, "temperature_k = 900", "profile = \"guillot\"\nt_irr_k = 1200\nt_int_k = 200", 1)
	guillot = strings.Replace(guillot, "bin_edges_um = [0.6, 1.0, 2.0, 4.0]", "bin_centres_um = [1.0, 2.0]\nbin_widths_um = [0.2, 0.4]", 1)
	c, err := LoadModel(writeConfig(t, guillot))
	if err != nil {
		t.Fatal(err)
	}
	m, s, err := c.Build(nil)
	if err != nil {
		t.Fatal(err)
	}
	// The defaults kappa_th = 1e-2 cm^2/g = 1e-3 m^2/kg and gamma = 0.4 are
	// Guillot (2010, A&A 520, A27)'s HD 209458b values (from memory).
	g, ok := s.Profile.(*forward.Guillot)
	if !ok || g.TIrr != 1200 || g.TInt != 200 || g.F != 0.25 || g.Gamma != 0.4 || g.KappaIR != 1e-2*1e-4/1e-3 {
		t.Errorf("Guillot profile %+v", s.Profile)
	}
	if m.OutputLen() != 2 {
		t.Errorf("%d bins from centres, want 2", m.OutputLen())
	}
	table := strings.Replace(greyConfig, "temperature_k = 900", "profile = \"table\"\npressures_bar = [1e-6, 1, 100]\ntemperatures_k = [700, 1000, 1800]", 1)
	table = strings.Replace(table, "bin_edges_um = [0.6, 1.0, 2.0, 4.0]", "bin_resolving_power = 20", 1)
	c, err = LoadModel(writeConfig(t, table))
	if err != nil {
		t.Fatal(err)
	}
	m, s, err = c.Build(nil)
	if err != nil {
		t.Fatal(err)
	}
	if _, ok := s.Profile.(*forward.TableProfile); !ok {
		t.Errorf("table profile: %T", s.Profile)
	}
	// R = 20 bins over 0.5-5 um with edges exp(k/20) um:
	// k from ceil(20 ln 0.5) = -13 to floor(20 ln 5) = 32, 45 bins
	// (forward.ResolvingPowerBins).
	if m.OutputLen() != 45 {
		t.Errorf("%d constant-R bins, want 45", m.OutputLen())
	}
}

// FuzzModelConfig: no configuration text makes decoding, building or one
// spectrum panic; bad ones are errors.
func FuzzModelConfig(f *testing.F) {
	f.Add(greyConfig)
	f.Add(strings.Replace(greyConfig, "temperature_k = 900", "profile = \"guillot\"\nt_irr_k = 1200", 1))
	f.Add(strings.Replace(greyConfig, "[opacity]", "[clouds]\ncloud_top_bar = 0.01\ncloud_fraction = 0.5\nhaze_strength = 3\n[opacity]", 1))
	f.Add("[star]\nradius_m = 1\n")
	dir := f.TempDir()
	f.Fuzz(func(t *testing.T, text string) {
		p := filepath.Join(dir, "fuzz.toml")
		if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
		c, err := LoadModel(p)
		if err != nil {
			return
		}
		// Keep each case fast: skip models with many layers or points.
		s := c.withDefaults().Spectrum
		pts := *s.ResolvingPower * math.Log(*s.WavelengthMaxUm / *s.WavelengthMinUm)
		if (c.Atmosphere.Layers != nil && *c.Atmosphere.Layers > 300) || pts > 5000 || c.Opacity.Demo || c.Opacity.Dir != "" {
			return
		}
		m, st, err := c.Build(nil)
		if err != nil {
			return
		}
		d := make([]float64, m.OutputLen())
		if err := m.Transit(d, &st, m.NewWorkspace()); err != nil {
			return
		}
		for i, v := range d {
			if math.IsNaN(v) || v < 0 {
				t.Fatalf("bin %d: depth %g", i, v)
			}
		}
	})
}
