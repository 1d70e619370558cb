package config

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestObservationFormats: an IPAC table mapped by column names and split by
// its instrument column, an offset on one of its data sets, and a table
// without a header read by position; notes reach the resolved
// configuration's notes.
func TestObservationFormats(t *testing.T) {
	r := loadGood(t, "formats.toml")
	var names []string
	for _, d := range r.Datasets {
		names = append(names, d.Name)
	}
	if got := strings.Join(names, " "); got != "velmora_Hesper_VIS velmora_Hesper_IR headerless" {
		t.Errorf("data sets %s", got)
	}
	if p := r.Free[1]; p.Name != "offset_ppm_velmora_Hesper_IR" || p.Dataset != 1 {
		t.Errorf("offset parameter %+v", p)
	}
	if n := strings.Join(r.Notes, "\n"); !strings.Contains(n, "splits the file into 2 data sets") {
		t.Errorf("notes %q", n)
	}
	o := r.Config.Observations[1]
	if o.Name != "headerless" || *o.EdgeTolerance != 1e-3 || o.Columns["depth"] != int64(4) {
		t.Errorf("resolved observations[2] %+v", o)
	}
}

// TestBadObservationKeys: each malformed [[observations]] key is an error
// naming the key.
func TestBadObservationKeys(t *testing.T) {
	base, err := os.ReadFile(filepath.Join("..", "testdata", "cfg", "formats.toml"))
	if err != nil {
		t.Fatal(err)
	}
	dir, _ := filepath.Abs(filepath.Join("..", "testdata", "cfg"))
	cases := []struct{ from, to, want string }{
		{`depth_unit = "percent"`, `depth_unit = "mmag"`, `observations[2].depth_unit: unknown depth unit "mmag"`},
		{`wavelength_unit = "um"`, `wavelength_unit = "um"` + "\nformat = \"fits\"", `observations[2].format: unknown format "fits"`},
		{`depth = 4,`, `depth = 4, flux = 6,`, "observations[2].columns.flux: unknown quantity"},
		{`depth = 4,`, `depth = true,`, "observations[2].columns.depth: true: give the column's name (a string) or its position (an integer from 1)"},
		{`depth = 4,`, `depth = 0,`, "observations[2].columns.depth: position 0: columns are counted from 1"},
		{`depth = 4,`, `depth = "td",`, "observations[2].columns: give every column by name"},
		{`edge_tolerance = 1e-3`, `edge_tolerance = 0.0`, "observations[2].edge_tolerance: 0 would refuse every rounded edge"},
		{`edge_tolerance = 1e-3`, `edge_tolerance = 0.7`, "observations[2].edge_tolerance: 0.7: a fraction of a bin's width"},
		{`edge_tolerance = 1e-3`, `width = "double"`, `observations[2].width: "double"`},
		{`depth_unit = "percent"`, `depth_unit = "ppm"` + "\nwidth = \"half\"", "observations[2].file: "},
		{`depth = "transit_depth"`, `depth = "depth"`, `observations[1].file: `},
		{`dataset = "velmora_Hesper_IR"`, `dataset = "velmora"`, `parameters[2].dataset: no observations named "velmora"`},
	}
	for _, c := range cases {
		if !strings.Contains(string(base), c.from) {
			t.Fatalf("%q not in formats.toml", c.from)
		}
		text := strings.Replace(string(base), c.from, c.to, 1)
		cfg, err := Decode(text, "formats.toml", dir)
		if err == nil {
			_, err = cfg.Resolve()
		}
		var ke *KeyError
		if err == nil || !errors.As(err, &ke) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s -> %s: %v, want a key error containing %q", c.from, c.to, err, c.want)
		}
	}
}
