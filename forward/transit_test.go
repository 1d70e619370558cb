package forward

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"chord/forward/opacity"
)

// testTables returns two cross-section tables on different (P, T) grids
// and one CIA table, with smooth positive synthetic values.
func testTables(rng *rand.Rand) (*opacity.XSecTable, *opacity.XSecTable, *opacity.CIATable) {
	mk := func(gas string, lp, temps []float64, scale float64) *opacity.XSecTable {
		t := &opacity.XSecTable{Gas: gas, Log10P: lp, T: temps}
		for k := range 700 { // 0.45-6 um
			t.Wavenumber = append(t.Wavenumber, 1/6e-6+float64(k)*(1/0.45e-6-1/6e-6)/699)
		}
		for range len(lp) * len(temps) * len(t.Wavenumber) {
			t.Sigma = append(t.Sigma, float32(scale*math.Pow(10, 3*rng.Float64())))
		}
		return t
	}
	a := mk("H2O", []float64{-2, 0, 2, 4, 6, 7.5}, []float64{300, 700, 1100, 1500, 2500}, 1e-28)
	b := mk("CO", []float64{-3, 1, 5, 8}, []float64{200, 1000, 3000}, 3e-29)
	c := &opacity.CIATable{Pair: [2]string{"H2", "He"}, T: []float64{300, 1000, 2000}}
	for k := range 100 { // 0.9-10 um: partly outside the model grid
		c.Wavenumber = append(c.Wavenumber, 1/10e-6+float64(k)*(1/0.9e-6-1/10e-6)/99)
	}
	for range len(c.T) * len(c.Wavenumber) {
		c.K = append(c.K, 1e-55*(1+rng.Float64()))
	}
	return a, b, c
}

func testModel(t testing.TB, bins *Bins) (*Model, State) {
	rng := rand.New(rand.NewPCG(3, 4))
	a, b, c := testTables(rng)
	wl, _ := WavelengthGridN(0.5e-6, 5e-6, 600)
	m, err := NewModel(Config{
		Wavelength: wl, TopPressure: 1e-2, BottomPressure: 1e7, Layers: 60, RefPressure: 1e6,
		Gases: []string{"H2O", "CO", "CH4"}, XSec: []*opacity.XSecTable{a, b}, CIA: []*opacity.CIATable{c},
		Rayleigh: []string{"H2", "He", "H2O"}, Grey: opacity.Grey{Sigma: 1e-32, Exponent: 0.5, RefPressure: 1e5},
		Bins: bins,
	})
	if err != nil {
		t.Fatal(err)
	}
	s := m.DefaultState()
	s.VMR = []float64{1e-3, 3e-4, 1e-5}
	s.Profile = &Guillot{TInt: 200, TIrr: 1600, KappaIR: 0.01, Gamma: 0.4, F: 0.25}
	s.RefRadius, s.Mass, s.StarRadius = 1.1*JupiterRadius, 0.7*JupiterMass, 0.8*SolarRadius
	s.HazeFactor, s.HazeSlope = 20, -3
	return m, s
}

