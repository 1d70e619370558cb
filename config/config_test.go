package config

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"chord/priors"
)

func loadGood(t *testing.T, name string) *Resolved {
	t.Helper()
	r, err := Load(filepath.Join("..", "testdata", "cfg", name))
	if err != nil {
		t.Fatal(err)
	}
	return r
}

func TestConfigResolve(t *testing.T) {
	r := loadGood(t, "good.toml")
	var names []string
	for _, p := range r.Free {
		names = append(names, p.Name)
	}
	want := []string{"temperature_k", "radius_rjup", "log10_cloud_top_bar", "error_inflation_ppm_wide"}
	if !reflect.DeepEqual(names, want) {
		t.Errorf("free parameters %v, want %v", names, want)
	}
	if len(r.Fixed) != 1 || r.Fixed[0].Name != "mass" || r.Fixed[0].Prior.(priors.Fixed).Value != 0.7 {
		t.Errorf("fixed %+v", r.Fixed)
	}
	if r.Walkers != 32 || r.Seed != 42 || r.Stop.Steps != 100 || r.Move != "stretch" || r.Workers != 0 {
		t.Errorf("sampler resolved to walkers %d seed %d stop %+v move %q workers %d", r.Walkers, r.Seed, r.Stop, r.Move, r.Workers)
	}
	c := &r.Config
	if *c.Atmosphere.Layers != 100 || c.Atmosphere.Fill != "H2+He" || *c.Atmosphere.HeH2Ratio != 0.17 ||
		*c.Clouds.Fraction != 1 || *c.Spectrum.MinBinPoints != 2 || *c.Planet.ReferencePressureBar != 10 {
		t.Errorf("model defaults not resolved: %+v", c.ModelConfig)
	}
	if !filepath.IsAbs(c.Observations[0].File) || c.Observations[0].Name != "wide" {
		t.Errorf("observations resolved to %+v", c.Observations)
	}
}

// TestResolvedRoundTrip: the resolved configuration written as TOML decodes
// to the same resolved configuration (what a run directory relies on).
func TestResolvedRoundTrip(t *testing.T) {
	for _, name := range []string{"good.toml", "two-datasets.toml", "clr.toml", "likelihood.toml"} {
		r := loadGood(t, name)
		var buf bytes.Buffer
		if err := r.WriteTOML(&buf); err != nil {
			t.Fatal(err)
		}
		dir := t.TempDir()
		path := filepath.Join(dir, "run.toml")
		if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
		r2, err := Load(path)
		if err != nil {
			t.Fatalf("%s: reading back the resolved configuration: %v\n%s", name, err, buf.String())
		}
		r2.Config.BaseDir, r.Config.BaseDir = "", ""
		if !reflect.DeepEqual(r.Config, r2.Config) {
			t.Errorf("%s: resolved configuration changed on the round trip:\n%+v\n%+v", name, r.Config, r2.Config)
		}
		var buf2 bytes.Buffer
		if err := r2.WriteTOML(&buf2); err != nil {
			t.Fatal(err)
		}
		if buf.String() != buf2.String() {
			t.Errorf("%s: written twice differently:\n%s\n---\n%s", name, buf.String(), buf2.String())
		}
	}
}

func TestTwoDatasets(t *testing.T) {
	r := loadGood(t, "two-datasets.toml")
	if len(r.Datasets) != 2 || r.Datasets[1].Name != "red" || r.Datasets[0].Name != "wide" {
		t.Fatalf("datasets %v", r.datasetNames())
	}
	if r.Free[2].Dataset != 1 || r.Free[3].Dataset != 0 || r.Free[2].Name != "offset_ppm_red" {
		t.Errorf("offset/inflation bound to %+v %+v", r.Free[2], r.Free[3])
	}
}

func TestGeneratedSeed(t *testing.T) {
	c, err := Decode(strings.Replace(readFile(t, "../testdata/cfg/good.toml"), "seed = 42", "", 1), "x.toml", "../testdata/cfg")
	if err != nil {
		t.Fatal(err)
	}
	r, err := c.Resolve()
	if err != nil {
		t.Fatal(err)
	}
	if *r.Config.Sampler.Seed != int64(r.Seed) || !strings.Contains(strings.Join(r.Notes, "\n"), "seed not given") {
		t.Errorf("generated seed %d not recorded (%d) or noted (%q)", r.Seed, *r.Config.Sampler.Seed, r.Notes)
	}
}

