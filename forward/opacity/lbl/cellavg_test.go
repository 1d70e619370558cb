package lbl

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"

	"chord/forward/opacity"
)

// voigtIntegral is int_a^b Voigt(x; alphaD, gammaL) dx by composite
// Gauss-Legendre quadrature (gonum v0.17.0 integrate/quad.Fixed, 8 nodes)
// on pieces no wider than a quarter of the Voigt half-width within 50
// half-widths of the centre and growing geometrically beyond: the
// reference for cell integrals, as accurate as the Humlicek (1982) values
// it integrates (1e-4).
func voigtIntegral(a, b, alphaD, gammaL float64) float64 {
	hw := 0.5346*gammaL + math.Sqrt(0.2166*gammaL*gammaL+alphaD*alphaD)
	f := func(x float64) float64 { return Voigt(x, alphaD, gammaL) }
	var s float64
	for x := a; x < b; {
		h := max(hw/4, 0.05*math.Abs(x)) // pieces of about 5 % of the distance in the wings
		if math.Abs(x) < 50*hw {
			h = hw / 4
		}
		y := min(x+h, b)
		s += quad.Fixed(f, x, y, 8, quad.Legendre{}, 0)
		x = y
	}
	return s
}

// TestCellProfile checks the cell integrals of cellProfile against
// quadrature of the Voigt profile (voigtIntegral, gonum v0.17.0) over
// cells of several widths and positions, for Doppler-dominated, mixed and
// Lorentz-dominated lines. Tolerances: in the wings (both ends beyond the
// core, |x| >= X) the closed form is the Voigt to 1e-4 of the profile
// (the two-term expansion's error 3 sigma^4/(x^2+gamma^2)^2 <= 1.05e-4,
// plus Humlicek's 1e-4 in the reference): 3e-4 relative. In the core the
// pseudo-Voigt of Thompson, Cox & Hastings (1987) is good to about 1 % of
// the peak (their stated accuracy, from memory), so a cell integral errs
// by up to 1 % of peak x cell width, and never by more than 1 % of the
// line's whole intensity: tolerance 1.5 % of min(peak x width, 1).
// And the total over the whole line is 1 (normalisation; fact).
func TestCellProfile(t *testing.T) {
	for _, c := range []struct{ alphaD, gammaL float64 }{
		{0.005, 0}, {0.005, 5e-5}, {0.005, 0.002}, {0.005, 0.005}, {0.005, 0.02}, {0.005, 0.07}, {0.001, 0.5},
	} {
		var p cellProfile
		p.set(c.alphaD, c.gammaL)
		peak := Voigt(0, c.alphaD, c.gammaL)
		hw := 0.5346*c.gammaL + math.Sqrt(0.2166*c.gammaL*c.gammaL+c.alphaD*c.alphaD)
		// Normalisation: the tails vanish as atan(gamma/x)/pi.
		if tot := p.integral(-1e12, 1e12); math.Abs(tot-1) > 1e-9 {
			t.Errorf("%+v: total %.12g, want 1", c, tot)
		}
		// Continuity of G at the core edge.
		if p.x > 0 {
			in, out := p.scale*p.pv(p.x), 0.5-p.tail(p.x)
			if math.Abs(in-out) > 1e-15 {
				t.Errorf("%+v: G jumps at the core edge: %g vs %g", c, in, out)
			}
		}
		var worstCore, worstWing float64
		for _, wf := range []float64{0.3, 1, 3, 10, 100} { // cell width in half-widths
			w := wf * hw
			for _, off := range []float64{-0.5, -0.2, 0, 0.37, 1, 2.5, 7, 30, 200} { // cell centre, in cell widths
				a := (off - 0.5) * w
				b := a + w
				got := p.integral(a, b)
				want := voigtIntegral(a, b, c.alphaD, c.gammaL)
				if a >= p.x || b <= -p.x {
					if want == 0 && got == 0 {
						continue // a Gaussian's far wing: both underflow
					}
					rel := math.Abs(got/want - 1)
					worstWing = max(worstWing, rel)
					if rel > 3e-4 {
						t.Errorf("%+v: wing cell [%g, %g]: %.8g, quadrature %.8g (rel %.2g)", c, a, b, got, want, rel)
					}
					continue
				}
				scale := min(peak*w, 1)
				err := math.Abs(got-want) / scale
				worstCore = max(worstCore, err)
				if err > 0.015 {
					t.Errorf("%+v: core cell [%g, %g]: %.6g, quadrature %.6g (%.2g of min(peak x width, 1))", c, a, b, got, want, err)
				}
			}
		}
		t.Logf("alphaD %g, gammaL %g: core X = %.3g, worst core error %.2g of peak x width, worst wing error %.2g", c.alphaD, c.gammaL, p.x, worstCore, worstWing)
	}
}