// referenceDepth computes the transit depth of Brown (2001, ApJ 553, 1006)
// in the discrete form of DESIGN.md section 2 the plain way: absorption per
// layer from each source's CrossSectionTo, the full path sum per ray and
// math.Exp. It shares only the structure (radii, temperatures) with the
// fast path, which TestHydrostaticExact checks on its own.
func referenceDepth(m *Model, s *State, w *Workspace, cfgXSec []*opacity.XSecTable, cfgCIA []*opacity.CIATable, rayleigh []string) []float64 {
	n, M := m.Layers(), len(m.wl)
	alpha := make([][]float64, n)
	tmp := make([]float64, M)
	x := func(g string) float64 { return w.x[m.speciesIndex(g)] }
	for j := range n {
		alpha[j] = make([]float64, M)
		p, T, nd := m.pLayer[j], w.temp[j], m.pLayer[j]/(Boltzmann*w.temp[j])
		add := func(src opacity.Absorber) {
			src.CrossSectionTo(tmp, m.nu, p, T)
			f := nd
			switch sp := src.Species(); len(sp) {
			case 1:
				f *= x(sp[0])
			case 2:
				f *= nd * x(sp[0]) * x(sp[1])
			}
			for k := range tmp {
				alpha[j][k] += f * tmp[k]
			}
		}
		for _, t := range cfgXSec {
			add(t)
		}
		for _, t := range cfgCIA {
			add(t)
		}
		for _, g := range rayleigh {
			r, _ := opacity.NewRayleigh(g)
			add(r)
		}
		add(m.grey)
		for k := range tmp {
			alpha[j][k] += nd * s.HazeFactor * m.hazeSig * math.Pow(m.wl[k]/(0.35e-6), s.HazeSlope)
		}
	}
	r := w.r
	d := make([]float64, M)
	for k := range M {
		clear := r[0] * r[0]
		var rays []float64
		for i := range n {
			b := (r[i] + r[i+1]) / 2
			tau := 0.0
			for j := i; j < n; j++ {
				lo := math.Max(r[j], b)
				tau += 2 * (math.Sqrt(r[j+1]*r[j+1]-b*b) - math.Sqrt(lo*lo-b*b)) * alpha[j][k]
			}
			rays = append(rays, 1-math.Exp(-tau))
			clear += (r[i+1]*r[i+1] - r[i]*r[i]) * rays[i]
		}
		dd := clear
		if s.CloudTop > 0 {
			// Radius of the deck from the isothermal-layer relation.
			kc := 0
			for j := range n {
				if s.CloudTop >= m.pLevel[j+1] {
					kc = j
					break
				}
			}
			GM := Gravitation * s.Mass
			rc := 1 / (1/r[kc] - Boltzmann*w.temp[kc]*math.Log(m.pLevel[kc]/s.CloudTop)/(w.MeanMolecularWeight*AtomicMass*GM))
			cloudy := rc*rc + (r[kc+1]*r[kc+1]-rc*rc)*rays[kc]
			for i := kc + 1; i < n; i++ {
				cloudy += (r[i+1]*r[i+1] - r[i]*r[i]) * rays[i]
			}
			dd = s.CloudFraction*cloudy + (1-s.CloudFraction)*clear
		}
		d[k] = dd / (s.StarRadius * s.StarRadius)
	}
	return d
}

// TestTransitMatchesReference compares the prepared fast path (tables
// resampled once, mixed on touched grid rows, blocked triangular product,
// branch-free exponential) with the plain definition, clear, cloudy and
// patchy. Tables are resampled to float32, so optical depths agree to
// about 1e-7 relative; the atmospheric part of the depth to 1e-6.
func TestTransitMatchesReference(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	a, b, c := testTables(rng)
	m, s := testModel(t, nil)
	w := m.NewWorkspace()
	got := make([]float64, m.OutputLen())
	for _, cl := range []struct{ top, frac float64 }{{0, 1}, {1e3, 1}, {2e4, 0.4}, {5e6, 1}} {
		s.CloudTop, s.CloudFraction = cl.top, cl.frac
		if err := m.Transit(got, &s, w); err != nil {
			t.Fatal(err)
		}
		want := referenceDepth(m, &s, w, []*opacity.XSecTable{a, b}, []*opacity.CIATable{c}, []string{"H2", "He", "H2O"})
		base := w.r[0] * w.r[0] / (s.StarRadius * s.StarRadius)
		for k := range got {
			if d := math.Abs(got[k] - want[k]); d > 1e-6*(want[k]-base) {
				t.Errorf("cloud %g Pa, fraction %g, point %d: depth %.12g, reference %.12g", cl.top, cl.frac, k, got[k], want[k])
				break
			}
		}
	}
}

