package forward

import (
	"math"
	"testing"

	"chord/forward/opacity"
	"chord/forward/opacity/demo"
	"chord/forward/opacity/lbl"
)

// TestOzoneBand: ozone absorbs near 9.6 um (its nu3 band at 1042 cm^-1;
// fact of the trade, DESIGN.md section 2). An Earth-like N2 atmosphere with
// ozone, its cross-sections built line by line from the demo O3 line list
// (band centres at the real positions), shows a larger transit depth at
// 9.6 um than in the windows at 8.3 and 11 um.
func TestOzoneBand(t *testing.T) {
	lines, iso, err := demo.Lines("O3")
	if err != nil {
		t.Fatal(err)
	}
	wl, _ := WavelengthGridN(8e-6, 11.5e-6, 400)
	nu := make([]float64, len(wl))
	for k := range wl {
		nu[k] = 1 / wl[len(wl)-1-k]
	}
	tab, err := lbl.BuildXSec(lines, iso, &lbl.XSecSettings{
		Gas: "O3", Log10P: []float64{0, 2.5, 5.2}, T: []float64{200, 300}, Wavenumber: nu,
	})
	if err != nil {
		t.Fatal(err)
	}
	m, err := NewModel(Config{
		Wavelength: wl, TopPressure: 1, BottomPressure: 1.5e5, Layers: 60, RefPressure: 1e5,
		Gases: []string{"O3"}, Fill: "N2", XSec: []*opacity.XSecTable{tab}, Rayleigh: []string{"N2"},
	})
	if err != nil {
		t.Fatal(err)
	}
	s := m.DefaultState()
	s.VMR[0] = 5e-6
	s.Profile = &Isothermal{T: 250}
	s.RefRadius, s.Mass, s.StarRadius = EarthRadius, EarthMass, 0.2*SolarRadius
	d := make([]float64, m.OutputLen())
	if err := m.Transit(d, &s, m.NewWorkspace()); err != nil {
		t.Fatal(err)
	}
	at := func(lambda float64) float64 { // nearest model point
		best := 0
		for k := range wl {
			if math.Abs(wl[k]-lambda) < math.Abs(wl[best]-lambda) {
				best = k
			}
		}
		return d[best]
	}
	band, lo, hi := at(9.6e-6), at(8.3e-6), at(11e-6)
	H := ScaleHeight(250, 28.014, Gravitation*s.Mass/(s.RefRadius*s.RefRadius))
	// Express the excess as an effective height in scale heights.
	dz := func(a, b float64) float64 { return s.StarRadius * (math.Sqrt(a) - math.Sqrt(b)) / H }
	t.Logf("9.6 um stands %.2f H above 8.3 um, %.2f H above 11 um", dz(band, lo), dz(band, hi))
	if dz(band, lo) < 1 || dz(band, hi) < 1 {
		t.Errorf("9.6 um band stands %.2f H above 8.3 um and %.2f H above 11 um; want at least 1 H", dz(band, lo), dz(band, hi))
	}
}
