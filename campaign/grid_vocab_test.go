package campaign

import (
	"bytes"
	"strings"
	"testing"
)

// A grid written in the old spellings ([[axis]], an old key path on an
// axis and in [set]) is expanded as if written in the new ones, each old
// spelling named in a warning with its new name; [set] takes a dotted key
// (sampler.steps = 600) unquoted.
func TestGridOldSpellingsAndDottedSet(t *testing.T) {
	spec := writeGridFiles(t, `
base = "scenario.toml"
[observe]
noise_ppm = 60
[set]
sampler.steps = 600
"clouds.fraction" = 0.5
[[axis]]
key = "clouds.top_pressure_bar"
values = [1e-2, 1]
`)
	var log bytes.Buffer
	g, err := CreateGrid(spec, t.TempDir()+"/g", GridOptions{Log: &log})
	if err != nil {
		t.Fatal(err)
	}
	if a := g.Axes(); len(a) != 1 || a[0].Key != "clouds.cloud_top_bar" || len(g.Points) != 2 {
		t.Errorf("axes %v, %d points", a, len(g.Points))
	}
	set := map[string]any{}
	for _, s := range g.rec.Set {
		set[s.Key] = s.Value
	}
	if set["sampler.steps"] != int64(600) || set["clouds.cloud_fraction"] != 0.5 {
		t.Errorf("[set] = %v", g.rec.Set)
	}
	for _, want := range []string{"axis is the old name of axes", "clouds.top_pressure_bar is the old name of clouds.cloud_top_bar", "clouds.fraction is the old name of clouds.cloud_fraction"} {
		if !strings.Contains(log.String(), want) {
			t.Errorf("log lacks %q:\n%s", want, log.String())
		}
	}
}