// TestPatchyAndContinuity: patchy clouds are the linear mix of Line &
// Parmentier (2016, ApJ 820, 78), and the depth is continuous in the
// cloud-top pressure (the annulus holding the deck is split there).
func TestPatchyAndContinuity(t *testing.T) {
	m, s := testModel(t, nil)
	w := m.NewWorkspace()
	M := m.OutputLen()
	clear, cloudy, mix := make([]float64, M), make([]float64, M), make([]float64, M)
	s.CloudTop = 3e3
	s.CloudFraction = 0
	_ = m.Transit(clear, &s, w)
	s.CloudFraction = 1
	_ = m.Transit(cloudy, &s, w)
	s.CloudFraction = 0.3
	if err := m.Transit(mix, &s, w); err != nil {
		t.Fatal(err)
	}
	for k := range mix {
		want := 0.3*cloudy[k] + 0.7*clear[k]
		if math.Abs(mix[k]-want) > 1e-14*want {
			t.Fatalf("point %d: patchy %g, want %g", k, mix[k], want)
		}
	}
	// A deck nudged across a level moves the depth by a tiny amount.
	lv := m.LevelPressures()
	a, b := make([]float64, M), make([]float64, M)
	s.CloudFraction = 1
	s.CloudTop = lv[30] * (1 + 1e-9)
	_ = m.Transit(a, &s, w)
	s.CloudTop = lv[30] * (1 - 1e-9)
	_ = m.Transit(b, &s, w)
	for k := range a {
		if math.Abs(a[k]-b[k]) > 1e-12 {
			t.Fatalf("depth jumps by %g at a level crossing", a[k]-b[k])
		}
	}
}

// TestBinning: bin weights sum to 1, so a flat spectrum bins to itself
// (box-car average, fact of arithmetic), and Transit's bins are the
// weighted means of TransitFine.
func TestBinning(t *testing.T) {
	edges, _ := WavelengthGridN(0.6e-6, 4.9e-6, 31)
	bins, _ := BinsFromEdges(edges)
	m, s := testModel(t, &bins)
	for i, wts := range m.bins.weight {
		sum := 0.0
		for _, v := range wts {
			sum += v
		}
		if math.Abs(sum-1) > 1e-12 {
			t.Errorf("bin %d: weights sum to %g", i, sum)
		}
	}
	w := m.NewWorkspace()
	got := make([]float64, m.OutputLen())
	if err := m.Transit(got, &s, w); err != nil {
		t.Fatal(err)
	}
	fine := make([]float64, len(m.wl))
	_ = m.TransitFine(fine, &s, w)
	for i := range got {
		lo, hi := fine[m.bins.start[i]], fine[m.bins.start[i]]
		for _, v := range fine[m.bins.start[i] : m.bins.start[i]+len(m.bins.weight[i])] {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
		if got[i] < lo || got[i] > hi {
			t.Errorf("bin %d: %g outside the range of its points [%g, %g]", i, got[i], lo, hi)
		}
	}
	if c, err := BinsFromCentres([]float64{1e-6, 2e-6}, []float64{0.1e-6, 0.2e-6}); err != nil || c.Lo[1] != 1.9e-6 || c.Hi[0] != 1.05e-6 {
		t.Errorf("BinsFromCentres: %+v %v", c, err)
	}
}

// TestTransitAllocs: the hot path allocates nothing (DESIGN.md section 9).
func TestTransitAllocs(t *testing.T) {
	edges, _ := WavelengthGridN(0.6e-6, 4.9e-6, 31)
	bins, _ := BinsFromEdges(edges)
	m, s := testModel(t, &bins)
	w := m.NewWorkspace()
	d := make([]float64, m.OutputLen())
	s.CloudTop, s.CloudFraction = 1e3, 0.5
	if a := testing.AllocsPerRun(10, func() { _ = m.Transit(d, &s, w) }); a != 0 {
		t.Errorf("%g allocations per Transit", a)
	}
	s.VMR[0] = 2 // rejected states do not allocate either
	if a := testing.AllocsPerRun(10, func() { _ = m.Transit(d, &s, w) }); a != 0 {
		t.Errorf("%g allocations per rejected Transit", a)
	}
}

// TestBadModels: each bad configuration is an error naming the problem.
func TestBadModels(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	a, _, _ := testTables(rng)
	wl, _ := WavelengthGridN(0.5e-6, 5e-6, 100)
	good := func() Config {
		return Config{Wavelength: wl, TopPressure: 1e-2, BottomPressure: 1e7, Layers: 50, Gases: []string{"H2O"}, XSec: []*opacity.XSecTable{a}}
	}
	wide, _ := WavelengthGridN(0.3e-6, 5e-6, 100)
	edgesOut, _ := BinsFromEdges([]float64{0.4e-6, 1e-6})
	edgesThin, _ := BinsFromEdges([]float64{1e-6, 1.0001e-6})
	for _, c := range []struct {
		name, want string
		edit       func(*Config)
	}{
		{"unknown gas", `unknown gas "Xy"`, func(c *Config) { c.Gases = []string{"Xy"} }},
		{"unknown fill", `unknown gas "Qq"`, func(c *Config) { c.Fill = "Qq" }},
		{"top below bottom", "above the top pressure", func(c *Config) { c.TopPressure = 1e8 }},
		{"zero layers", "0 layers", func(c *Config) { c.Layers = 0 }},
		{"outside tables", "outside the H2O table", func(c *Config) { c.Wavelength = wide }},
		{"table gas not in composition", `"H2O", a gas not in the composition`, func(c *Config) { c.Gases = nil }},
		{"fill gas as trace", "part of the balance gas", func(c *Config) { c.Gases = []string{"H2O", "He"} }},
		{"bad Rayleigh gas", `no Rayleigh-scattering formula for gas "H2O2"`, func(c *Config) { c.Rayleigh = []string{"H2O2"} }},
		{"Rayleigh gas not present", `"N2", a gas not in the composition`, func(c *Config) { c.Rayleigh = []string{"N2"} }},
		{"reference pressure outside", "reference pressure", func(c *Config) { c.RefPressure = 1e9 }},
		{"bin outside grid", "outside the model grid", func(c *Config) { c.Bins = &edgesOut }},
		{"bin too thin", "holds 0 model points", func(c *Config) { c.Bins = &edgesThin }},
		{"no grid", "wavelength grid has 0 points", func(c *Config) { c.Wavelength = nil }},
		{"negative grey", "grey cross-section", func(c *Config) { c.Grey.Sigma = -1 }},
	} {
		cfg := good()
		c.edit(&cfg)
		_, err := NewModel(cfg)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want one containing %q", c.name, err, c.want)
		}
	}
	if _, err := NewModel(good()); err != nil {
		t.Errorf("good config: %v", err)
	}
}

