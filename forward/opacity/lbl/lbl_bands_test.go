package lbl_test

import (
	"math"
	"path/filepath"
	"testing"

	"chord/forward/opacity/hitran"
	"chord/forward/opacity/internal/opacitytest"
	"chord/forward/opacity/lbl"
	"chord/internal/testenv"
)

// bandBuild builds the 296 K, 1 atm cross-section of the lines in
// [lo, hi] cm^-1 on a 0.01 cm^-1 grid reaching one wing cut-off (25
// cm^-1) beyond them, so every line's window lies inside the grid.
// It returns the grid (cm^-1), sigma (cm^2) and the lines used.
func bandBuild(t *testing.T, lines []lbl.Line, lo, hi float64) (nu, sigma []float64, used []lbl.Line) {
	t.Helper()
	for _, l := range lines {
		if l.Nu >= lo && l.Nu <= hi {
			used = append(used, l)
		}
	}
	if len(used) == 0 {
		t.Fatalf("no lines in %g-%g cm^-1", lo, hi)
	}
	const step = 0.01
	a, b := lo-lbl.DefaultWingCutoff-1, hi+lbl.DefaultWingCutoff+1
	n := int((b-a)/step) + 1
	nu = make([]float64, n)
	grid := make([]float64, n)
	for i := range nu {
		nu[i] = a + float64(i)*step
		grid[i] = nu[i] * 100
	}
	tab, err := lbl.BuildXSec(used, opacitytest.IsoData(t), &lbl.XSecSettings{Gas: "band", Log10P: []float64{math.Log10(lbl.StandardAtmosphere)}, T: []float64{lbl.TRef}, Wavenumber: grid})
	if err != nil {
		t.Fatal(err)
	}
	sigma = make([]float64, n)
	for i, v := range tab.Sigma {
		sigma[i] = float64(v) * 1e4
	}
	return nu, sigma, used
}

// checkBandIntegral: at 296 K the integral of sigma over the band equals
// the sum of the line intensities (definition of the HITRAN intensity,
// Rothman et al. 1998) less what the cut-off removes from each profile.
// At 1 atm every line is Lorentz-dominated far out, so a line keeps the
// fraction (2/pi) atan(c/gamma) of its area within +-c (Lorentz
// integral; the Doppler part changes this by O((alphaD/c)^2) ~ 1e-8).
// The trapezoid rule on a 0.01 cm^-1 grid with widths >= 0.01 cm^-1 is
// exact to far better than 1e-6 for these analytic profiles; the Faddeeva
// algorithm is good to 1e-4 (Humlicek 1982), and float32 storage adds
// 6e-8: tolerance 2e-4.
func checkBandIntegral(t *testing.T, name string, nu, sigma []float64, used []lbl.Line) {
	t.Helper()
	var integral, want, plain float64
	for i := 1; i < len(nu); i++ {
		integral += 0.5 * (sigma[i] + sigma[i-1]) * (nu[i] - nu[i-1])
	}
	for _, l := range used {
		want += l.S * 2 / math.Pi * math.Atan(lbl.DefaultWingCutoff/l.GammaAir)
		plain += l.S
	}
	if rel := math.Abs(integral/want - 1); rel > 2e-4 {
		t.Errorf("%s: integrated sigma %.6g cm/molecule, sum of intensities less cut-off loss %.6g (rel %.2g)", name, integral, want, rel)
	}
	t.Logf("%s: %d lines, integral %.5g, sum S %.5g, cut-off loss %.2g %%", name, len(used), integral, plain, 100*(1-want/plain))
}

// peakIn returns the wavenumber of the largest sigma in [lo, hi].
func peakIn(nu, sigma []float64, lo, hi float64) (at, val float64) {
	for i, v := range nu {
		if v >= lo && v <= hi && sigma[i] > val {
			at, val = v, sigma[i]
		}
	}
	return at, val
}

func readShared(t *testing.T, file string, f hitran.LineFilter) []lbl.Line {
	t.Helper()
	ls, err := hitran.ReadLineFile(filepath.Join(testenv.SharedData(t, "hitran-lines"), file), f)
	if err != nil {
		t.Fatal(err)
	}
	return ls
}

// TestBandCOFundamental: the complete HITRAN2012 CO list shows the
// fundamental near 4.7 um: band origin 2143 cm^-1 with no Q branch, P and
// R branches peaking near J ~ 7, i.e. about 2B J ~ 27 cm^-1 from the
// origin with B = 1.92 cm^-1 (handbook values, from memory).
func TestBandCOFundamental(t *testing.T) {
	lines := readShared(t, "05_hit12_CO_full.par", hitran.LineFilter{NuMin: 1900, NuMax: 2400})
	nu, sigma, used := bandBuild(t, lines, 1950, 2350)
	checkBandIntegral(t, "CO 1-0", nu, sigma, used)
	pAt, pVal := peakIn(nu, sigma, 2000, 2142)
	rAt, rVal := peakIn(nu, sigma, 2144, 2300)
	_, gap := peakIn(nu, sigma, 2141.5, 2145.5) // between P(1) 2139.4 and R(0) 2147.1
	if pAt < 2100 || pAt > 2130 || rAt < 2155 || rAt > 2185 {
		t.Errorf("branch maxima at %.2f (P) and %.2f (R) cm^-1, want about 2116 and 2169", pAt, rAt)
	}
	if gap > 0.01*min(pVal, rVal) {
		t.Errorf("no gap at the band origin: %.3g vs branch maxima %.3g, %.3g", gap, pVal, rVal)
	}
}

