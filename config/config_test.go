package config

import (
	"bytes"
	"errors"
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
	if *c.Atmosphere.Layers != 100 || c.Atmosphere.BalanceGas != "H2+He" || *c.Atmosphere.BalanceHeH2Ratio != 0.17 ||
		*c.Clouds.CloudFraction != 1 || *c.Spectrum.MinBinPoints != 2 || *c.Planet.ReferencePressureBar != 10 {
		t.Errorf("model defaults not resolved: %+v", c.ModelConfig)
	}
	if !filepath.IsAbs(c.Observations[0].File) || c.Observations[0].Name != "wide" {
		t.Errorf("observations resolved to %+v", c.Observations)
	}
}

// TestResolvedRoundTrip: the resolved configuration written as TOML decodes
// to the same resolved configuration (what a run directory relies on).
func TestResolvedRoundTrip(t *testing.T) {
	for _, name := range []string{"good.toml", "two-datasets.toml", "clr.toml", "likelihood.toml", "formats.toml"} {
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

// TestBadConfigs: every malformed configuration is a KeyError naming the
// file and the key (wrapping the observation file's error, which names its
// file and line).
func TestBadConfigs(t *testing.T) {
	// The key at fault of each malformed configuration ("" for a syntax
	// error, which names its line).
	cases := []struct{ file, key string }{
		{"cfg-bad-budget.toml", "sampler.budget"},
		{"cfg-bad-move.toml", "sampler.move"},
		{"cfg-bad-prior.toml", "parameters[1]"},
		{"cfg-clr-and-vmr.toml", "parameters[3].gas"},
		{"cfg-clr-fill-in-gases.toml", "composition.gases"},
		{"cfg-clr-in-parameters.toml", "parameters[3].sets"},
		{"cfg-clr-keys-independent.toml", "composition.prior"},
		{"cfg-clr-min-vmr.toml", "composition"},
		{"cfg-clr-no-gases.toml", "composition.gases"},
		{"cfg-clr-unknown-prior.toml", "composition.prior"},
		{"cfg-converged-false.toml", "sampler.until_converged"},
		{"cfg-dataset-on-wrong-quantity.toml", "parameters[1].dataset"},
		{"cfg-dup-bin-datasets.toml", "observations[2].file"},
		{"cfg-dup-dataset.toml", "observations[2].name"},
		{"cfg-dup-name.toml", "parameters[2].name"},
		{"cfg-dup-sets.toml", "parameters[2].sets"},
		{"cfg-fill-gas-param.toml", "parameters[2].gas"},
		{"cfg-gas-on-wrong-quantity.toml", "parameters[1].gas"},
		{"cfg-inflation-twice.toml", "parameters[3].dataset"},
		{"cfg-missing-gas.toml", "parameters[2].gas"},
		{"cfg-missing-prior.toml", "parameters[1].prior"},
		{"cfg-missing-sets.toml", "parameters[1].sets"},
		{"cfg-model-invalid.toml", "atmosphere.temperature.t_irr_k"},
		{"cfg-negative-seed.toml", "sampler.seed"},
		{"cfg-negative-temperature-prior.toml", "parameters[1]"},
		{"cfg-no-free.toml", "parameters"},
		{"cfg-no-observations.toml", "observations"},
		{"cfg-obs-bad-file.toml", "observations[1].file"},
		{"cfg-obs-missing-file.toml", "observations[1].file"},
		{"cfg-obs-no-file.toml", "observations[1].file"},
		{"cfg-offset-no-dataset.toml", "parameters[2].dataset"},
		{"cfg-offset-unknown-dataset.toml", "parameters[2].dataset"},
		{"cfg-prior-extra-key.toml", "parameters[1].sigma"},
		{"cfg-prior-missing-key.toml", "parameters[1].sigma"},
		{"cfg-reserved-name.toml", "parameters[1].name"},
		{"cfg-sets-nothing-fraction.toml", "parameters[2].sets"},
		{"cfg-sets-nothing-haze.toml", "parameters[2].sets"},
		{"cfg-sets-nothing-profile.toml", "parameters[1].sets"},
		{"cfg-spectrum-bins.toml", "spectrum"},
		{"cfg-syntax.toml", ""},
		{"cfg-two-stops.toml", "sampler"},
		{"cfg-unknown-gas.toml", "parameters[2].gas"},
		{"cfg-unknown-key.toml", "planet.mas_mjup"},
		{"cfg-unknown-param-key.toml", "parameters.lo"},
		{"cfg-unknown-prior.toml", "parameters[1].prior"},
		{"cfg-unknown-quantity.toml", "parameters[1].sets"},
		{"cfg-vmr-prior-above-zero.toml", "parameters[2]"},
		{"cfg-walkers-few.toml", "sampler.walkers"},
		{"cfg-walkers-many.toml", "sampler.walkers"},
		{"cfg-star-smaller.toml", "star.radius_rsun"},
		{"cfg-unbound.toml", "planet.mass_mjup"},
		{"cfg-walkers-odd.toml", "sampler.walkers"},
	}
	// Errors found only once the model and opacities are known: these
	// resolve, and retrieve's TestBadConfigsProblem checks NewProblem's error.
	problemFiles := []string{"cfg-no-opacity-gas.toml", "cfg-bins-outside.toml"}
	seen := map[string]bool{}
	for _, c := range cases {
		seen[c.file] = true
		path := filepath.Join("..", "testdata", "bad", c.file)
		_, err := Load(path)
		var ke *KeyError
		if !errors.As(err, &ke) || ke.File != path || ke.Key != c.key || (c.key == "") != (ke.Line > 0) {
			t.Errorf("%s: error %v, want a KeyError of key %q", c.file, err, c.key)
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
			if lo, hi := p.Prior.Quantile(0), p.Prior.Quantile(1); math.IsNaN(lo) || math.IsNaN(hi) {
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