// TestBadStates: each bad state is an error of a distinguishable kind.
func TestBadStates(t *testing.T) {
	m, s0 := testModel(t, nil)
	w := m.NewWorkspace()
	d := make([]float64, m.OutputLen())
	for _, c := range []struct {
		name string
		kind error
		want string
		edit func(*State)
	}{
		{"negative mixing ratio", ErrInvalidState, "H2O mixing ratio is -0.001", func(s *State) { s.VMR[0] = -1e-3 }},
		{"NaN mixing ratio", ErrInvalidState, "CO mixing ratio", func(s *State) { s.VMR[1] = math.NaN() }},
		{"sum over 1", ErrMixingRatio, "sum 1.2", func(s *State) { s.VMR[0], s.VMR[1] = 0.6, 0.6 }},
		{"unbound", ErrUnbound, "unbound", func(s *State) { s.Mass = 1e-4 * JupiterMass }},
		{"cloud below bottom", ErrCloudBelow, "below the bottom", func(s *State) { s.CloudTop = 2e7 }},
		{"cloud fraction", ErrInvalidState, "cloud fraction", func(s *State) { s.CloudTop, s.CloudFraction = 1e3, 1.5 }},
		{"negative radius", ErrInvalidState, "reference radius", func(s *State) { s.RefRadius = -1 }},
		{"no profile", ErrInvalidState, "temperature profile", func(s *State) { s.Profile = nil }},
		{"bad temperature", ErrTemperature, "temperature", func(s *State) { s.Profile = &Isothermal{T: 0} }},
		{"negative He/H2", ErrInvalidState, "He/H2", func(s *State) { s.HeH2 = -1 }},
		{"negative haze", ErrInvalidState, "haze strength", func(s *State) { s.HazeFactor = -1 }},
	} {
		s := s0
		s.VMR = append([]float64(nil), s0.VMR...)
		c.edit(&s)
		err := m.Transit(d, &s, w)
		var se *StateError
		if !errors.Is(err, c.kind) || !errors.As(err, &se) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want kind %v containing %q", c.name, err, c.kind, c.want)
		}
	}
	if err := m.Transit(d, &s0, w); err != nil {
		t.Errorf("good state: %v", err)
	}
	// A deck above the model top covers everything: depth (r_top/R_star)^2.
	s := s0
	s.CloudTop = 1e-3
	if err := m.Transit(d, &s, w); err != nil {
		t.Fatal(err)
	}
	if want := w.r[m.Layers()] * w.r[m.Layers()] / (s.StarRadius * s.StarRadius); d[0] != want {
		t.Errorf("deck above the top: %g, want %g", d[0], want)
	}
	// Patchy, with the deck above the top: the mix of that and the clear limb.
	clear := make([]float64, len(d))
	s.CloudTop = 0
	_ = m.Transit(clear, &s, w)
	s.CloudTop, s.CloudFraction = 1e-3, 0.25
	if err := m.Transit(d, &s, w); err != nil {
		t.Fatal(err)
	}
	top := w.r[m.Layers()] * w.r[m.Layers()] / (s.StarRadius * s.StarRadius)
	for k := range d {
		if want := 0.25*top + 0.75*clear[k]; math.Abs(d[k]-want) > 1e-14*want {
			t.Fatalf("patchy deck above the top, point %d: %g, want %g", k, d[k], want)
		}
	}
}

