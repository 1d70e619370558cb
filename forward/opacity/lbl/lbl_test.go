package lbl

import (
	"math"
	"strings"
	"testing"

	"chord/forward/opacity"
)

// TestLineIntensity checks the HITRAN temperature scaling (Rothman et al.
// 1998, JQSRT 60, 665, eq. A11; Simeckova et al. 2006, JQSRT 98, 130).
func TestLineIntensity(t *testing.T) {
	// CODATA 2018: c2 = hc/k = 1.438776877 cm K (exact to the digits shown).
	if math.Abs(C2-1.438776877) > 1e-9 {
		t.Errorf("c2 = %.10g cm K, CODATA 2018 gives 1.438776877", C2)
	}
	// At 296 K the listed value comes back, whatever Q is.
	co2 := Line{Mol: 2, Iso: 1, Nu: 6240.013616, S: 1.633e-28, Elower: 1470.1188}
	if got := LineIntensity(&co2, TRef, 286.09, 286.09); math.Abs(got/co2.S-1) > 1e-15 {
		t.Errorf("S(296) = %g, listed %g", got, co2.S)
	}
	// Hand-worked example, the CO pure-rotation line R(1) of v = 0 from
	// ../shared/data/hitran-lines/CO_fragment_3.7_radis.par:
	// nu = 7.689920 cm^-1, S(296) = 2.566e-23, E'' = 3.8450 cm^-1, at
	// T = 160 K with Q(296) = 107.42 (molparam) and Q(160) = 58.035
	// (TIPS-2011 table row 160 K, CO_26):
	//   Q ratio   107.42/58.035                              = 1.850952
	//   Boltzmann exp(-1.438777*3.845*(1/160 - 1/296))
	//             = exp(-5.532097*0.0028716216) = exp(-0.0158861) = 0.9842394
	//   stimulated (1 - exp(-1.438777*7.68992/160)) / (1 - exp(-1.438777*7.68992/296))
	//             = (1 - exp(-0.0691505)) / (1 - exp(-0.0373786))
	//             = 0.0668138 / 0.0366887                    = 1.821100
	//   S(160)    = 2.566e-23 * 1.850952 * 0.9842394 * 1.821100 = 8.51307e-23
	// Worked by hand to 7 digits: tolerance 1e-6.
	co := Line{Mol: 5, Iso: 1, Nu: 7.689920, S: 2.566e-23, Elower: 3.8450}
	if got := LineIntensity(&co, 160, 107.42, 58.035); math.Abs(got/8.51307e-23-1) > 1e-6 {
		t.Errorf("CO R(1) at 160 K: S = %.7g, hand-worked 8.51307e-23", got)
	}
	// A high-wavenumber line, where the stimulated factor is 1: the CO2
	// line above at 260 K, Q(260) = 244.54 (TIPS-2011 CO2_626):
	//   286.09/244.54 = 1.169911; exp(-1.438777*1470.1188*(1/260-1/296))
	//   = exp(-2115.1729*4.6777547e-4) = exp(-0.989426) = 0.3717900
	//   S = 1.633e-28 * 1.169911 * 0.3717900 = 7.10292e-29.
	if got := LineIntensity(&co2, 260, 286.09, 244.54); math.Abs(got/7.10292e-29-1) > 1e-6 {
		t.Errorf("CO2 line at 260 K: S = %.7g, hand-worked 7.10292e-29", got)
	}
}

// TestDopplerHWHM: CO at 2143 cm^-1 and 296 K, m = 27.994915 u (molparam)
// = 4.648665e-26 kg (CODATA 2018 m_u): sqrt(2 ln2 k T/m) =
// sqrt(5.665398e-21/4.648665e-26) = 349.1010 m/s; / c = 1.164476e-6;
// x 2143 = 0.002495471 cm^-1 (worked by hand, 7 digits).
func TestDopplerHWHM(t *testing.T) {
	if got := DopplerHWHM(2143, 296, 27.994915); math.Abs(got/0.002495471-1) > 1e-6 {
		t.Errorf("Doppler HWHM %.7g cm^-1, hand-worked 0.002495471", got)
	}
}

// syntheticIso is isotopologue data for the synthetic tests: CO 26
// (mass 27.994915 g/mol, Q(296) 107.42, from molparam) with the rigid
// rotor.
func syntheticIso() IsoData {
	return IsoData{{5, 1}: {Name: "CO_26", Q296: 107.42, Mass: 27.994915, Q: &RigidRotor{Q296: 107.42, Exponent: 1}}}
}

