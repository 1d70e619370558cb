package opacity

import (
	"path/filepath"
	"testing"

	"chord/internal/testenv"
)

// lblIsoData reads HITRAN's molparam table and the TIPS-2011 partition
// sums from the shared data.
func lblIsoData(t testing.TB) IsoData {
	t.Helper()
	d, err := ReadMolParam(filepath.Join(testenv.SharedData(t, "partition"), "molparam_hitran.txt"))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := ReadTIPSTable(filepath.Join(testenv.SharedData(t, "partition"), "parsum2011_tips.dat"), d); err != nil {
		t.Fatal(err)
	}
	return d
}