func readFile(t *testing.T, p string) string {
	t.Helper()
	b, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// TestBadConfigs: every malformed configuration is an error naming the
// file and the key (or the observation file and line).
func TestBadConfigs(t *testing.T) {
	cases := []struct{ file, want string }{
		{"cfg-unknown-key.toml", "unknown key planet.mas_mjup"},
		{"cfg-unknown-param-key.toml", "unknown key parameters.lo"},
		{"cfg-dup-name.toml", `parameters[2].name: parameter "T" is defined twice (also parameters[1])`},
		{"cfg-dup-sets.toml", "parameters[2].sets: temperature_k is already set by parameters[1]"},
		{"cfg-sets-nothing-profile.toml", `parameters[1].sets: t_irr_k (parameter "t_irr_k") sets nothing: the temperature profile is "isothermal"`},
		{"cfg-sets-nothing-haze.toml", "parameters[2].sets: haze_slope (parameter \"haze_slope\") sets nothing: there is no haze"},
		{"cfg-sets-nothing-fraction.toml", "sets nothing: there is no cloud deck"},
		{"cfg-unknown-quantity.toml", `parameters[1].sets: unknown quantity "albedo"`},
		{"cfg-missing-sets.toml", "missing key: parameters[1].sets"},
		{"cfg-fill-gas-param.toml", `parameters[2].gas: "He" is the fill gas`},
		{"cfg-unknown-gas.toml", `parameters[2].gas: unknown gas "Xx9"`},
		{"cfg-missing-gas.toml", "missing key: parameters[2].gas"},
		{"cfg-bad-prior.toml", `parameters[1]: prior of parameter "temperature_k": uniform prior needs low < high`},
		{"cfg-prior-extra-key.toml", "parameters[1].sigma: does not apply to a uniform prior"},
		{"cfg-prior-missing-key.toml", "missing key: parameters[1].sigma (for the normal prior)"},
		{"cfg-unknown-prior.toml", `parameters[1].prior: unknown prior "gaussian"`},
		{"cfg-missing-prior.toml", "missing key: parameters[1].prior"},
		{"cfg-vmr-prior-above-zero.toml", "parameters[2]: prior uniform(-5, 1) of \"log10_vmr_H2O\": reaches log10 mixing ratio 1 > 0"},
		{"cfg-negative-temperature-prior.toml", "parameters[1]: prior normal(1000, 300) of \"temperature_k\": temperature_k must be positive"},
		{"cfg-walkers-odd.toml", "sampler.walkers: 33: must be even"},
		{"cfg-walkers-few.toml", "sampler.walkers: 4: must be even and at least 2(dim+1) = 6"},
		{"cfg-two-stops.toml", "sampler: give one stopping rule"},
		{"cfg-bad-budget.toml", `sampler.budget: "eight hours" is not a positive duration`},
		{"cfg-converged-false.toml", "sampler.until_converged: false is not a stopping rule"},
		{"cfg-bad-move.toml", `sampler.move: unknown move "hop"`},
		{"cfg-negative-seed.toml", "sampler.seed: must not be negative"},
		{"cfg-no-observations.toml", "missing key: observations"},
		{"cfg-obs-missing-file.toml", "/testdata/obs/nowhere.csv: no such file"},
		{"cfg-obs-no-file.toml", "missing key: observations[1].file"},
		{"cfg-obs-bad-file.toml", "/testdata/bad/obs-overlap.csv:3: bin 1.05-1.2 um overlaps"},
		{"cfg-dup-dataset.toml", `observations[2].name: data set name "wide" is also that of observations[1]`},
		{"cfg-dup-bin-datasets.toml", "/testdata/obs/wide.csv:3: duplicated bin 1-1.2 um, also in"},
		{"cfg-offset-unknown-dataset.toml", `parameters[2].dataset: no observations named "blue" (data sets: wide)`},
		{"cfg-offset-no-dataset.toml", "missing key: parameters[2].dataset"},
		{"cfg-dataset-on-wrong-quantity.toml", "parameters[1].dataset: applies only to offset_ppm and error_inflation_ppm parameters"},
		{"cfg-gas-on-wrong-quantity.toml", "parameters[1].gas: applies only to log10_vmr parameters"},
		{"cfg-spectrum-bins.toml", "spectrum: bins (bin_edges_um"},
		{"cfg-no-free.toml", "parameters: no free parameter"},
		{"cfg-reserved-name.toml", `parameters[1].name: "step"`},
		{"cfg-syntax.toml", "line 27: expected value"},
		{"cfg-model-invalid.toml", `atmosphere.temperature.t_irr_k: does not apply to profile "isothermal"`},
		{"cfg-clr-and-vmr.toml", `parameters[3].gas: the mixing ratio of "H2O" is set by the centred-log-ratio prior (composition.gases)`},
		{"cfg-clr-unknown-prior.toml", `composition.prior: unknown composition prior "dirichlet"`},
		{"cfg-clr-fill-in-gases.toml", `composition.gases: "N2" is the fill gas (N2)`},
		{"cfg-clr-no-gases.toml", "missing key: composition.gases"},
		{"cfg-clr-in-parameters.toml", "parameters[3].sets: centred-log-ratio coordinates are not set by [[parameters]]"},
		{"cfg-clr-min-vmr.toml", "composition: priors: centred-log-ratio prior: lowest mixing ratio 0.5 must lie in (0, 1/3)"},
		{"cfg-clr-keys-independent.toml", "composition.prior: composition.gases and composition.min_vmr apply only to prior"},
		{"cfg-inflation-twice.toml", "parameters[3].dataset: an error_inflation_ppm parameter for every data set is given too (parameters[2])"},
	}
	// Errors found only once the model and opacities are known: these
	// resolve, and retrieve's TestBadConfigsProblem checks NewProblem's error.
	problemFiles := []string{"cfg-no-opacity-gas.toml", "cfg-bins-outside.toml"}
	seen := map[string]bool{}
	for _, c := range cases {
		seen[c.file] = true
		path := filepath.Join("..", "testdata", "bad", c.file)
		_, err := Load(path)
		if err == nil {
			t.Errorf("%s: no error", c.file)
			continue
		}
		if !strings.HasPrefix(err.Error(), path) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s:\n got %q\nwant it to start with the path and contain %q", c.file, err, c.want)
		}
	}
	for _, f := range problemFiles {
		seen[f] = true
		if _, err := Load(filepath.Join("..", "testdata", "bad", f)); err != nil {
			t.Errorf("%s: %v", f, err)
		}
	}
	files, _ := filepath.Glob("../testdata/bad/cfg-*")
	for _, f := range files {
		if !seen[filepath.Base(f)] {
			t.Errorf("%s has no test case", f)
		}
	}
}