func uniformGrid(lo, hi, step float64) []float64 {
	n := int(math.Round((hi-lo)/step)) + 1
	g := make([]float64, n)
	for i := range g {
		g[i] = (lo + float64(i)*step) * 100
	}
	return g
}

// TestLorentzWidthAndShift: at 10 atm the Lorentz width is 1000 times the
// Doppler width, so the peak cross-section is S/(pi gammaL) (Lorentz
// profile) to (alphaD/gammaL)^2 ~ 1e-6, with
// gammaL = (296/T)^n (gamma_bg (p - p_self) + gamma_self p_self)
// (HITRAN definitions, Rothman et al. 1998), and it sits at nu + delta p.
func TestLorentzWidthAndShift(t *testing.T) {
	l := Line{Mol: 5, Iso: 1, Nu: 2000, S: 1e-20, GammaAir: 0.06, GammaSelf: 0.07, NAir: 0.7, DeltaAir: -0.01, Elower: 0}
	const T, pAtm = 400.0, 10.0
	for _, c := range []struct {
		self, scale, n float64
		shift          bool
	}{{0, 0, 0, true}, {0.3, 0, 0, true}, {0, 1.5, 0.5, false}} {
		bg := l.GammaAir * math.Pow(TRef/T, l.NAir)
		if c.scale > 0 {
			bg = c.scale * l.GammaAir * math.Pow(TRef/T, c.n)
		}
		gammaL := bg*pAtm*(1-c.self) + l.GammaSelf*math.Pow(TRef/T, l.NAir)*pAtm*c.self
		tab, err := BuildXSec([]Line{l}, syntheticIso(), &XSecSettings{Gas: "CO", Log10P: []float64{math.Log10(pAtm * StandardAtmosphere)}, T: []float64{T},
			Wavenumber: uniformGrid(1999, 2001, 0.0005), SelfFraction: c.self, Broadening: Broadening{Name: "test", Scale: c.scale, N: c.n},
			NoPressureShift: !c.shift})
		if err != nil {
			t.Fatal(err)
		}
		S := LineIntensity(&l, T, 1, 400.0/TRef) // rigid rotor: Q(400)/Q(296) = 400/296
		var peak float64
		var at int
		for k, v := range tab.Sigma {
			if float64(v) > peak {
				peak, at = float64(v), k
			}
		}
		want := S / (math.Pi * gammaL) * 1e-4
		if math.Abs(peak/want-1) > 1e-4 { // Humlicek accuracy
			t.Errorf("case %+v: peak %.6g m^2, Lorentz %.6g", c, peak, want)
		}
		centre := l.Nu
		if c.shift {
			centre += l.DeltaAir * pAtm
		}
		if got := tab.Wavenumber[at] / 100; math.Abs(got-centre) > 0.00051 {
			t.Errorf("case %+v: peak at %.5f cm^-1, want %.5f", c, got, centre)
		}
	}
}

// TestBuildDeterministic: the same table, bit for bit, whatever the number
// of workers (each value sums the same lines in the same order).
func TestBuildDeterministic(t *testing.T) {
	var lines []Line
	for i := range 300 {
		lines = append(lines, Line{Mol: 5, Iso: 1, Nu: 2000 + 0.37*float64(i), S: 1e-20 * (1 + math.Sin(float64(i))), GammaAir: 0.05, GammaSelf: 0.06,
			NAir: 0.7, DeltaAir: -0.003, Elower: 10 * float64(i%40)})
	}
	set := func(w int) *XSecSettings {
		return &XSecSettings{Gas: "CO", Log10P: []float64{0, 2, 4, 5}, T: []float64{200, 300, 700}, Wavenumber: uniformGrid(1990, 2120, 0.02), Workers: w,
			Version: "test-1", Sources: `[{"file":"x.par","sha256":"00","bytes":1}]`}
	}
	// No partition table: BuildXSec falls back to the rigid rotor and warns.
	iso := IsoData{{5, 1}: {Name: "CO_26", Q296: 107.42, Mass: 27.994915}}
	var warned []string
	s1 := set(1)
	s1.Observer.Warn = func(msg string) { warned = append(warned, msg) }
	ref, err := BuildXSec(lines, iso, s1)
	if err != nil {
		t.Fatal(err)
	}
	for _, w := range []int{2, 3, 7} {
		got, err := BuildXSec(lines, iso, set(w))
		if err != nil {
			t.Fatal(err)
		}
		for i := range ref.Sigma {
			if math.Float32bits(got.Sigma[i]) != math.Float32bits(ref.Sigma[i]) {
				t.Fatalf("workers %d: value %d differs: %g vs %g", w, i, got.Sigma[i], ref.Sigma[i])
			}
		}
	}
	if err := ref.Validate(); err != nil {
		t.Error(err)
	}
	// The rigid rotor was used for lack of a table: said in Meta.
	if ref.Meta[opacity.MetaProgramVersion] != "test-1" || ref.Meta[opacity.MetaSources] == "" {
		t.Errorf("provenance not recorded: %v", ref.Meta)
	}
	if !strings.Contains(ref.Meta[MetaWarnings], "rigid-rotor") || strings.Join(warned, "\n") != ref.Meta[MetaWarnings] ||
		!strings.HasPrefix(warned[0], "no partition-function table for CO_26") ||
		!strings.Contains(ref.Meta[opacity.MetaBuildSettings], `"wing_cutoff_cm-1":25`) {
		t.Errorf("meta %v, warnings %q", ref.Meta, warned)
	}
}

