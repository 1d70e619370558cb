package opacity

import (
	"os"
	"path/filepath"
	"testing"
)

// lblData returns ../shared/data/sub relative to the repository root (the
// directory holding go.mod), or skips the test when it is absent.
func lblData(t testing.TB, sub string) string {
	t.Helper()
	dir, err := os.Getwd()
	if err != nil {
		t.Fatal(err)
	}
	for {
		if _, err := os.Stat(filepath.Join(dir, "go.mod")); err == nil {
			break
		}
		parent := filepath.Dir(dir)
		if parent == dir {
			t.Skip("repository root (go.mod) not found; shared spectroscopic data unavailable")
		}
		dir = parent
	}
	p := filepath.Join(dir, "..", "shared", "data", sub)
	if _, err := os.Stat(p); err != nil {
		t.Skipf("shared spectroscopic data %s is absent (%v); skipping", p, err)
	}
	return p
}

// lblIsoData reads HITRAN's molparam table and the TIPS-2011 partition
// sums from the shared data.
func lblIsoData(t testing.TB) IsoData {
	t.Helper()
	d, err := ReadMolParam(filepath.Join(lblData(t, "partition"), "molparam_hitran.txt"))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := ReadTIPSTable(filepath.Join(lblData(t, "partition"), "parsum2011_tips.dat"), d); err != nil {
		t.Fatal(err)
	}
	return d
}