// cellSum is sum_k sigma_k w_k in cm^2 cm^-1 over the cells of a table
// row built with CellAverage (edges at the midpoints, symmetric ends).
func cellSum(tab *opacity.XSecTable, row []float32) float64 {
	nu := tab.Wavenumber
	n := len(nu)
	var s float64
	for k := range n {
		lo, hi := 0.0, 0.0
		switch {
		case k == 0:
			lo, hi = nu[0]-(nu[1]-nu[0])/2, (nu[0]+nu[1])/2
		case k == n-1:
			lo, hi = (nu[n-2]+nu[n-1])/2, nu[n-1]+(nu[n-1]-nu[n-2])/2
		default:
			lo, hi = (nu[k-1]+nu[k])/2, (nu[k]+nu[k+1])/2
		}
		s += float64(row[k]) * 1e4 * (hi - lo) / 100
	}
	return s
}

// lorentzWindow is the part of a normalised profile centred at delta
// (cm^-1 from the catalogue position) inside the cut-off window +-c: one
// minus the two Lorentz tails atan(gamma/x)/pi beyond c - delta and c +
// delta. The Voigt's far wing is the Lorentzian's to a relative
// (alphaD/x)^2 (Abramowitz & Stegun 1964, 7.1.23; fact of the trade),
// 1e-7 at 25 cm^-1.
func lorentzWindow(gamma, c, delta float64) float64 {
	if gamma == 0 {
		return 1
	}
	return 1 - (math.Atan(gamma/(c-delta))+math.Atan(gamma/(c+delta)))/math.Pi
}

// TestCellAverageConservationLine: one line on a grid of 2 cm^-1 cells,
// far coarser than its width at 1e-3 atm (Doppler HWHM 0.0025 cm^-1) and
// comparable to it at 30 atm: whatever the line's place within its cell,
// sum sigma w equals S times the part of the profile inside the cut-off
// (lorentzWindow), to 1e-6 (float32 storage, 6e-8 per value; the cell
// integrals telescope exactly). Point sampling on the same grid misses
// the narrow line by orders of magnitude, which shows why this matters.
func TestCellAverageConservationLine(t *testing.T) {
	for _, pAtm := range []float64{1e-3, 1, 30} {
		for _, off := range []float64{0, 0.31, 1, 1.77} { // line position within the 2 cm^-1 cells
			l := Line{Mol: 5, Iso: 1, Nu: 2000 + off, S: 1e-20, GammaAir: 0.06, GammaSelf: 0.07, NAir: 0.7, DeltaAir: -0.004}
			s := &XSecSettings{Gas: "CO", Log10P: []float64{math.Log10(pAtm * StandardAtmosphere)}, T: []float64{TRef},
				Wavenumber: uniformGrid(1950, 2050, 2), CellAverage: true}
			tab, err := BuildXSec([]Line{l}, syntheticIso(), s)
			if err != nil {
				t.Fatal(err)
			}
			got := cellSum(tab, tab.Sigma)
			want := l.S * lorentzWindow(l.GammaAir*pAtm, DefaultWingCutoff, l.DeltaAir*pAtm)
			if rel := math.Abs(got/want - 1); rel > 1e-6 {
				t.Errorf("%g atm, line at %g: sum sigma w = %.9g, S within the cut-off %.9g (rel %.2g)", pAtm, l.Nu, got, want, rel)
			}
			s.CellAverage = false
			pt, err := BuildXSec([]Line{l}, syntheticIso(), s)
			if err != nil {
				t.Fatal(err)
			}
			if pAtm == 1e-3 {
				t.Logf("1e-3 atm, line at %g cm^-1: point-sampled sum / intensity = %.3g", l.Nu, cellSum(pt, pt.Sigma)/want)
			}
		}
	}
}

