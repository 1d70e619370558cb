package config

import (
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

// oldSpellings is a configuration written with every renamed key and
// value of this release in its old spelling; newSpellings is the same
// configuration written with the new names.
const oldSpellings = `
[star]
radius_rsun = 0.8
[planet]
radius_rjup = 1.1
mass_mjup = 0.7
[atmosphere]
fill = "H2+He"
he_h2_ratio = 0.2
[atmosphere.temperature]
profile = "guillot"
t_irr_k = 1400
kappa_ir_m2_kg = 0.003
gamma = 0.5
[clouds]
top_pressure_bar = 0.01
fraction = 0.7
haze_factor = 3
haze_slope = -5
haze_reference_um = 0.4
[opacity]
grey_cross_section_m2 = 1e-31
[spectrum]
wavelength_min_um = 0.9
wavelength_max_um = 5.5
resolving_power = 300
[[observations]]
file = "../testdata/obs/wide.csv"
[[parameters]]
sets = "log10_kappa_ir"
prior = "uniform"
low = -4
high = -1
[[parameters]]
sets = "log10_gamma"
prior = "uniform"
low = -1
high = 1
[[parameters]]
sets = "log10_haze_factor"
prior = "uniform"
low = -2
high = 4
[[parameters]]
sets = "haze_slope"
prior = "uniform"
low = -10
high = 0
[sampler]
seed = 5
steps = 10
move = "de"
`

var newSpellings = strings.NewReplacer(
	"fill =", "balance_gas =", "he_h2_ratio", "balance_he_h2_ratio",
	"kappa_ir_m2_kg", "thermal_opacity_m2_kg", "gamma =", "opacity_ratio =",
	"top_pressure_bar", "cloud_top_bar", "fraction =", "cloud_fraction =",
	"haze_factor =", "haze_strength =", "haze_slope =", "haze_index =", "haze_reference_um", "haze_pivot_um",
	`"log10_kappa_ir"`, `"log10_thermal_opacity_m2_kg"`, `"log10_gamma"`, `"log10_opacity_ratio"`,
	`"log10_haze_factor"`, `"log10_haze_strength"`, `"haze_slope"`, `"haze_index"`, `"de"`, `"differential-evolution"`,
).Replace(oldSpellings)

// Old spellings are read as the new ones, each with a warning naming the
// new key (or value), which reaches the resolved configuration's
// warnings; the new spellings give no warning.
func TestOldSpellingsAcceptedWithWarning(t *testing.T) {
	base, _ := filepath.Abs(".")
	oldC, err := Decode(oldSpellings, "old.toml", base)
	if err != nil {
		t.Fatal(err)
	}
	newC, err := Decode(newSpellings, "new.toml", base)
	if err != nil {
		t.Fatal(err)
	}
	if len(newC.Renamed) != 0 {
		t.Errorf("new spellings gave warnings: %v", newC.Renamed)
	}
	// All but the grid's axis and the table profile's pressures (below).
	if len(oldC.Renamed) != len(Renames)-2 {
		t.Errorf("%d warnings for %d renames:\n%s", len(oldC.Renamed), len(Renames)-2, strings.Join(oldC.Renamed, "\n"))
	}
	for _, r := range Renames {
		if r.Old == "axis" || r.Old == "atmosphere.temperature.pressure_bar" {
			continue
		}
		found := false
		for _, w := range oldC.Renamed {
			found = found || (strings.Contains(w, r.Old) && strings.Contains(w, r.New) && strings.Contains(w, "this release only"))
		}
		if !found {
			t.Errorf("no warning names %s and its new name %s", r.Old, r.New)
		}
	}
	renamed := oldC.Renamed
	oldC.Renamed = nil
	if !reflect.DeepEqual(oldC, newC) {
		t.Errorf("old spellings decode differently:\n%v", fieldDiffs(*oldC, *newC))
	}
	oldC.Renamed = renamed
	r, err := oldC.Resolve()
	if err != nil {
		t.Fatal(err)
	}
	if r.Move != MoveDiffEvolution || len(r.Free) != 4 || r.Free[0].Sets != QLog10ThermalOpacity || r.Free[3].Sets != QHazeIndex {
		t.Errorf("resolved move %q, parameters %v", r.Move, r.Free)
	}
	for _, w := range renamed {
		if !slicesContains(r.Warnings, w) {
			t.Errorf("warning %q is not among the resolved configuration's warnings", w)
		}
	}
	if r.Config.Renamed != nil {
		t.Errorf("the resolved configuration (run.toml) keeps the warnings: %v", r.Config.Renamed)
	}
}

func slicesContains(s []string, v string) bool {
	for _, x := range s {
		if x == v {
			return true
		}
	}
	return false
}

// The table profile's pressures, in their old spelling.
func TestOldTablePressures(t *testing.T) {
	var m ModelConfig
	if _, err := decodeStrict("[atmosphere.temperature]\nprofile = \"table\"\npressure_bar = [1e-6, 1]\ntemperatures_k = [800, 1000]\n", "t.toml", &m); err != nil {
		t.Fatal(err)
	}
	if len(m.Atmosphere.Temperature.PressuresBar) != 2 || len(m.Renamed) != 1 || !strings.Contains(m.Renamed[0], "atmosphere.temperature.pressures_bar") {
		t.Errorf("pressures %v, warnings %v", m.Atmosphere.Temperature.PressuresBar, m.Renamed)
	}
}

// A key given in both spellings is an error naming the old one; so is a
// syntax error, with its line, in a file that also uses old spellings.
func TestOldAndNewSpellingTogether(t *testing.T) {
	text := strings.Replace(newSpellings, "[clouds]\n", "[clouds]\nhaze_factor = 1\n", 1)
	_, err := Decode(text, "both.toml", ".")
	var ke *KeyError
	if !errors.As(err, &ke) || ke.Key != "clouds.haze_factor" || ke.File != "both.toml" || !strings.Contains(ke.Msg, "clouds.haze_strength") {
		t.Errorf("both spellings: %v", err)
	}
	_, err = Decode(oldSpellings+"\n[broken\n", "syntax.toml", ".")
	if !errors.As(err, &ke) || ke.Line == 0 || ke.File != "syntax.toml" {
		t.Errorf("syntax error: %v, want the file and line", err)
	}
}

// RenamedKey renames the key paths of grids ([set] and axis keys) by the
// same table.
func TestRenamedKey(t *testing.T) {
	if k, w := RenamedKey("clouds.top_pressure_bar"); k != "clouds.cloud_top_bar" || !strings.Contains(w, "clouds.cloud_top_bar") {
		t.Errorf("RenamedKey: %q, %q", k, w)
	}
	if k, w := RenamedKey("atmosphere.top_pressure_bar"); k != "atmosphere.top_pressure_bar" || w != "" {
		t.Errorf("atmosphere.top_pressure_bar was renamed: %q, %q", k, w)
	}
}

// A map of any values (a grid's [set]) takes dotted keys, which TOML
// decodes as nested tables; unknown keys elsewhere are still errors.
func TestDottedKeysInFreeTables(t *testing.T) {
	var v struct {
		Set   map[string]any `toml:"set"`
		Other struct {
			A int `toml:"a"`
		} `toml:"other"`
	}
	if _, err := decodeStrict("[set]\nsampler.steps = 600\n", "g.toml", &v); err != nil {
		t.Fatal(err)
	}
	if s, ok := v.Set["sampler"].(map[string]any); !ok || s["steps"] != int64(600) {
		t.Errorf("set = %v", v.Set)
	}
	_, err := decodeStrict("[other]\nb = 1\n", "g.toml", &v)
	var ke *KeyError
	if !errors.As(err, &ke) || ke.Key != "other.b" {
		t.Errorf("unknown key: %v", err)
	}
}

// DigestText writes the configuration in the spellings of the version
// before the renames, so that runs made by it keep their digests: the
// resolved testdata/cfg/likelihood.toml (seed fixed, observation paths
// blanked as the run digest blanks them, parameter names as that version
// named them) gives, byte for byte,
// testdata/digest-likelihood-0.1.toml, the TOML encoding written by that
// version (commit bef7183) of the same file.
func TestDigestTextKeepsOldSpellings(t *testing.T) {
	r, err := Load(filepath.Join("..", "testdata", "cfg", "likelihood.toml"))
	if err != nil {
		t.Fatal(err)
	}
	c := r.Config
	seed := int64(7)
	c.Sampler.Seed = &seed
	for i := range c.Observations {
		c.Observations[i].File = ""
	}
	// The parameters' names, which default to their quantities, are those
	// the earlier version's run.toml states.
	c.Parameters = append([]ParameterConfig(nil), c.Parameters...)
	old := map[string]string{"log10_haze_strength": "log10_haze_factor", "haze_index": "haze_slope"}
	for i, p := range c.Parameters {
		if o, ok := old[p.Name]; ok {
			c.Parameters[i].Name = o
		}
	}
	got, err := DigestText(c)
	if err != nil {
		t.Fatal(err)
	}
	want, err := os.ReadFile(filepath.Join("testdata", "digest-likelihood-0.1.toml"))
	if err != nil {
		t.Fatal(err)
	}
	if string(got) != string(want) {
		gl, wl := strings.Split(string(got), "\n"), strings.Split(string(want), "\n")
		for i := range min(len(gl), len(wl)) {
			if gl[i] != wl[i] {
				t.Fatalf("line %d: %q, the earlier version wrote %q", i+1, gl[i], wl[i])
			}
		}
		t.Fatalf("%d lines, the earlier version wrote %d", len(gl), len(wl))
	}
}