// TestMinIntensityAndCutoff: a line below the threshold at T is left out;
// beyond the cut-off a line contributes exactly nothing.
func TestMinIntensityAndCutoff(t *testing.T) {
	lines := []Line{{Mol: 5, Iso: 1, Nu: 2000, S: 1e-20, GammaAir: 0.05}, {Mol: 5, Iso: 1, Nu: 2001, S: 1e-25, GammaAir: 0.05}}
	s := &XSecSettings{Gas: "CO", Log10P: []float64{5}, T: []float64{296}, Wavenumber: uniformGrid(1990, 2012, 0.01), WingCutoff: 10, MinIntensity: 1e-22}
	tab, err := BuildXSec(lines, syntheticIso(), s)
	if err != nil {
		t.Fatal(err)
	}
	for k, v := range tab.Sigma {
		nu := tab.Wavenumber[k] / 100
		inside := math.Abs(nu-2000) <= 10
		if inside != (v > 0) {
			t.Fatalf("at %.2f cm^-1 sigma %g (inside cut-off: %v)", nu, v, inside)
		}
		// Only line 1 (Lorentz at 1 atm-ish, 0.987 atm): line 2 would add
		// 1e-25/(pi 0.05) at 2001.
		if math.Abs(nu-2001) < 0.005 {
			g := 0.05 * 1e5 / StandardAtmosphere
			want := 1e-20 * g / math.Pi / (1 + g*g) * 1e-4
			if math.Abs(float64(v)/want-1) > 1e-3 { // Doppler wing correction at 1 cm^-1 ~ (alphaD)^2 ~ 1e-5, Humlicek 1e-4
				t.Errorf("at 2001 cm^-1 sigma %g, line 1 alone gives %g", v, want)
			}
		}
	}
}

