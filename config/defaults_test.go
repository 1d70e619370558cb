package config

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"reflect"
	"testing"

	"chord/forward"
)

// fieldDiffs names the fields of two structs of one type that differ.
func fieldDiffs(a, b any) []string {
	va, vb := reflect.ValueOf(a), reflect.ValueOf(b)
	var d []string
	for i := range va.NumField() {
		if !reflect.DeepEqual(va.Field(i).Interface(), vb.Field(i).Interface()) {
			d = append(d, fmt.Sprintf("%s: %v != %v", va.Type().Field(i).Name, va.Field(i).Interface(), vb.Field(i).Interface()))
		}
	}
	return d
}

// run.toml describes exactly the model that ran: the resolved
// configuration states every default (resolving it again adds nothing),
// and the forward model's configuration and state built from it equal,
// field by field, those built from it written out as run.toml and read
// back (what resume does), and those built from the model sections as
// given (what chord spectrum does).
func TestResolvedDescribesModel(t *testing.T) {
	for _, name := range []string{"defaults.toml", "good.toml", "two-datasets.toml", "clr.toml", "likelihood.toml"} {
		r, err := Load(filepath.Join("..", "testdata", "cfg", name))
		if err != nil {
			t.Fatal(err)
		}
		if d := r.Config.ModelConfig.withDefaults(); !reflect.DeepEqual(d, r.Config.ModelConfig) {
			t.Errorf("%s: the resolved configuration leaves defaults unstated:\n%v", name, fieldDiffs(d, r.Config.ModelConfig))
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
			t.Fatal(err)
		}
		var bins forward.Bins
		for _, d := range r.Datasets {
			bins.Lo, bins.Hi = append(bins.Lo, d.Lo...), append(bins.Hi, d.Hi...)
		}
		ran, err := r.Config.ForwardConfig(nil, &bins)
		if err != nil {
			t.Fatal(err)
		}
		m, err := forward.NewModel(ran)
		if err != nil {
			t.Fatal(err)
		}
		state, err := r.Config.State(m)
		if err != nil {
			t.Fatal(err)
		}
		// The model sections as given, with the gases and the values the
		// parameters set filled in as Resolve does.
		text, _ := os.ReadFile(filepath.Join("..", "testdata", "cfg", name))
		raw, err := Decode(string(text), name, "")
		if err != nil {
			t.Fatal(err)
		}
		given := raw.ModelConfig
		given.Atmosphere.Gases = r.Config.Atmosphere.Gases
		r.fillFromPriors(&given)
		for _, c := range []struct {
			what string
			mc   *ModelConfig
		}{{"run.toml read back", &back.Config.ModelConfig}, {"the model sections as given", &given}} {
			fc, err := c.mc.ForwardConfig(nil, &bins)
			if err != nil {
				t.Fatal(err)
			}
			if d := fieldDiffs(ran, fc); len(d) > 0 {
				t.Errorf("%s: the forward configuration from %s differs: %v", name, c.what, d)
			}
			st, err := c.mc.State(m)
			if err != nil {
				t.Fatal(err)
			}
			if d := fieldDiffs(state, st); len(d) > 0 {
				t.Errorf("%s: the state from %s differs: %v", name, c.what, d)
			}
		}
	}
}