// TestCellAverageConvergence: as the grid is refined, the cell-averaged
// values approach the point values, and below the switch (cells under a
// quarter of the Voigt half-width) they are the point values. At every
// step they match the cell means of the Voigt profile by quadrature
// (voigtIntegral, gonum v0.17.0) to 1.5 % of the peak (pseudo-Voigt core,
// Thompson et al. 1987: about 1 % of the peak, from memory; 0.5 % midpoint
// error below the switch, cellPointFraction).
func TestCellAverageConvergence(t *testing.T) {
	for _, pAtm := range []float64{1e-2, 1} {
		l := Line{Mol: 5, Iso: 1, Nu: 2000.0123, S: 1e-20, GammaAir: 0.06}
		gL := l.GammaAir * pAtm
		aD := DopplerHWHM(l.Nu, TRef, 27.994915)
		hw := 0.5346*gL + math.Sqrt(0.2166*gL*gL+aD*aD)
		peak := l.S * Voigt(0, aD, gL) * 1e-4 // m^2
		prev := math.Inf(1)
		for _, hf := range []float64{8, 4, 2, 1, 0.5, 0.26, 0.24, 0.1} {
			h := hf * hw
			grid := uniformGrid(1999.5, 2000.5, h)
			s := &XSecSettings{Gas: "CO", Log10P: []float64{math.Log10(pAtm * StandardAtmosphere)}, T: []float64{TRef}, Wavenumber: grid}
			pt, err := BuildXSec([]Line{l}, syntheticIso(), s)
			if err != nil {
				t.Fatal(err)
			}
			s.CellAverage = true
			ca, err := BuildXSec([]Line{l}, syntheticIso(), s)
			if err != nil {
				t.Fatal(err)
			}
			var diff, worst float64
			for k := range grid {
				nu := grid[k] / 100
				diff = max(diff, math.Abs(float64(ca.Sigma[k]-pt.Sigma[k]))/peak)
				// Cell [nu - h/2, nu + h/2] (uniform grid; the end cells too).
				ref := l.S * voigtIntegral(nu-h/2-l.Nu, nu+h/2-l.Nu, aD, gL) / h * 1e-4
				worst = max(worst, math.Abs(float64(ca.Sigma[k])-ref)/peak)
			}
			t.Logf("%g atm, cells of %g half-widths: max |cell - point| = %.3g of peak, max |cell - quadrature| = %.3g", pAtm, hf, diff, worst)
			if worst > 0.015 {
				t.Errorf("%g atm, cells of %g half-widths: cell means differ from quadrature by %.3g of the peak", pAtm, hf, worst)
			}
			if hf < cellPointFraction && diff > 1e-6 {
				t.Errorf("%g atm, cells of %g half-widths: below the switch the values differ from the point values by %.3g of the peak", pAtm, hf, diff)
			}
			if hf >= 1 && diff > prev {
				t.Errorf("%g atm: refining to %g half-widths moved the cell means away from the point values (%.3g after %.3g)", pAtm, hf, diff, prev)
			}
			prev = diff
		}
	}
}

