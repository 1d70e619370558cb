package campaign

import (
	"path/filepath"
	"strings"
	"testing"
)

// A grid expanded before the renames of this release is still opened: its
// identity, computed over the old spellings, matches.
// testdata/grid-0.1/resolved-grid.toml is the record the earlier version
// (commit bef7183) wrote for testdata/grid/noise-clouds.toml (its paths
// are those of the directory it was made in, part of the identity).
func TestOpenGridMadeBeforeRenames(t *testing.T) {
	g, err := OpenGrid(filepath.Join("testdata", "grid-0.1"))
	if err != nil {
		t.Fatal(err)
	}
	if a := g.Axes(); len(a) != 2 || a[1].Key != "clouds.top_pressure_bar" || len(g.Points) != 12 {
		t.Errorf("axes %v, %d points", a, len(g.Points))
	}
	if g.Identity() != "d09c50d5328d5d99105b3c28c56347eb05845228761531d2cbbed69268e9166f" {
		t.Errorf("identity %s", g.Identity())
	}
}

// A point's fit.toml written before the renames is the configuration the
// grid makes now (so expanding the grid again keeps it); a real
// difference is not.
func TestSameConfigAcrossRenames(t *testing.T) {
	old := "[clouds]\ntop_pressure_bar = 0.01\nhaze_factor = 3\n[sampler]\nmove = \"de\"\n"
	now := "[clouds]\ncloud_top_bar = 0.01\nhaze_strength = 3\n[sampler]\nmove = \"differential-evolution\"\n"
	if !sameConfig([]byte(old), []byte(now)) {
		t.Error("the old and new spellings of one configuration differ")
	}
	if sameConfig([]byte(old), []byte(strings.Replace(now, "0.01", "0.02", 1))) {
		t.Error("different cloud tops compare equal")
	}
}