// TestBandO2: the complete HITRAN2012 O2 list holds the A band (b-X 0-0)
// near 0.76 um (origin 13122 cm^-1) and the a-X 0-0 band near 1.27 um
// (origin 7883 cm^-1) (band centres: handbook, from memory): the largest
// cross-section of the 12000-14500 and 7000-9000 cm^-1 regions lies in
// them, and their integrals match their line sums.
func TestBandO2(t *testing.T) {
	lines := readShared(t, "07_hit12_O2_full.par", hitran.LineFilter{NuMin: 6900, NuMax: 14600})
	for _, c := range []struct {
		name           string
		lo, hi         float64
		bandLo, bandHi float64
	}{
		{"O2 A band", 12000, 14500, 12950, 13200},
		{"O2 1.27 um", 7000, 9000, 7750, 8050},
	} {
		nu, sigma, used := bandBuild(t, lines, c.lo, c.hi)
		checkBandIntegral(t, c.name, nu, sigma, used)
		if at, _ := peakIn(nu, sigma, c.lo, c.hi); at < c.bandLo || at > c.bandHi {
			t.Errorf("%s: strongest absorption at %.2f cm^-1, want %g-%g", c.name, at, c.bandLo, c.bandHi)
		}
	}
}

// TestBandCH4: the nu3 fundamental of CH4 at 3.3 um, origin 3019 cm^-1
// (handbook, from memory), with P and R branches either side of it: the
// intensity-weighted mean wavenumber lies near the origin, and each
// branch holds a substantial share of the band.
func TestBandCH4(t *testing.T) {
	lines := readShared(t, "CH4_nu3_band_0000A1-0010F2_hapi.par", hitran.LineFilter{})
	nu, sigma, used := bandBuild(t, lines, 2700, 3300)
	checkBandIntegral(t, "CH4 nu3", nu, sigma, used)
	var s, sn, p, r float64
	for i, v := range nu {
		s += sigma[i]
		sn += sigma[i] * v
		switch {
		case v < 3010:
			p += sigma[i]
		case v > 3030:
			r += sigma[i]
		}
	}
	if m := sn / s; math.Abs(m-3019) > 20 {
		t.Errorf("CH4: mean wavenumber %.1f cm^-1, want near 3019", m)
	}
	if p < 0.25*s || r < 0.25*s {
		t.Errorf("CH4: P branch %.2g, R branch %.2g of the band's absorption, want both > 25 %%", p/s, r/s)
	}
}

// TestBandCO2: the 15 um band (nu2, Q branch at 667.4 cm^-1) from the
// tab-separated download layout, duplicates of the overlapping windows
// removed, and the 4.3 um nu3 R-branch head near 2397 cm^-1 (handbook
// values, from memory): above the head the main band has no lines, so
// sigma falls steeply.
func TestBandCO2(t *testing.T) {
	var lists [][]lbl.Line
	for ch := '1'; ch <= '7'; ch++ {
		lists = append(lists, readShared(t, "CO2_626_HIRS-ch"+string(ch)+"_lblgasabs.tsv", hitran.LineFilter{}))
	}
	lines := lbl.MergeLines(lists...)
	nu, sigma, used := bandBuild(t, lines, 666, 765)
	checkBandIntegral(t, "CO2 15 um", nu, sigma, used)
	if at, _ := peakIn(nu, sigma, 666, 765); at < 667 || at > 668 {
		t.Errorf("CO2 15 um: strongest absorption at %.2f cm^-1, want the Q branch at 667.4", at)
	}
	head := readShared(t, "CO2_626_2380-2401_bandhead_radis.par", hitran.LineFilter{})
	nu, sigma, used = bandBuild(t, head, 2380, 2400)
	checkBandIntegral(t, "CO2 4.3 um head", nu, sigma, used)
	_, below := peakIn(nu, sigma, 2390, 2396)
	_, above := peakIn(nu, sigma, 2399, 2400)
	if !(above < 0.1*below) {
		t.Errorf("CO2 band head: peak sigma %.3g below 2396 cm^-1, %.3g above 2399", below, above)
	}
}

// TestBandH2O: the whole nu2 band at 6.3 um (origin 1594.7 cm^-1) and the
// 2.7 um region (nu1 3657, nu3 3756 cm^-1) (handbook band origins, from
// memory), the latter from the file with CRLF line endings read as it
// is. The intensity-weighted mean wavenumber of each band lies near its
// origin(s); the integrals match the line sums.
func TestBandH2O(t *testing.T) {
	for _, c := range []struct {
		name, file     string
		lo, hi         float64
		meanLo, meanHi float64
	}{
		{"H2O 6.3 um", "H2O_1000-2000_hapigui.par", 1000, 2000, 1550, 1640},
		{"H2O 2.7 um", "H2O_3400-4100_crosssection_CRLF.par", 3400, 4100, 3650, 3800},
	} {
		nu, sigma, used := bandBuild(t, readShared(t, c.file, hitran.LineFilter{}), c.lo, c.hi)
		checkBandIntegral(t, c.name, nu, sigma, used)
		var s, sn float64
		for i, v := range nu {
			s += sigma[i]
			sn += sigma[i] * v
		}
		if m := sn / s; m < c.meanLo || m > c.meanHi {
			t.Errorf("%s: mean wavenumber %.1f cm^-1, want %g-%g", c.name, m, c.meanLo, c.meanHi)
		}
	}
}
