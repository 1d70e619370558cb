package config

import (
	"bytes"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

// The resolved configuration written as run.toml shows no placeholder for
// a key a parameter sets: a key the configuration left out (a gas added
// at 0, a default, a prior's median) is a comment naming the parameter; a
// key it gave keeps its value, marked as unused. Reading the file back
// gives the same resolved configuration.
func TestRunTOMLMarksKeysSetByParameters(t *testing.T) {
	r, err := Load(filepath.Join("..", "testdata", "cfg", "likelihood.toml"))
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := r.WriteTOML(&buf); err != nil {
		t.Fatal(err)
	}
	text := buf.String()
	for _, want := range []string{
		"    # H2O: set by parameter log10_vmr_H2O\n",
		"  # haze_strength: set by parameter log10_haze_strength\n",
		"  # cloud_fraction: set by parameter cloud_fraction\n",
		"  temperature_k = 1000.0  # set by parameter temperature_k; this value is not used\n",
		"  cloud_top_bar = 0.01  # set by parameter log10_cloud_top_bar; this value is not used\n",
	} {
		if !strings.Contains(text, want) {
			t.Errorf("run.toml lacks %q", want)
		}
	}
	for _, placeholder := range []string{"H2O = 0.0", "haze_strength = 0.0", "cloud_fraction = 1.0"} {
		if strings.Contains(text, placeholder) {
			t.Errorf("run.toml shows the placeholder %q", placeholder)
		}
	}
	path := filepath.Join(t.TempDir(), "run.toml")
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	back, err := Load(path)
	if err != nil {
		t.Fatal(err)
	}
	back.Config.BaseDir = r.Config.BaseDir
	if !reflect.DeepEqual(back.Config, r.Config) {
		t.Errorf("run.toml read back differs:\n%v", fieldDiffs(back.Config, r.Config))
	}
}
