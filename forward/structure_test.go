package forward

import (
	"errors"
	"math"
	"strings"
	"testing"

	"chord/forward/opacity"
)

// TestEarthScaleHeight: U.S. Standard Atmosphere 1976 (NOAA/NASA/USAF),
// sea-level pressure scale height about 8.4 km at 288.15 K, mu = 28.96,
// g0 = 9.80665 m s^-2 (the standard's table gives 8434.5 m; from memory).
// The inputs are the standard's, so agreement should be to its printed
// precision; 0.1% allows for the standard's slightly different constants.
func TestEarthScaleHeight(t *testing.T) {
	h := ScaleHeight(288.15, 28.9644, 9.80665)
	if math.Abs(h-8434.5)/8434.5 > 1e-3 {
		t.Errorf("Earth scale height %g m, want 8434.5 m within 0.1%%", h)
	}
	if h := ScaleHeight(288, 28.96, 9.80665); math.Abs(h-8400) > 50 {
		t.Errorf("Earth scale height at 288 K, mu 28.96: %g m, want about 8.4 km", h)
	}
}

// TestMolecularMass checks masses against IUPAC standard atomic weights
// summed by hand (H 1.008, C 12.011, N 14.007, O 15.999; CIAAW).
func TestMolecularMass(t *testing.T) {
	for g, want := range map[string]float64{"H2O": 18.015, "CO2": 44.009, "CH4": 16.043, "N2": 28.014, "H2": 2.016, "He": 4.002602} {
		got, err := MolecularMass(g)
		if err != nil || math.Abs(got-want) > 1e-9 {
			t.Errorf("%s: %g %v, want %g", g, got, err, want)
		}
	}
	if _, err := MolecularMass("Xx"); err == nil || !strings.Contains(err.Error(), `"Xx"`) {
		t.Errorf("unknown gas error %v, want one naming it", err)
	}
}

// TestHydrostaticExact integrates dr/dlnP = -k_B T r^2/(mu m_u G M) (ideal
// gas plus Newtonian 1/r^2 gravity, fact of the trade) by fourth-order
// Runge-Kutta, layer by layer at each layer's temperature, and compares it
// with the exact isothermal-layer relation the model uses
// (1/r_upper = 1/r_lower - k_B T ln(P_lower/P_upper)/(mu m_u G M),
// DESIGN.md section 2). RK4 with 400 steps per layer is accurate to far
// below 1e-10 here, so the tolerance is 1e-10 relative.
func TestHydrostaticExact(t *testing.T) {
	wl := []float64{1e-6, 2e-6}
	m, err := NewModel(Config{Wavelength: wl, TopPressure: 1e-3, BottomPressure: 1e7, Layers: 40, RefPressure: 1e5, Gases: []string{"H2O"}})
	if err != nil {
		t.Fatal(err)
	}
	s := m.DefaultState()
	s.VMR[0] = 0.01
	s.Profile = &Guillot{TInt: 300, TIrr: 2000, KappaIR: 0.01, Gamma: 0.3, F: 0.25}
	s.RefRadius, s.Mass, s.StarRadius = 0.9*JupiterRadius, 0.3*JupiterMass, SolarRadius
	w := m.NewWorkspace()
	d := make([]float64, m.OutputLen())
	if err := m.Transit(d, &s, w); err != nil {
		t.Fatal(err)
	}
	mu := w.MeanMolecularWeight
	GM := Gravitation * s.Mass
	lv := m.LevelPressures()
	// Start at the reference level inside its layer and integrate both ways.
	integrate := func(r, lnP0, lnP1, T float64) float64 {
		const steps = 400
		h := (lnP1 - lnP0) / steps
		f := func(r float64) float64 { return -Boltzmann * T * r * r / (mu * AtomicMass * GM) }
		for range steps {
			k1 := f(r)
			k2 := f(r + h/2*k1)
			k3 := f(r + h/2*k2)
			k4 := f(r + h*k3)
			r += h / 6 * (k1 + 2*k2 + 2*k3 + k4)
		}
		return r
	}
	jr := m.refLay
	want := make([]float64, len(lv))
	want[jr+1] = integrate(s.RefRadius, math.Log(m.refP), math.Log(lv[jr+1]), w.temp[jr])
	want[jr] = integrate(s.RefRadius, math.Log(m.refP), math.Log(lv[jr]), w.temp[jr])
	for j := jr + 1; j < m.Layers(); j++ {
		want[j+1] = integrate(want[j], math.Log(lv[j]), math.Log(lv[j+1]), w.temp[j])
	}
	for j := jr - 1; j >= 0; j-- {
		want[j] = integrate(want[j+1], math.Log(lv[j+1]), math.Log(lv[j]), w.temp[j])
	}
	for i, r := range w.r {
		if math.Abs(r-want[i])/want[i] > 1e-10 {
			t.Errorf("level %d: r = %.12g m, RK4 gives %.12g m", i, r, want[i])
		}
	}
	// The atmosphere must be noticeably extended for the check to matter.
	if ext := (w.r[len(w.r)-1] - w.r[0]) / w.r[0]; ext < 0.05 {
		t.Errorf("test atmosphere spans only %g of the radius", ext)
	}
}