// FuzzDecodeConfig: any text decodes and resolves to a valid configuration
// or an error; never a panic.
func FuzzDecodeConfig(f *testing.F) {
	for _, dir := range []string{"../testdata/cfg", "../testdata/bad"} {
		files, _ := filepath.Glob(filepath.Join(dir, "*.toml"))
		for _, p := range files {
			if b, err := os.ReadFile(p); err == nil {
				f.Add(string(b))
			}
		}
	}
	f.Fuzz(func(t *testing.T, text string) {
		c, err := Decode(text, "fuzz.toml", "../testdata/cfg")
		if err != nil {
			return
		}
		r, err := c.Resolve()
		if err != nil {
			return
		}
		if len(r.Free) == 0 || r.Walkers < 2*(len(r.Free)+1) || r.Walkers%2 != 0 {
			t.Fatalf("resolved to %d free parameters and %d walkers", len(r.Free), r.Walkers)
		}
		for _, p := range r.Free {
			if lo, hi := p.Prior.Support(); math.IsNaN(lo) || math.IsNaN(hi) {
				t.Fatalf("prior %v", p.Prior)
			}
		}
		var buf bytes.Buffer
		if err := r.WriteTOML(&buf); err != nil {
			t.Fatal(err)
		}
	})
}

func TestMissingConfigFile(t *testing.T) {
	if _, err := Load("../testdata/cfg/nowhere.toml"); err == nil || !strings.Contains(err.Error(), "../testdata/cfg/nowhere.toml") {
		t.Errorf("missing file: %v", err)
	}
}
