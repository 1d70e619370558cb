package benchmarks

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"chord/forward"
	"chord/forward/opacity"
)

// w1Gases are the six table gases of workload W1 and their mixing ratios.
var w1Gases = []struct {
	name string
	vmr  float64
}{{"H2O", 1e-3}, {"CH4", 1e-4}, {"CO", 3e-4}, {"CO2", 1e-5}, {"NH3", 1e-5}, {"HCN", 1e-6}}

// w1Table is a synthetic cross-section table on the 13 x 12 (P, T) grid of
// W1, with positive values spread over five decades.
func w1Table(gas string, rng *rand.Rand) *opacity.XSecTable {
	t := &opacity.XSecTable{Gas: gas}
	for i := range 13 {
		t.Log10P = append(t.Log10P, float64(i)-2) // 1e-2 to 1e10 Pa
	}
	t.T = []float64{200, 300, 400, 600, 800, 1000, 1200, 1500, 1800, 2200, 2600, 3000}
	nk := 8000
	for k := range nk { // 0.55-13 um, ascending wavenumber
		t.Wavenumber = append(t.Wavenumber, 1/(13e-6)+float64(k)*(1/0.55e-6-1/13e-6)/float64(nk-1))
	}
	t.Sigma = make([]float32, 13*12*nk)
	for i := range t.Sigma {
		t.Sigma[i] = float32(1e-30 * math.Pow(10, 5*rng.Float64()))
	}
	return t
}

func w1CIA(a, b string, rng *rand.Rand) *opacity.CIATable {
	t := &opacity.CIATable{Pair: [2]string{a, b}, T: []float64{200, 400, 600, 800, 1000, 1500, 2000, 2500, 3000}}
	nk := 2000
	for k := range nk {
		t.Wavenumber = append(t.Wavenumber, 1/(13e-6)+float64(k)*(1/0.55e-6-1/13e-6)/float64(nk-1))
	}
	t.K = make([]float64, len(t.T)*nk)
	for i := range t.K {
		t.K[i] = 1e-56 * math.Pow(10, 2*rng.Float64())
	}
	return t
}

// w1 builds workload W1 of DESIGN.md section 7: layers layers, points model
// points 0.6-12 um, six gas tables, H2-H2 and H2-He CIA, H2 Rayleigh, a
// grey cloud deck at cloudBar (0 for none), 150 bins.
func w1(tb testing.TB, layers, points int, cloudBar float64) (*forward.Model, *forward.State) {
	rng := rand.New(rand.NewPCG(1, 2))
	wl, err := forward.WavelengthGridN(0.6e-6, 12e-6, points)
	if err != nil {
		tb.Fatal(err)
	}
	cfg := forward.Config{
		Wavelength: wl, TopPressure: forward.DefaultTopPressure, BottomPressure: forward.DefaultBottomPressure,
		Layers: layers, Fill: forward.FillH2He, Rayleigh: []string{"H2"},
	}
	for _, g := range w1Gases {
		cfg.Gases = append(cfg.Gases, g.name)
		cfg.XSec = append(cfg.XSec, w1Table(g.name, rng))
	}
	cfg.CIA = []*opacity.CIATable{w1CIA("H2", "H2", rng), w1CIA("H2", "He", rng)}
	edges, _ := forward.WavelengthGridN(0.61e-6, 11.9e-6, 151)
	bins, err := forward.BinsFromEdges(edges)
	if err != nil {
		tb.Fatal(err)
	}
	cfg.Bins = &bins
	m, err := forward.NewModel(cfg)
	if err != nil {
		tb.Fatal(err)
	}
	s := m.DefaultState()
	for i, g := range w1Gases {
		s.VMR[i] = g.vmr
	}
	s.Profile = &forward.Guillot{TInt: 200, TIrr: 1500, KappaIR: 0.01, Gamma: 0.4, F: 0.25}
	s.RefRadius = 1.2 * forward.JupiterRadius
	s.Mass = 0.8 * forward.JupiterMass
	s.StarRadius = 0.9 * forward.SolarRadius
	s.CloudTop = cloudBar * forward.Bar
	return m, &s
}

var sink []float64

func benchTransit(b *testing.B, layers, points int, cloudBar float64) {
	m, s := w1(b, layers, points, cloudBar)
	w := m.NewWorkspace()
	dst := make([]float64, m.OutputLen())
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		if err := m.Transit(dst, s, w); err != nil {
			b.Fatal(err)
		}
	}
	sink = dst
}

// w1Cloud is W1's grey cloud-deck pressure in bar (a mid-range value of
// retrieved cloud tops on hot giants, log10 P_cloud = -2).
const w1Cloud = 1e-2

func BenchmarkTransitW1(b *testing.B) { benchTransit(b, 100, 3000, w1Cloud) }

// BenchmarkTransitW1Clear is W1 without the cloud deck: every ray needs an
// optical depth.
func BenchmarkTransitW1Clear(b *testing.B) { benchTransit(b, 100, 3000, 0) }

func BenchmarkTransitW1Layers(b *testing.B) {
	for _, n := range []int{50, 100, 200} {
		b.Run(fmt.Sprint(n), func(b *testing.B) { benchTransit(b, n, 3000, w1Cloud) })
	}
}

func BenchmarkTransitW1Points(b *testing.B) {
	for _, n := range []int{1000, 3000, 10000} {
		b.Run(fmt.Sprint(n), func(b *testing.B) { benchTransit(b, 100, n, w1Cloud) })
	}
}

// TestTransitW1Allocs checks the hot path allocates nothing (DESIGN.md
// section 7, zero heap allocations per call in steady state).
func TestTransitW1Allocs(t *testing.T) {
	for _, cloud := range []float64{w1Cloud, 0} {
		m, s := w1(t, 100, 3000, cloud)
		w := m.NewWorkspace()
		dst := make([]float64, m.OutputLen())
		s.CloudFraction = 0.7
		s.HazeFactor = 10
		if a := testing.AllocsPerRun(20, func() {
			if err := m.Transit(dst, s, w); err != nil {
				t.Fatal(err)
			}
		}); a != 0 {
			t.Errorf("cloud %g bar: %g allocations per Transit, want 0", cloud, a)
		}
	}
}
