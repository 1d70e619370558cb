package lbl_test

import (
	"bufio"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"chord/forward/opacity/hitran"
	"chord/forward/opacity/internal/opacitytest"
	"chord/forward/opacity/lbl"
	"chord/internal/testenv"
)

// readHAPIXSec reads a two-column (nu cm^-1, sigma cm^2) reference file.
func readHAPIXSec(t *testing.T, path string) (nu, sigma []float64) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		s := sc.Text()
		if strings.HasPrefix(s, "#") || strings.TrimSpace(s) == "" {
			continue
		}
		fl := strings.Fields(s)
		a, err1 := strconv.ParseFloat(fl[0], 64)
		b, err2 := strconv.ParseFloat(fl[1], 64)
		if err1 != nil || err2 != nil {
			t.Fatalf("%s: bad row %q", path, s)
		}
		nu, sigma = append(nu, a), append(sigma, b)
	}
	return nu, sigma
}

// TestGoldenHAPI compares lbl.BuildXSec with cross-sections computed by HAPI
// (Kochanov et al. 2016, JQSRT 177, 15; absorptionCoefficient_Voigt with
// a 40 cm^-1 wing, air broadening, line shift on, isotopologue 1, 0.01
// cm^-1 grid; settings in ../shared/data/SOURCES.md) from the same lines,
// point by point over the whole 100 cm^-1 window (cores and wings).
//
// Tolerances: HAPI's Voigt profile uses the same Humlicek (1982) regions,
// so at 296 K, where partition functions cancel, only float32 rounding
// (6e-8) and constants remain: 1e-6. Away from 296 K the partition sums
// differ: chord uses TIPS-2011 (Laraia et al. 2011), HAPI its built-in
// TIPS-2017; these editions differ by a few 1e-4 for CO2 at 250 K, and
// HAPI's c2 (1.4388028 cm K) differs from CODATA 2018 by 2e-5 relative,
// which moves the Boltzmann factor by up to ~5e-5 for E” ~ 3000 cm^-1.
func TestGoldenHAPI(t *testing.T) {
	dir := testenv.SharedData(t, "reference-xsec")
	iso := opacitytest.IsoData(t)
	for _, c := range []struct {
		lines, ref string
		pHPa, T    float64
		tol        float64
	}{
		{"co2_6300_6400_lines.par", "co2_6300_6400_p1013_T296_hapi.txt", 1013.25, 296, 1e-6},
		{"co2_6300_6400_lines.par", "co2_6300_6400_p500_T250_hapi.txt", 500, 250, 1e-3},
		{"h2o_7000_7100_lines.par", "h2o_7000_7100_p800_T280_hapi.txt", 800, 280, 2e-4},
	} {
		lines, err := hitran.ReadLineFile(filepath.Join(dir, c.lines), hitran.LineFilter{})
		if err != nil {
			t.Fatal(err)
		}
		nu, want := readHAPIXSec(t, filepath.Join(dir, c.ref))
		if len(nu) != 10001 {
			t.Fatalf("%s: %d points, SOURCES.md says 10001", c.ref, len(nu))
		}
		grid := make([]float64, len(nu))
		for i, v := range nu {
			grid[i] = v * 100
		}
		tab, err := lbl.BuildXSec(lines, iso, &lbl.XSecSettings{Gas: "test", Log10P: []float64{math.Log10(c.pHPa * 100)},
			T: []float64{c.T}, Wavenumber: grid, WingCutoff: 40})
		if err != nil {
			t.Fatal(err)
		}
		var worst float64
		for i, w := range want {
			g := float64(tab.Sigma[i]) * 1e4 // m^2 -> cm^2
			rel := math.Abs(g-w) / w
			worst = max(worst, rel)
			if rel > c.tol {
				t.Errorf("%s: nu %.2f cm^-1: sigma %.6g cm^2, HAPI %.6g (rel %.2g > %g)", c.ref, nu[i], g, w, rel, c.tol)
				break
			}
		}
		t.Logf("%s: %d lines, worst relative difference %.2g", c.ref, len(lines), worst)
	}
}

// TestRigidRotor compares the stated approximation with TIPS-2011 for CO,
// a near-rigid diatomic: the rotational sum of a linear rotor is
// kT/(hcB) + 1/3 (Herzberg 1950, "Spectra of Diatomic Molecules", eq. V,
// 19, from memory), proportional to T within 0.5 % above 100 K for
// B = 1.92 cm^-1; the vibrational factor with omega = 2143 cm^-1 (CO
// fundamental, handbook value from memory) is 1.002 at 500 K.
// Anharmonicity and centrifugal distortion, which the approximation
// ignores, add about 1 % at 1000 K: tolerance 1.5 %.
func TestRigidRotor(t *testing.T) {
	d := opacitytest.IsoData(t)
	co := d[lbl.IsoKey{5, 1}]
	rr := &lbl.RigidRotor{Q296: co.Q.Q(lbl.TRef), Exponent: lbl.RotorExponent(5), Vib: []float64{2143}}
	for _, T := range []float64{110, 200, 500, 1000} {
		if a, b := rr.Q(T), co.Q.Q(T); math.Abs(a/b-1) > 0.015 {
			t.Errorf("CO at %g K: rigid rotor %g, TIPS %g", T, a, b)
		}
	}
	if lbl.RotorExponent(1) != 1.5 || lbl.RotorExponent(2) != 1 || lbl.RotorExponent(34) != 0 {
		t.Error("rotor exponents: H2O non-linear 1.5, CO2 linear 1, O atom 0")
	}
	// Degenerate modes: CO2's bend (667 cm^-1, doubly degenerate, from
	// memory) raises Q(T)/Q(296) at 1000 K by
	// (1-exp(-c2 667/296))^2/(1-exp(-c2 667/1000))^2.
	a := &lbl.RigidRotor{Q296: 1, Exponent: 1, Vib: []float64{667}, Degen: []int{2}}
	want := 1000 / lbl.TRef * math.Pow(-math.Expm1(-lbl.C2*667/lbl.TRef), 2) / math.Pow(-math.Expm1(-lbl.C2*667/1000), 2)
	if got := a.Q(1000); math.Abs(got/want-1) > 1e-12 {
		t.Errorf("CO2 bend: %g, want %g", got, want)
	}
}
