package benchmarks

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"chord/forward"
	"chord/forward/opacity"
)

// Workload W2 of DESIGN.md section 7: a space-telescope prism spectrum,
// 0.6-5.5 um in R = 100 bins (221), 16 g-points, 8 gases from k-tables on
// the default (P, T) grid with overlap, H2-H2 and H2-He CIA, H2 and He
// Rayleigh, haze, a grey cloud deck, 100 layers.

// w2Gas is a synthetic gas: bands at the real band centres (cm^-1) of its
// namesake (handbook values from memory, as in the demo line lists), each
// with a mean cross-section of peak m^2 at its centre and a Gaussian
// envelope of 150 cm^-1 (a rotational envelope ending a few hundred cm^-1
// from the centre, as a band of lines with a 25 cm^-1 wing cut-off does),
// and a lognormal spread of k within a bin (standard deviation 2.5 in ln k).
type w2Gas struct {
	name  string
	vmr   float64
	peak  float64
	bands []float64
}

var w2Gases = []w2Gas{
	{"H2O", 1e-3, 3e-24, []float64{1595, 3657, 3756, 5331, 7250, 8807, 10613, 13831}},
	{"CH4", 1e-4, 3e-24, []float64{1306, 3019, 4319, 6005, 7250, 8700}},
	{"CO", 3e-4, 2e-24, []float64{2143, 4260, 6350}},
	{"CO2", 1e-5, 1e-23, []float64{2349, 3613, 3715, 4978, 5100, 6228, 6348}},
	{"NH3", 1e-5, 2e-24, []float64{1626, 3336, 3444, 5000, 6610}},
	{"HCN", 1e-6, 3e-24, []float64{2097, 3311, 6519}},
	{"H2S", 1e-5, 5e-25, []float64{1183, 2615, 3789, 5150}},
	{"C2H2", 1e-6, 3e-24, []float64{1328, 3289, 4091, 6556}},
	// The four extra gases of the growth-with-gases benchmark.
	{"SO2", 1e-6, 5e-24, []float64{1152, 1362, 2500}},
	{"PH3", 1e-7, 3e-24, []float64{1118, 2323, 3300}},
	{"OH", 1e-7, 8e-24, []float64{3570, 7000}},
	{"C2H4", 1e-7, 2e-24, []float64{950, 1444, 3000}},
}

// w2KTable is gas g's synthetic k-table on the default grid and the bins.
func w2KTable(g w2Gas, bins forward.Bins, q opacity.Quadrature) *opacity.KTable {
	lp, tt := opacity.DefaultKLog10P(), opacity.DefaultKT()
	nb, ng := bins.Len(), len(q.G)
	t := &opacity.KTable{Gas: g.name, Log10P: lp, T: tt, Lo: bins.Lo, Hi: bins.Hi, G: q.G, W: q.W,
		K: make([]float32, len(lp)*len(tt)*nb*ng)}
	const spread = 2.5 // ln-k standard deviation within a bin
	z := make([]float64, ng)
	for i, gv := range q.G {
		z[i] = distuv.UnitNormal.Quantile(gv)
	}
	for ip, l := range lp {
		for it, T := range tt {
			row := t.Row(ip, it)
			pf := math.Pow(10, 0.05*(l-5)) * math.Sqrt(T/1000)
			for b := range nb {
				nu := 2 / (bins.Lo[b] + bins.Hi[b]) / 100 // cm^-1
				m := 1e-40
				for _, c := range g.bands {
					d := (nu - c) / 150
					m += g.peak * math.Exp(-d*d)
				}
				m *= pf
				for i := range ng {
					row[b*ng+i] = float32(m * math.Exp(spread*z[i]-spread*spread/2))
				}
			}
		}
	}
	return t
}

// w2Bins are the R = 100 bins of W2 (anchored edges exp(k/R) um).
func w2Bins(tb testing.TB, r float64) forward.Bins {
	k0, k1 := int(math.Ceil(r*math.Log(0.6))), int(math.Floor(r*math.Log(5.5)))
	var edges []float64
	for k := k0; k <= k1; k++ {
		edges = append(edges, math.Exp(float64(k)/r)*1e-6)
	}
	b, err := forward.BinsFromEdges(edges)
	if err != nil {
		tb.Fatal(err)
	}
	return b
}

// w2 builds workload W2 with nGases gases at resolving power r, the grey
// cloud at cloudBar (0: none) and the given overlap method.
func w2(tb testing.TB, nGases int, r, cloudBar float64, ov forward.Overlap) (*forward.Model, *forward.State) {
	bins := w2Bins(tb, r)
	q := opacity.DefaultQuadrature()
	rng := w2Gases[:nGases]
	cfg := forward.Config{
		TopPressure: forward.DefaultTopPressure, BottomPressure: forward.DefaultBottomPressure, Layers: 100,
		Fill: forward.FillH2He, Rayleigh: []string{"H2", "He"}, Bins: &bins, Overlap: ov,
	}
	for _, g := range rng {
		cfg.Gases = append(cfg.Gases, g.name)
		cfg.KTables = append(cfg.KTables, w2KTable(g, bins, q))
	}
	r2 := newW2Rand()
	cfg.CIA = []*opacity.CIATable{w1CIA("H2", "H2", r2), w1CIA("H2", "He", r2)}
	m, err := forward.NewModel(cfg)
	if err != nil {
		tb.Fatal(err)
	}
	s := m.DefaultState()
	for i, g := range rng {
		s.VMR[i] = g.vmr
	}
	s.Profile = &forward.Guillot{TInt: 200, TIrr: 1500, KappaIR: 0.01, Gamma: 0.4, F: 0.25}
	s.RefRadius = 1.2 * forward.JupiterRadius
	s.Mass = 0.8 * forward.JupiterMass
	s.StarRadius = 0.9 * forward.SolarRadius
	s.CloudTop = cloudBar * forward.Bar
	s.HazeFactor = 10
	return m, &s
}

