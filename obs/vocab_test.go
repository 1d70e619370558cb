package obs

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// chord writes one observation layout, edge_low_um,edge_high_um,depth_ppm,
// error_ppm, and reads it back; the old spelling error beside depth_ppm is
// read the same, with a note naming error_ppm.
func TestObservationLayoutErrorPPM(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "new.csv")
	o := &Observation{Lo: []float64{1e-6, 1.1e-6}, Hi: []float64{1.1e-6, 1.2e-6}, Depth: []float64{0.01, 0.0101}, Sigma: []float64{5e-5, 5e-5}}
	if err := WriteObservation(p, o, false); err != nil {
		t.Fatal(err)
	}
	b, _ := os.ReadFile(p)
	if !strings.HasPrefix(string(b), "edge_low_um,edge_high_um,depth_ppm,error_ppm\n") {
		t.Errorf("written layout:\n%s", b)
	}
	newDS, err := Read(p, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(newDS[0].Notes) != 0 {
		t.Errorf("notes on chord's own layout: %v", newDS[0].Notes)
	}
	old := filepath.Join(dir, "old.csv")
	os.WriteFile(old, []byte(strings.Replace(string(b), "error_ppm", "error", 1)), 0o644)
	oldDS, err := Read(old, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if oldDS[0].Sigma[0] != newDS[0].Sigma[0] || oldDS[0].Depth[1] != newDS[0].Depth[1] {
		t.Errorf("old layout read differently: sigma %v, depth %v", oldDS[0].Sigma, oldDS[0].Depth)
	}
	if len(oldDS[0].Notes) != 1 || !strings.Contains(oldDS[0].Notes[0], "error_ppm") || !strings.Contains(oldDS[0].Notes[0], "old.csv") {
		t.Errorf("notes on the old layout: %v", oldDS[0].Notes)
	}
}
