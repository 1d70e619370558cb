package forward

import (
	"math"
	"testing"

	"chord/forward/opacity"
)

// greyKTable returns a k-table of gas whose k is sigma at every node, bin,
// pressure and temperature: a grey absorber written as a k-distribution.
func greyKTable(gas string, sigma float64, b Bins) *opacity.KTable {
	q := opacity.DefaultQuadrature()
	t := &opacity.KTable{Gas: gas, Log10P: []float64{-3, 8}, T: []float64{100, 3000}, Lo: b.Lo, Hi: b.Hi, G: q.G, W: q.W}
	t.K = make([]float32, 2*2*b.Len()*len(q.G))
	for i := range t.K {
		t.K[i] = float32(sigma)
	}
	return t
}

// TestKGreyHengKitzmann: the k-distribution path meets the analytic radius
// of an isothermal atmosphere of constant opacity (Heng & Kitzmann 2017,
// MNRAS 470, 2972) as the sampled path does (TestGreyRadiusHengKitzmann):
// a gas of constant k at every node is the grey absorber, and the product
// of transmissions of one grey gas is exp(-tau). Both paths agree to the
// float32 rounding of the stored k (a relative 6e-8 in k moves the radius
// by about 6e-8 H), and the model meets the formula within 0.02 H at 200
// layers.
func TestKGreyHengKitzmann(t *testing.T) {
	g := GMJupiter / (JupiterRadius * JupiterRadius)
	mu, _ := MolecularMass("H2")
	H := ScaleHeight(1000, mu, g)
	p0 := 0.1 * Bar
	kappa := 0.56 * g / p0 / math.Sqrt(2*math.Pi*JupiterRadius/H)
	sigma := kappa * mu * AtomicMass
	tau0 := p0 * kappa / g * math.Sqrt(2*math.Pi*JupiterRadius/H)
	want := JupiterRadius + H*(eulerGamma+math.Log(tau0))
	bins, _ := BinsFromEdges([]float64{1e-6, 1.01e-6, 2e-6})
	// The atmosphere is pure H2 (VMR 1, the He fill at 0), the k-table on
	// H2 itself.
	for _, ov := range Overlaps {
		m, err := NewModel(Config{TopPressure: 1e-8 * Bar, BottomPressure: 100 * Bar, Layers: 200, RefPressure: p0,
			Fill: "He", Gases: []string{"H2"}, Bins: &bins, KTables: []*opacity.KTable{greyKTable("H2", sigma, bins)}, Overlap: ov})
		if err != nil {
			t.Fatal(err)
		}
		s := m.DefaultState()
		s.VMR[0] = 1
		s.Profile = &Isothermal{T: 1000}
		s.RefRadius, s.Mass, s.StarRadius = JupiterRadius, JupiterMass, SolarRadius
		d := make([]float64, m.OutputLen())
		if err := m.Transit(d, &s, m.NewWorkspace()); err != nil {
			t.Fatal(err)
		}
		// The same atmosphere through the sampled path's grey absorber.
		ms, ss := isoGrey(t, 200, sigma, 0, p0, []float64{1e-6, 2e-6})
		ss.Profile = s.Profile
		ref := effRadius(t, ms, &ss)
		for b := range d {
			got := s.StarRadius * math.Sqrt(d[b])
			t.Logf("%s, bin %d: R - R_formula = %+.4f H, R - R_sampled = %+.2e H", ov, b, (got-want)/H, (got-ref)/H)
			if math.Abs(got-want) > 0.02*H {
				t.Errorf("%s, bin %d: radius differs from Heng & Kitzmann by %.4f H, want under 0.02 H", ov, b, (got-want)/H)
			}
			if math.Abs(got-ref) > 1e-6*H {
				t.Errorf("%s, bin %d: k path and sampled path differ by %.2e H", ov, b, (got-ref)/H)
			}
		}
	}
}

// TestKOverlapLimits: the product and resort-rebin overlaps agree exactly
// where overlap does not matter: one gas alone (both reduce to correlated-k
// of that gas), and a second gas that is grey (the sum of a constant and a
// distribution is resorted to itself).
func TestKOverlapLimits(t *testing.T) {
	bins, _ := BinsFromEdges([]float64{1e-6, 1.01e-6, 1.02e-6})
	q := opacity.DefaultQuadrature()
	ramp := greyKTable("CO", 0, bins)
	for i := range ramp.K {
		g := q.G[i%len(q.G)]
		ramp.K[i] = float32(1e-26 * math.Exp(12*g))
	}
	depth := func(ov Overlap, tables []*opacity.KTable, gases []string, vmr []float64) []float64 {
		m, err := NewModel(Config{TopPressure: 1e-7 * Bar, BottomPressure: 10 * Bar, Layers: 60, Fill: FillH2He,
			Gases: gases, Bins: &bins, KTables: tables, Overlap: ov})
		if err != nil {
			t.Fatal(err)
		}
		s := m.DefaultState()
		copy(s.VMR, vmr)
		s.Profile = &Isothermal{T: 800}
		s.RefRadius, s.Mass, s.StarRadius = JupiterRadius, JupiterMass, SolarRadius
		d := make([]float64, m.OutputLen())
		if err := m.Transit(d, &s, m.NewWorkspace()); err != nil {
			t.Fatal(err)
		}
		return d
	}
	for _, c := range []struct {
		name   string
		tables []*opacity.KTable
		gases  []string
		vmr    []float64
	}{
		{"one gas", []*opacity.KTable{ramp}, []string{"CO"}, []float64{1e-4}},
		{"with a grey gas", []*opacity.KTable{ramp, greyKTable("H2O", 3e-27, bins)}, []string{"CO", "H2O"}, []float64{1e-4, 1e-3}},
	} {
		a := depth(OverlapProduct, c.tables, c.gases, c.vmr)
		b := depth(OverlapResortRebin, c.tables, c.gases, c.vmr)
		for i := range a {
			if math.Abs(a[i]-b[i]) > 1e-12 {
				t.Errorf("%s, bin %d: product %.10g, resort-rebin %.10g; want equal (fact of the method)", c.name, i, a[i], b[i])
			}
		}
	}
}