// TestCellAverageWorkers: cell-averaged tables are bit for bit the same
// whatever the number of workers and chunks (each cell sums the same
// lines in the same order), on a log-spaced grid whose cells vary in
// width, with lines either side of the switch to point values.
func TestCellAverageWorkers(t *testing.T) {
	var lines []Line
	for i := range 300 {
		lines = append(lines, Line{Mol: 5, Iso: 1, Nu: 2000 + 0.37*float64(i), S: 1e-20 * (1 + math.Sin(float64(i))), GammaAir: 0.05, GammaSelf: 0.06,
			NAir: 0.7, DeltaAir: -0.003, Elower: 10 * float64(i%40)})
	}
	grid := make([]float64, 3000)
	for k := range grid {
		grid[k] = 100 * 1990 * math.Exp(float64(k)*math.Log(2120.0/1990)/float64(len(grid)-1))
	}
	set := func(w int) *XSecSettings {
		return &XSecSettings{Gas: "CO", Log10P: []float64{0, 2, 4, 5, 6.5}, T: []float64{200, 700}, Wavenumber: grid, Workers: w, CellAverage: true}
	}
	ref, err := BuildXSec(lines, syntheticIso(), set(1))
	if err != nil {
		t.Fatal(err)
	}
	for _, w := range []int{2, 3, 7} {
		got, err := BuildXSec(lines, syntheticIso(), set(w))
		if err != nil {
			t.Fatal(err)
		}
		for i := range ref.Sigma {
			if math.Float32bits(got.Sigma[i]) != math.Float32bits(ref.Sigma[i]) {
				t.Fatalf("workers %d: value %d differs: %g vs %g", w, i, got.Sigma[i], ref.Sigma[i])
			}
		}
	}
	if !strings.Contains(ref.Meta[opacity.MetaBuildSettings], `"sampling":"cell means`) {
		t.Errorf("build settings do not state cell means: %s", ref.Meta[opacity.MetaBuildSettings])
	}
	// Cells need two grid points.
	s := set(1)
	s.Wavenumber = grid[:1]
	if _, err := BuildXSec(lines, syntheticIso(), s); err == nil || !strings.Contains(err.Error(), "cell averaging needs at least 2 wavenumbers") {
		t.Errorf("one-point grid: error %v", err)
	}
}

// TestGridCoarseness: a CO line at 2000 cm^-1, 296 K, 1e-3 atm has the
// Doppler HWHM 0.0023290 cm^-1 (TestDopplerHWHM's hand-worked 0.002495471
// at 2143 cm^-1, scaled by 2000/2143) and a Lorentz HWHM of 6e-5 cm^-1,
// so its Voigt HWHM is 0.0023612 (Olivero & Longbothum 1977, worked by
// hand: 0.5346 x 6e-5 + sqrt(0.2166 x 3.6e-9 + 0.0023290^2)); on a 2 cm^-1
// grid the ratio is 847.0. A missing isotopologue is an error.
func TestGridCoarseness(t *testing.T) {
	l := []Line{{Mol: 5, Iso: 1, Nu: 2000, S: 1e-20, GammaAir: 0.06}}
	s := &XSecSettings{Gas: "CO", Log10P: []float64{math.Log10(1e-3 * StandardAtmosphere)}, T: []float64{TRef, 500}, Wavenumber: uniformGrid(1990, 2010, 2)}
	r, err := GridCoarseness(l, syntheticIso(), s)
	if err != nil || math.Abs(r/847.0-1) > 2e-4 { // hand-worked to 4-5 digits
		t.Errorf("ratio %g (%v), hand-worked 847.0", r, err)
	}
	if _, err := GridCoarseness([]Line{{Mol: 6, Iso: 1, Nu: 2000}}, syntheticIso(), s); err == nil || !strings.Contains(err.Error(), "no isotopologue mass for CH4") {
		t.Errorf("missing isotopologue: %v", err)
	}
	if _, err := GridCoarseness(l, syntheticIso(), nil); err == nil {
		t.Error("nil settings accepted")
	}
}
