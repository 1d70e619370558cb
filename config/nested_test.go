package config

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"chord/priors"
)

// goodWithSampler writes testdata/cfg/good.toml with its [sampler] table
// replaced by sampler (and extra appended) into the test's directory, its
// observation named by absolute path, and returns the path.
func goodWithSampler(t *testing.T, sampler, extra string) string {
	t.Helper()
	text := readFile(t, filepath.Join("..", "testdata", "cfg", "good.toml"))
	text = text[:strings.Index(text, "[sampler]")] + "[sampler]\n" + sampler + "\n" + extra
	obs, err := filepath.Abs(filepath.Join("..", "testdata", "obs", "wide.csv"))
	if err != nil {
		t.Fatal(err)
	}
	text = strings.Replace(text, `file = "../obs/wide.csv"`, `file = "`+obs+`"`, 1)
	path := filepath.Join(t.TempDir(), "cfg.toml")
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// [sampler] method = "nested": defaults stated, the resolved configuration
// reads back to itself, and the keys of the other method are errors.
func TestNestedSampler(t *testing.T) {
	r, err := Load(goodWithSampler(t, "method = \"nested\"\nseed = 3", ""))
	if err != nil {
		t.Fatal(err)
	}
	if r.Method != MethodNested || r.LivePoints != DefaultLivePoints || r.Batch != DefaultBatch || r.EvidenceTol != DefaultEvidenceTolerance ||
		r.Walkers != 0 || r.Move != "" || !r.Stop.UntilConverged || r.Seed != 3 {
		t.Errorf("resolved to method %q live %d batch %d tol %g walkers %d move %q stop %+v", r.Method, r.LivePoints, r.Batch, r.EvidenceTol, r.Walkers, r.Move, r.Stop)
	}
	s := r.Config.Sampler
	if s.Method != MethodNested || *s.LivePoints != DefaultLivePoints || *s.Batch != DefaultBatch || *s.EvidenceTolerance != DefaultEvidenceTolerance || s.Walkers != nil || s.Move != "" {
		t.Errorf("the resolved [sampler] does not state the nested defaults: %+v", s)
	}
	var buf bytes.Buffer
	if err := r.WriteTOML(&buf); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "run.toml")
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	back, err := Load(path)
	if err != nil {
		t.Fatalf("reading back: %v\n%s", err, buf.String())
	}
	back.Config.BaseDir, r.Config.BaseDir = "", ""
	if !reflect.DeepEqual(back.Config.Sampler, r.Config.Sampler) || back.LivePoints != r.LivePoints || back.Method != r.Method {
		t.Errorf("[sampler] changed on the round trip: %+v != %+v", back.Config.Sampler, r.Config.Sampler)
	}

	r, err = Load(goodWithSampler(t, "method = \"nested\"\nlive_points = 50\nbatch = 8\nevidence_tolerance = 0.5\nbudget = \"2h\"", ""))
	if err != nil {
		t.Fatal(err)
	}
	if r.LivePoints != 50 || r.Batch != 8 || r.EvidenceTol != 0.5 || r.Stop.Budget != 7200 {
		t.Errorf("resolved to live %d batch %d tol %g stop %+v", r.LivePoints, r.Batch, r.EvidenceTol, r.Stop)
	}
	// The ensemble stays the default and states no nested key.
	r = loadGood(t, "good.toml")
	if r.Method != MethodEnsemble || r.Config.Sampler.Method != "" || r.Config.Sampler.LivePoints != nil || r.LivePoints != 0 {
		t.Errorf("default method %q, sampler %+v", r.Method, r.Config.Sampler)
	}

	// good.toml has 4 free parameters: at least 10 live points.
	bad := []struct{ sampler, extra, key string }{
		{"method = \"nested\"\nwalkers = 32", "", "sampler.walkers"},
		{"method = \"nested\"\nmove = \"walk\"", "", "sampler.move"},
		{"method = \"nested\"\nsteps = 100", "", "sampler.steps"},
		{"method = \"nested\"\nlive_points = 9", "", "sampler.live_points"},
		{"method = \"nested\"\nbatch = 0", "", "sampler.batch"},
		{"method = \"nested\"\nlive_points = 20\nbatch = 21", "", "sampler.batch"},
		{"method = \"nested\"\nevidence_tolerance = 0", "", "sampler.evidence_tolerance"},
		{"method = \"nested\"\nevidence_tolerance = -1", "", "sampler.evidence_tolerance"},
		{"method = \"nested\"\nbudget = \"2h\"\nuntil_converged = true", "", "sampler"},
		{"method = \"annealing\"", "", "sampler.method"},
		{"live_points = 100", "", "sampler.live_points"},
		{"method = \"ensemble\"\nbatch = 4", "", "sampler.batch"},
		{"evidence_tolerance = 0.1", "", "sampler.evidence_tolerance"},
		{"method = \"nested\"\nlive_points = 100", "[composition]\nprior = \"clr\"\ngases = [\"H2O\"]\n", "sampler.method"},
	}
	for i, c := range bad {
		path := goodWithSampler(t, c.sampler, c.extra)
		_, err := Load(path)
		var ke *KeyError
		if !errors.As(err, &ke) || ke.Key != c.key || ke.File != path {
			t.Errorf("case %d (%q): error %v, want a KeyError of key %s in %s", i, c.sampler, err, c.key, path)
		}
	}
}

// Without holds a gas's log10 mixing ratio at its uniform prior's lower
// edge; gases without such a parameter are errors naming the gas.
func TestWithout(t *testing.T) {
	extra := `
[[parameters]]
sets = "log10_vmr"
gas = "H2O"
prior = "uniform"
low = -12
high = -1
[[parameters]]
sets = "log10_vmr"
gas = "CH4"
prior = "truncated-normal"
mean = -4
sigma = 1
high = -1
[[parameters]]
sets = "log10_vmr"
gas = "CO2"
prior = "fixed"
value = -6
`
	path := goodWithSampler(t, "seed = 1\nsteps = 10", extra)
	load := func() *Config {
		c, err := Decode(readFile(t, path), path, filepath.Dir(path))
		if err != nil {
			t.Fatal(err)
		}
		return c
	}
	c := load()
	if err := c.Without([]string{"H2O"}); err != nil {
		t.Fatal(err)
	}
	r, err := c.Resolve()
	if err != nil {
		t.Fatal(err)
	}
	found := false
	for _, p := range r.Fixed {
		if p.Gas == "H2O" {
			found = p.Prior == priors.Fixed{Value: -12}
		}
	}
	for _, p := range r.Free {
		if p.Gas == "H2O" {
			t.Errorf("H2O is still free")
		}
	}
	if !found {
		t.Errorf("H2O not held at -12: fixed %+v", r.Fixed)
	}
	for _, c := range []struct {
		gases []string
		want  string
	}{
		{[]string{"NH3"}, "no log10_vmr parameter of NH3 (gases with one: H2O, CH4)"},
		{[]string{"CH4"}, `parameters[7].prior`},
		{[]string{"CO2"}, `parameters[8].prior`},
		{[]string{"H2O", "H2O"}, "named twice"},
	} {
		err := load().Without(c.gases)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("without %v: error %v, want one saying %q", c.gases, err, c.want)
		}
	}
}
