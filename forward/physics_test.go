package forward

import (
	"math"
	"testing"

	"chord/forward/opacity"
)

// isoGrey returns a model and state of an isothermal pure-H2 atmosphere
// with a grey absorber sigma (P/P0)^n, reference pressure p0.
func isoGrey(t *testing.T, layers int, sigma, n, p0 float64, wl []float64) (*Model, State) {
	t.Helper()
	m, err := NewModel(Config{
		Wavelength:     wl,
		TopPressure:    1e-8 * Bar,
		BottomPressure: 100 * Bar,
		Layers:         layers,
		RefPressure:    p0,
		Fill:           "H2",
		Grey:           opacity.Grey{Sigma: sigma, Exponent: n, RefPressure: p0},
	})
	if err != nil {
		t.Fatal(err)
	}
	s := m.DefaultState()
	s.Profile = &Isothermal{T: 1000}
	s.RefRadius = JupiterRadius
	s.Mass = JupiterMass
	s.StarRadius = SolarRadius
	return m, s
}

func effRadius(t *testing.T, m *Model, s *State) float64 {
	t.Helper()
	w := m.NewWorkspace()
	d := make([]float64, m.OutputLen())
	if err := m.Transit(d, s, w); err != nil {
		t.Fatal(err)
	}
	return s.StarRadius * math.Sqrt(d[0])
}

// Heng & Kitzmann (2017, MNRAS 470, 2972), eq. for an isothermal
// atmosphere of constant opacity kappa: R = R0 + H (gamma_E + ln tau0),
// tau0 = P0 kappa/g sqrt(2 pi R0/H); with kappa rising as (P/P0)^n the
// height term divides by (1+n) (Gkouvelis 2025, arXiv:2511.07656): the
// absorber's scale height is H/(1+n), so (our step, same assumptions) tau0
// becomes tau0/sqrt(1+n) and R = R0 + H/(1+n) (gamma_E + ln(tau0/sqrt(1+n))).
func TestGreyRadiusHengKitzmann(t *testing.T) {
	wl := []float64{1e-6, 2e-6}
	g := GMJupiter / (JupiterRadius * JupiterRadius)
	mu, _ := MolecularMass("H2")
	H := ScaleHeight(1000, mu, g)
	p0 := 0.1 * Bar
	for _, n := range []float64{0, 1} {
		// kappa chosen so the photosphere sits near P0 (gamma_E + ln tau0 ~ 0),
		// where the formula's constant-gravity assumption holds best.
		kappa := 0.56 * g / p0 / math.Sqrt(2*math.Pi*JupiterRadius/H)
		sigma := kappa * mu * AtomicMass
		tau0 := p0 * kappa / g * math.Sqrt(2*math.Pi*JupiterRadius/H) / math.Sqrt(1+n)
		want := JupiterRadius + H/(1+n)*(eulerGamma+math.Log(tau0))
		var prev float64
		for _, layers := range []int{50, 100, 200, 400} {
			m, s := isoGrey(t, layers, sigma, n, p0, wl)
			got := effRadius(t, m, &s)
			diff := (got - want) / H
			t.Logf("n=%g layers=%d: R-R_formula = %+.4f H", n, layers, diff)
			if layers >= 200 && math.Abs(diff) > 0.02 {
				t.Errorf("n=%g, %d layers: R differs from the formula by %.4f H, want under 0.02 H", n, layers, diff)
			}
			// Refining the layers must bring the model closer to the formula.
			if layers > 50 && math.Abs(diff) > math.Abs(prev) {
				t.Errorf("n=%g: difference grew from %.4f H to %.4f H at %d layers", n, prev, diff, layers)
			}
			prev = diff
		}
	}
}