func benchW2(b *testing.B, nGases int, r, cloudBar float64, ov forward.Overlap) {
	m, s := w2(b, nGases, r, cloudBar, ov)
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

// BenchmarkTransitW2 is workload W2 (goal: at most 5 ms, 0 allocs).
func BenchmarkTransitW2(b *testing.B) { benchW2(b, 8, 100, w1Cloud, forward.OverlapProduct) }

// BenchmarkTransitW2Clear is W2 without the cloud deck.
func BenchmarkTransitW2Clear(b *testing.B) { benchW2(b, 8, 100, 0, forward.OverlapProduct) }

// BenchmarkTransitW2R1000 is W2 at R = 1000 bins.
func BenchmarkTransitW2R1000(b *testing.B) { benchW2(b, 8, 1000, w1Cloud, forward.OverlapProduct) }

// BenchmarkTransitW2ResortRebin is W2 with the resort-rebin overlap.
func BenchmarkTransitW2ResortRebin(b *testing.B) {
	benchW2(b, 8, 100, w1Cloud, forward.OverlapResortRebin)
}

// BenchmarkTransitW2Gases is the growth of W2's cost with the number of gases.
func BenchmarkTransitW2Gases(b *testing.B) {
	for _, n := range []int{1, 4, 8, 12} {
		b.Run(fmt.Sprint(n), func(b *testing.B) { benchW2(b, n, 100, w1Cloud, forward.OverlapProduct) })
	}
}

// TestTransitW2Allocs checks the k-distribution path allocates nothing.
func TestTransitW2Allocs(t *testing.T) {
	for _, ov := range forward.Overlaps {
		for _, cloud := range []float64{w1Cloud, 0} {
			m, s := w2(t, 8, 100, cloud, ov)
			w := m.NewWorkspace()
			dst := make([]float64, m.OutputLen())
			s.CloudFraction = 0.7
			if a := testing.AllocsPerRun(5, func() {
				if err := m.Transit(dst, s, w); err != nil {
					t.Fatal(err)
				}
			}); a != 0 {
				t.Errorf("%s, cloud %g bar: %g allocations per Transit, want 0", ov, cloud, a)
			}
		}
	}
}

func newW2Rand() *rand.Rand { return rand.New(rand.NewPCG(3, 4)) }

// TestTransitKHistory checks that a k-distribution spectrum does not
// depend on what the workspace computed before (a sampler's chain must not
// depend on which worker, with which history, evaluates a state; fact of
// the trade: a forward model is a function of its state): a cloudy state,
// computed in a fresh workspace and after a hot clear one, must give the
// same depths bit for bit. The two synthetic gases' order of strength flips
// with temperature (k scaled by (T/1000 K)^4 and its inverse), so their
// order of work differs between the two states.
func TestTransitKHistory(t *testing.T) {
	bins := w2Bins(t, 100)
	q := opacity.DefaultQuadrature()
	cfg := forward.Config{
		TopPressure: forward.DefaultTopPressure, BottomPressure: forward.DefaultBottomPressure, Layers: 60,
		Fill: forward.FillH2He, Gases: []string{w2Gases[0].name, w2Gases[1].name}, Bins: &bins,
	}
	for i, p := range []float64{4, -4} {
		kt := w2KTable(w2Gases[i], bins, q)
		for ip := range kt.Log10P {
			for it, T := range kt.T {
				row := kt.Row(ip, it)
				for k := range row {
					row[k] *= float32(math.Pow(T/1000, p))
				}
			}
		}
		cfg.KTables = append(cfg.KTables, kt)
	}
	m, err := forward.NewModel(cfg)
	if err != nil {
		t.Fatal(err)
	}
	cloudy := m.DefaultState()
	cloudy.VMR[0], cloudy.VMR[1] = 1e-2, 3e-3
	cloudy.Profile = &forward.Isothermal{T: 1000}
	cloudy.RefRadius, cloudy.Mass, cloudy.StarRadius = forward.JupiterRadius, forward.JupiterMass, forward.SolarRadius
	cloudy.CloudTop = 1 * forward.Bar
	cloudy.HazeFactor = 10
	hot := cloudy
	hot.Profile = &forward.Isothermal{T: 2000}
	hot.CloudTop = 0
	fresh, after := make([]float64, m.OutputLen()), make([]float64, m.OutputLen())
	if err := m.Transit(fresh, &cloudy, m.NewWorkspace()); err != nil {
		t.Fatal(err)
	}
	w := m.NewWorkspace()
	if err := m.Transit(after, &hot, w); err != nil {
		t.Fatal(err)
	}
	if err := m.Transit(after, &cloudy, w); err != nil {
		t.Fatal(err)
	}
	for b := range fresh {
		if fresh[b] != after[b] {
			t.Fatalf("bin %d: depth %.17g in a fresh workspace, %.17g after another state", b, fresh[b], after[b])
		}
	}
}
