package lbl

import (
	"math"
	"sort"
	"testing"

	"chord/forward/opacity"
)

// oneIso is isotopologue data for synthetic lines: CO's main isotopologue
// with a constant partition function (so intensities do not change with T)
// and the given mass.
func oneIso(mass float64) IsoData {
	q, _ := NewQTable([]float64{1, 100, 1000, 10000}, []float64{1, 1, 1, 1})
	return IsoData{{Mol: 5, Iso: 1}: {Name: "CO_26", Q296: 1, Mass: mass, Q: q}}
}

// TestLineSetLevels: the multi-level evaluation (exact values near each
// line's centre on the fine grid, its wings on coarser levels, each
// interpolated to the next finer one) against the direct sum of every
// line's Voigt profile at every point, for a band of lines 0.7 cm^-1
// apart at pressures from 1e-6 to 10 atm: within 1e-4 of the local
// cross-section, the accuracy Humlicek (1982, JQSRT 27, 437) states for
// the Voigt function itself (measured: 8.3e-5 at the lowest pressure,
// where four levels each add their interpolation error).
// The direct sum is the definition; Voigt itself is checked against
// published values in voigt_test.go.
func TestLineSetLevels(t *testing.T) {
	var lines []Line
	for i := range 400 {
		nu := 2000 + 0.7*float64(i) + 0.13*math.Sin(float64(i))
		lines = append(lines, Line{Mol: 5, Iso: 1, Nu: nu, S: 1e-20 * (1 + math.Cos(float64(i)/7)), GammaAir: 0.06, GammaSelf: 0.07, NAir: 0.7, Elower: 100})
	}
	ls, err := NewLineSet("CO", lines, oneIso(28), LineSettings{})
	if err != nil {
		t.Fatal(err)
	}
	g := opacity.LnGrid{Nu0: 2050, R: 1e6}
	n := int(g.Index(2200))
	got := make([]float64, n)
	for _, pAtm := range []float64{1e-6, 1e-2, 1, 10} {
		p := pAtm * StandardAtmosphere
		ls.CrossSections(got, g, 0, p, 700)
		worst := 0.0
		for k := 0; k < n; k += 7 {
			nu := g.Nu(k)
			want := 0.0
			a := sort.Search(len(lines), func(i int) bool { return lines[i].Nu >= nu-DefaultWingCutoff })
			for i := a; i < len(lines) && lines[i].Nu <= nu+DefaultWingCutoff; i++ {
				l := &lines[i]
				gL := l.GammaAir * math.Pow(TRef/700, l.NAir) * pAtm
				want += LineIntensity(l, 700, 1, 1) * Voigt(nu-l.Nu-l.DeltaAir*pAtm, DopplerHWHM(l.Nu, 700, 28), gL)
			}
			want *= 1e-4
			worst = math.Max(worst, math.Abs(got[k]-want)/want)
		}
		t.Logf("%g atm: largest relative difference %.2e", pAtm, worst)
		if worst > humlicekTol {
			t.Errorf("%g atm: multi-level cross-sections differ from the direct sum by %.2e, want at most %g", pAtm, worst, humlicekTol)
		}
	}
}

// TestBuildKLorentzLine: the k-distribution of one Lorentz line centred in
// a bin of half-width D is known exactly (e.g. Goody & Yung 1989, the
// k-distribution of a Lorentz line, from memory; it follows from inverting
// k(nu) = S gamma / pi / (nu^2 + gamma^2)): the fraction of the bin below
// k is g(k) = 1 - sqrt(S gamma / (pi k) - gamma^2) / D, so
// k(g) = S gamma / pi / (((1 - g) D)^2 + gamma^2). A heavy molecule makes
// the Doppler width negligible (1e-5 of gamma) and the line Lorentzian to
// the Humlicek accuracy (1e-4). A narrow bin (relative width 5e-4) makes
// its weighting in wavelength uniform in wavenumber to 5e-4.
func TestBuildKLorentzLine(t *testing.T) {
	const nu0, S, half = 2000.0, 1e-19, 0.5 // cm^-1, cm^-1/(molecule cm^-2), cm^-1
	line := Line{Mol: 5, Iso: 1, Nu: nu0, S: S, GammaAir: 0.05, GammaSelf: 0.05}
	lo, hi := 1/(nu0+half)/100, 1/(nu0-half)/100 // m
	k, err := BuildK([]Line{line}, oneIso(1e7), &KSettings{
		Gas: "CO", Log10P: []float64{math.Log10(StandardAtmosphere)}, T: []float64{TRef},
		Lo: []float64{lo}, Hi: []float64{hi}, Resolution: 2e7, Lines: LineSettings{NoPressureShift: true},
	})
	if err != nil {
		t.Fatal(err)
	}
	gamma := 0.05
	for i, g := range k.G {
		want := S * gamma / math.Pi / (math.Pow((1-g)*half, 2) + gamma*gamma) * 1e-4
		got := float64(k.K[i])
		t.Logf("g = %.5f: k = %.6g, exact %.6g", g, got, want)
		if math.Abs(got/want-1) > 2e-3 {
			t.Errorf("node %d (g = %.5f): k = %.6g m^2, exact %.6g (relative %.2e), want within 2e-3", i, g, got, want, got/want-1)
		}
	}
}