// TestRayleighSlope: an atmosphere whose only opacity goes as lambda^-4
// has dR/dln(lambda) = -4 H (Lecavelier des Etangs et al. 2008, A&A 481,
// L83). The haze power law with gamma = -4 is exactly lambda^-4. H is
// taken at the transit radius (gravity falls as 1/r^2); the relation holds
// to O(H/R) ~ 0.3% here, so 1%.
func TestRayleighSlope(t *testing.T) {
	wl, _ := WavelengthGridN(0.8e-6, 1.6e-6, 200)
	m, err := NewModel(Config{Wavelength: wl, TopPressure: 1e-3, BottomPressure: 1e7, Layers: 300, RefPressure: 1e4, Fill: "H2"})
	if err != nil {
		t.Fatal(err)
	}
	s := m.DefaultState()
	s.Profile = &Isothermal{T: 800}
	s.RefRadius, s.Mass, s.StarRadius = JupiterRadius, JupiterMass, SolarRadius
	s.HazeFactor, s.HazeSlope = 100, -4
	w := m.NewWorkspace()
	d := make([]float64, m.OutputLen())
	if err := m.Transit(d, &s, w); err != nil {
		t.Fatal(err)
	}
	n := len(wl)
	r1, r2 := s.StarRadius*math.Sqrt(d[0]), s.StarRadius*math.Sqrt(d[n-1])
	slope := (r2 - r1) / math.Log(wl[n-1]/wl[0])
	mu, _ := MolecularMass("H2")
	rm := 0.5 * (r1 + r2)
	H := ScaleHeight(800, mu, Gravitation*s.Mass/(rm*rm))
	t.Logf("lambda^-4 opacity: dR/dln(lambda) = %.4f H", slope/H)
	if math.Abs(slope/H+4) > 0.04 {
		t.Errorf("dR/dln(lambda) = %.4f H, want -4 H within 1%%", slope/H)
	}

	// With the H2 Rayleigh formula itself the slope is H dln(sigma)/dln(lambda)
	// (same paper), -4.13 at 0.5 um for Dalgarno & Williams (1962).
	wl2, _ := WavelengthGridN(0.45e-6, 0.55e-6, 50)
	m2, err := NewModel(Config{Wavelength: wl2, TopPressure: 1e-3, BottomPressure: 1e7, Layers: 300, RefPressure: 1e4, Fill: "H2", Rayleigh: []string{"H2"}})
	if err != nil {
		t.Fatal(err)
	}
	s.HazeFactor = 0
	w2 := m2.NewWorkspace()
	d2 := make([]float64, m2.OutputLen())
	if err := m2.Transit(d2, &s, w2); err != nil {
		t.Fatal(err)
	}
	r1, r2 = s.StarRadius*math.Sqrt(d2[0]), s.StarRadius*math.Sqrt(d2[len(d2)-1])
	ray, _ := opacity.NewRayleigh("H2")
	local := math.Log(ray.Sigma(1/wl2[len(wl2)-1])/ray.Sigma(1/wl2[0])) / math.Log(wl2[len(wl2)-1]/wl2[0])
	rm = 0.5 * (r1 + r2)
	H = ScaleHeight(800, mu, Gravitation*s.Mass/(rm*rm))
	slope = (r2 - r1) / math.Log(wl2[len(wl2)-1]/wl2[0])
	t.Logf("H2 Rayleigh: dR/dln(lambda) = %.4f H, local slope %.4f", slope/H, local)
	if math.Abs(slope/H-local) > 0.01*math.Abs(local) {
		t.Errorf("H2 Rayleigh: dR/dln(lambda) = %.4f H, want %.4f H within 1%%", slope/H, local)
	}
}