// TestConcurrentTransit: a Model is shared read-only by goroutines, each
// with its own Workspace (run under -race in CI); results are identical.
func TestConcurrentTransit(t *testing.T) {
	m, s := testModel(t, nil)
	want := make([]float64, m.OutputLen())
	if err := m.Transit(want, &s, m.NewWorkspace()); err != nil {
		t.Fatal(err)
	}
	errs := make(chan error, 4)
	for g := range 4 {
		go func() {
			w := m.NewWorkspace()
			st := s
			st.VMR = append([]float64(nil), s.VMR...)
			d := make([]float64, m.OutputLen())
			for range 3 {
				if err := m.Transit(d, &st, w); err != nil {
					errs <- err
					return
				}
				for k := range d {
					if d[k] != want[k] {
						errs <- fmt.Errorf("goroutine %d: point %d differs", g, k)
						return
					}
				}
			}
			errs <- nil
		}()
	}
	for range 4 {
		if err := <-errs; err != nil {
			t.Error(err)
		}
	}
}

// FuzzTransitState: no state makes Transit panic or return a depth that
// is NaN or negative without an error.
func FuzzTransitState(f *testing.F) {
	m, s0 := testModel(f, nil)
	w := m.NewWorkspace()
	d := make([]float64, m.OutputLen())
	f.Add(1e-3, 3e-4, 0.17, 1.0, 1.0, 0.0, 1.0, 0.0, -4.0, 1200.0)
	f.Add(0.5, 0.4, 0.0, 0.2, 5.0, 1e-3, 0.3, 1e3, -10.0, 3000.0)
	f.Add(0.0, 0.0, 1.0, 3.0, 0.05, 1e7, 0.0, 1.0, 2.0, 50.0)
	f.Fuzz(func(t *testing.T, x0, x1, heh2, rad, mass, top, frac, haze, slope, temp float64) {
		s := s0
		s.VMR = []float64{x0, x1, 0}
		s.HeH2 = heh2
		s.RefRadius *= rad
		s.Mass *= mass
		s.CloudTop, s.CloudFraction = top, frac
		s.HazeFactor, s.HazeSlope = haze, slope
		s.Profile = &Isothermal{T: temp}
		if err := m.Transit(d, &s, w); err != nil {
			var se *StateError
			if !errors.As(err, &se) {
				t.Fatalf("error %v is not a *StateError", err)
			}
			return
		}
		for k, v := range d {
			if math.IsNaN(v) || v < 0 {
				t.Fatalf("point %d: depth %g", k, v)
			}
		}
	})
}
