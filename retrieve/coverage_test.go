package retrieve

import (
	"math"
	"strings"
	"testing"

	"chord/forward"
	"chord/forward/opacity"
	"chord/obs"
)

// TestTableCoverage: a cross-section table over 1-2 um that is zero from
// 1.4 to 1.6 um, for data bins at 1.1-1.2 um (covered), 1.45-1.55 um (zero)
// and 1.9-2.1 um (beyond the table): the second bin is zero, the third
// missing, both without line opacity; the table's grid and the model's
// pressures are reported as given.
func TestTableCoverage(t *testing.T) {
	const n = 101
	tab := &opacity.XSecTable{Gas: "H2O", Log10P: []float64{0, 7}, T: []float64{300, 900}, Wavenumber: make([]float64, n), Sigma: make([]float32, 4*n)}
	for k := range n {
		wl := 2e-6 - float64(k)*1e-8 // 2 um down to 1 um
		tab.Wavenumber[k] = 1 / wl
		if wl < 1.4e-6 || wl > 1.6e-6 {
			for r := range 4 {
				tab.Sigma[r*n+k] = 1e-26
			}
		}
	}
	d := &obs.Dataset{Path: "obs.csv", Lo: []float64{1.1e-6, 1.45e-6, 1.9e-6}, Hi: []float64{1.2e-6, 1.55e-6, 2.1e-6}, Line: []int{2, 3, 4}}
	cov := tableCoverage(forward.Config{XSec: []*opacity.XSecTable{tab}}, []*obs.Dataset{d}, []float64{1e6, 1e3, 0.1})
	if len(cov.Tables) != 1 || cov.Bins != 3 || cov.PMin != 0.1 || cov.PMax != 1e6 {
		t.Fatalf("coverage %+v", cov)
	}
	tc := cov.Tables[0]
	if tc.TMin != 300 || tc.TMax != 900 || tc.PMin != 1 || math.Abs(tc.PMax-1e7) > 1e-3 || !tc.Lines {
		t.Errorf("table grid %+v", tc)
	}
	if len(tc.Zero) != 1 || !strings.Contains(tc.Zero[0], "1.45-1.55 um (obs.csv:3)") {
		t.Errorf("zero bins %v", tc.Zero)
	}
	if len(tc.Missing) != 1 || !strings.Contains(tc.Missing[0], "1.9-2.1 um (obs.csv:4)") {
		t.Errorf("missing bins %v", tc.Missing)
	}
	if len(cov.NoLines) != 2 {
		t.Errorf("bins without lines %v", cov.NoLines)
	}
}