// TestGuillotLimits checks the Guillot (2010, A&A 520, A27) eq. 29 profile
// at its two limits: without irradiation it is the Eddington grey profile
// T^4 = 3/4 TInt^4 (2/3 + tau); at tau -> 0 without internal heat,
// T^4 = 3/4 F TIrr^4 (2/3 + gamma/sqrt3) (both follow from the equation).
func TestGuillotLimits(t *testing.T) {
	g := 20.0
	p := []float64{1e-6, 1e2, 1e5, 1e7}
	dst := make([]float64, len(p))
	gp := &Guillot{TInt: 500, TIrr: 0, KappaIR: 0.02, Gamma: 0.5, F: 0.25}
	if err := gp.TemperatureTo(dst, p, g); err != nil {
		t.Fatal(err)
	}
	for i, pi := range p {
		want := math.Pow(0.75*math.Pow(500, 4)*(2.0/3+0.02*pi/g), 0.25)
		if math.Abs(dst[i]-want) > 1e-9*want {
			t.Errorf("Eddington limit at %g Pa: %g K, want %g", pi, dst[i], want)
		}
	}
	gp = &Guillot{TInt: 0, TIrr: 1500, KappaIR: 0.02, Gamma: 0.5, F: 0.25}
	if err := gp.TemperatureTo(dst[:1], []float64{1e-9}, g); err != nil {
		t.Fatal(err)
	}
	want := math.Pow(0.75*0.25*math.Pow(1500, 4)*(2.0/3+0.5/math.Sqrt(3)), 0.25)
	if math.Abs(dst[0]-want) > 1e-6*want {
		t.Errorf("upper limit %g K, want %g", dst[0], want)
	}
	for _, bad := range []Profile{&Isothermal{T: -1}, &Isothermal{T: math.NaN()}, &Guillot{TIrr: 1000, KappaIR: -1, Gamma: 1, F: 1}} {
		if err := bad.TemperatureTo(dst, p, g); !errors.Is(err, ErrTemperature) {
			t.Errorf("%+v: error %v, want ErrTemperature", bad, err)
		}
	}
}

func TestTableProfile(t *testing.T) {
	tp, err := NewTableProfile([]float64{1e5, 1e1, 1e3}, []float64{1500, 700, 1100})
	if err != nil {
		t.Fatal(err)
	}
	dst := make([]float64, 4)
	if err := tp.TemperatureTo(dst, []float64{1, 1e2, 1e4, 1e9}, 10); err != nil {
		t.Fatal(err)
	}
	// Linear in ln P: 1e2 is half-way between 1e1 and 1e3 (fact of arithmetic).
	for i, want := range []float64{700, 900, 1300, 1500} {
		if math.Abs(dst[i]-want) > 1e-9 {
			t.Errorf("point %d: %g K, want %g", i, dst[i], want)
		}
	}
	for _, c := range []struct{ p, t []float64 }{{nil, nil}, {[]float64{1}, []float64{1, 2}}, {[]float64{-1}, []float64{100}}, {[]float64{1, 1}, []float64{100, 200}}, {[]float64{1}, []float64{0}}} {
		if _, err := NewTableProfile(c.p, c.t); err == nil {
			t.Errorf("table %v %v: no error", c.p, c.t)
		}
	}
}

// TestGrids: levels log-spaced from bottom to top; the wavelength grid
// includes both ends at a resolving power of at least R.
func TestGrids(t *testing.T) {
	p, err := PressureLevels(1e-2, 1e7, 9)
	if err != nil {
		t.Fatal(err)
	}
	for i, v := range p {
		if want := math.Pow(10, 7-float64(i)); math.Abs(v-want) > 1e-12*want {
			t.Errorf("level %d: %g Pa, want %g", i, v, want)
		}
	}
	wl, err := WavelengthGrid(0.6e-6, 12e-6, 1000)
	if err != nil {
		t.Fatal(err)
	}
	// ceil(1000 ln 20) = 2996 steps.
	if len(wl) != 2997 || wl[0] != 0.6e-6 || wl[len(wl)-1] != 12e-6 {
		t.Errorf("grid of %d points from %g to %g", len(wl), wl[0], wl[len(wl)-1])
	}
	if r := 1 / math.Log(wl[1]/wl[0]); r < 1000 {
		t.Errorf("resolving power %g, want at least 1000", r)
	}
	for _, bad := range [][3]float64{{0, 1, 10}, {2, 1, 10}, {1, 2, 0}, {1, 2, math.NaN()}} {
		if _, err := WavelengthGrid(bad[0], bad[1], bad[2]); err == nil {
			t.Errorf("WavelengthGrid%v: no error", bad)
		}
	}
	if _, err := PressureLevels(1, 1, 10); err == nil {
		t.Error("equal top and bottom: no error")
	}
}