func TestBuildBadInputs(t *testing.T) {
	line := []Line{{Mol: 5, Iso: 1, Nu: 2000, S: 1e-20, GammaAir: 0.05}}
	ok := func() *XSecSettings {
		return &XSecSettings{Gas: "CO", Log10P: []float64{5}, T: []float64{296}, Wavenumber: uniformGrid(1990, 2010, 0.1)}
	}
	for i, c := range []struct {
		mod   func(s *XSecSettings)
		lines []Line
		iso   IsoData
		want  string
	}{
		{func(s *XSecSettings) { s.Gas = "" }, line, nil, "no gas name"},
		{func(s *XSecSettings) { s.T = []float64{300, 200} }, line, nil, "temperature axis is not strictly ascending"},
		{func(s *XSecSettings) { s.Log10P = nil }, line, nil, "log10 pressure axis is empty"},
		{func(s *XSecSettings) { s.Wavenumber = []float64{3, 2, 1} }, line, nil, "wavenumber axis is not strictly ascending"},
		{func(s *XSecSettings) { s.Wavenumber = []float64{-1, 2} }, line, nil, "wavenumber -1 m^-1 must be positive"},
		{func(s *XSecSettings) { s.T = []float64{0, 100} }, line, nil, "temperature 0 K must be positive"},
		{func(s *XSecSettings) { s.T = []float64{math.NaN()} }, line, nil, "temperature axis value 0 is NaN"},
		{func(s *XSecSettings) { s.WingCutoff = -1 }, line, nil, "wing cut-off"},
		{func(s *XSecSettings) { s.SelfFraction = 2 }, line, nil, "self-broadening fraction 2"},
		{func(s *XSecSettings) { s.MinIntensity = -1 }, line, nil, "minimum intensity"},
		{func(s *XSecSettings) { s.Broadening.Scale = -1 }, line, nil, "broadening scale"},
		{func(s *XSecSettings) { s.T = []float64{6000} }, line, nil, "partition function of CO (molecule 5) isotopologue 1 covers 10-5000 K"},
		{func(s *XSecSettings) {}, nil, nil, "no lines"},
		{func(s *XSecSettings) {}, []Line{{Mol: 6, Iso: 1, Nu: 2000, S: 1}}, nil, "no isotopologue data (mass, partition function) for CH4 (molecule 6) isotopologue 1"},
		{func(s *XSecSettings) {}, line, IsoData{{5, 1}: {Name: "CO_26", Q296: 107}}, "mass 0"},
		{func(s *XSecSettings) {}, line, IsoData{{5, 1}: {Name: "CO_26", Mass: 28}}, "neither a partition table nor Q(296 K)"},
		{func(s *XSecSettings) {}, []Line{{Mol: 5, Iso: 1, Nu: 2000, S: -1}}, nil, "line of CO (molecule 5) isotopologue 1 at 2000 cm^-1: intensity -1 must not be negative"},
		{func(s *XSecSettings) {}, line, IsoData{{5, 1}: {Name: "CO_26", Mass: 28, Q: &RigidRotor{Q296: -1, Exponent: 1}}}, "gives Q(296 K) = -1"},
		{func(s *XSecSettings) { s.T = []float64{3000} }, []Line{{Mol: 5, Iso: 1, Nu: 2000, S: 1e-20, Elower: 1e6, GammaAir: 0.05}}, nil,
			"cross-section overflows at log10 P 5, T 3000 K"},
	} {
		s := ok()
		c.mod(s)
		iso := c.iso
		if iso == nil {
			iso = syntheticIso()
		}
		_, err := BuildXSec(c.lines, iso, s)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("case %d: error %v, want one containing %q", i, err, c.want)
		}
	}
	// A grid far coarser than the lines is built, with a warning.
	s := ok()
	s.Wavenumber = uniformGrid(1990, 2010, 2)
	tab, err := BuildXSec(line, syntheticIso(), s)
	if err != nil || !strings.Contains(tab.Meta[MetaWarnings], "opacity sampling") {
		t.Errorf("coarse grid: %v, warnings %q", err, tab.Meta[MetaWarnings])
	}
	if _, err := BuildXSec(line, syntheticIso(), nil); err == nil {
		t.Error("nil settings accepted")
	}
}

// TestProgress: Observer.Progress is told after every step, from the
// calling goroutine, that done of total steps are finished, done rising by
// one to total; the zero Observer reports nothing and changes nothing.
func TestProgress(t *testing.T) {
	lines := []Line{{Mol: 5, Iso: 1, Nu: 2000, S: 1e-20, GammaAir: 0.05}}
	var done, totals []int
	s := &XSecSettings{Gas: "CO", Log10P: []float64{3, 5}, T: []float64{296, 400}, Wavenumber: uniformGrid(1990, 2010, 0.1), Workers: 3}
	s.Observer.Progress = func(d, n int) { done, totals = append(done, d), append(totals, n) }
	got, err := BuildXSec(lines, syntheticIso(), s)
	if err != nil {
		t.Fatal(err)
	}
	if len(done) == 0 {
		t.Fatal("Progress was never called")
	}
	for i := range done {
		if done[i] != i+1 || totals[i] != len(done) {
			t.Fatalf("progress reports (done, total) = %v, %v; want 1, 2, ... up to a constant total", done, totals)
		}
	}
	s.Observer = Observer{}
	quiet, err := BuildXSec(lines, syntheticIso(), s)
	if err != nil {
		t.Fatal(err)
	}
	for i := range got.Sigma {
		if math.Float32bits(got.Sigma[i]) != math.Float32bits(quiet.Sigma[i]) {
			t.Fatalf("value %d differs with and without an observer", i)
		}
	}
}
