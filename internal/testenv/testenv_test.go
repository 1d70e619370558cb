package testenv

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestRepoRoot(t *testing.T) {
	dir := RepoRoot(t)
	b, err := os.ReadFile(filepath.Join(dir, "go.mod"))
	if err != nil {
		t.Fatal(err)
	}
	if len(b) < 12 || string(b[:12]) != "module chord" {
		t.Errorf("%s/go.mod starts %q, want the chord module", dir, b[:min(len(b), 12)])
	}
}

func TestSharedDataSkipsWhenAbsent(t *testing.T) {
	var skipped bool
	t.Run("absent", func(t *testing.T) {
		defer func() { skipped = t.Skipped() }()
		SharedData(t, "no-such-sample-directory")
	})
	if !skipped {
		t.Error("SharedData did not skip for an absent directory")
	}
}

// A fixture adapted by a test: keys set in place, added to their table or
// in a new table, deleted; tables and arrays of tables deleted.
func TestFixture(t *testing.T) {
	f := Fixture(t, "sub-neptune.toml").
		Set("planet.mass_mearth", "7").
		Set("opacity.grey_cross_section_m2", "1e-29").
		Set("parameters[2].high", "1200").
		Set("clouds.cloud_top_bar", "1.0").
		Delete("spectrum.bin_resolving_power").
		DeleteTable("sampler").
		Append("[[observations]]\nfile = \"obs.csv\"")
	got := f.String()
	for _, want := range []string{
		"mass_mearth = 7\n",
		"rayleigh = [\"H2\", \"He\"]\ngrey_cross_section_m2 = 1e-29\n",
		"low = 300\nhigh = 1200\n",
		"[clouds]\ncloud_top_bar = 1.0\n",
		"resolving_power = 300\n\n[[parameters]]",
		"[[observations]]\nfile = \"obs.csv\"\n",
	} {
		if !strings.Contains(got, want) {
			t.Errorf("adapted fixture lacks %q:\n%s", want, got)
		}
	}
	for _, gone := range []string{"bin_resolving_power", "[sampler]", "walkers"} {
		if strings.Contains(got, gone) {
			t.Errorf("adapted fixture still holds %q", gone)
		}
	}
	if n := strings.Count(Fixture(t, "sub-neptune.toml").DeleteTable("parameters").String(), "[[parameters]]"); n != 0 {
		t.Errorf("%d [[parameters]] tables left", n)
	}
}
