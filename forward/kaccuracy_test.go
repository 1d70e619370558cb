package forward_test

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"

	"chord/forward"
	"chord/forward/opacity"
	"chord/forward/opacity/hitran"
	"chord/forward/opacity/lbl"
	"chord/internal/testenv"
)

// The accuracy of the k-distribution path, checked against chord's own
// resolved mode (line by line at resolving power 1e6, transmission
// averaged into the bins) in the hot hydrogen atmosphere of the issue that
// asked for it: 1000 K isothermal, H2+He with He/H2 0.17, g = 4.3 m/s^2 and
// 1.27 Jupiter radii at 10 bar around a 0.92 solar-radius star, 1e-6 to 10
// bar in 80 layers, no clouds, no CIA; real HITRAN lines from
// ../shared/data with TIPS-2021 partition sums. Targets (fact of the trade:
// a space-telescope transit spectrum has error bars of 30-100 ppm per bin,
// and the model must be well below them): one gas within 10 ppm (max) in
// R = 100 bins and 30 ppm in R = 1000 bins; several gases within 20 ppm at
// R = 100. `go test -run KAccuracy -v ./forward/` prints the figures the
// README quotes.

// hotAtmosphere is the test atmosphere, as a per-bin model configuration
// and a state.
type hotAtmosphere struct{}

func (hotAtmosphere) config(gases []string, bins forward.Bins) forward.Config {
	return forward.Config{
		TopPressure: 1e-6 * forward.Bar, BottomPressure: 10 * forward.Bar, Layers: 80,
		RefPressure: 10 * forward.Bar, Fill: forward.FillH2He, Gases: gases, Bins: &bins,
	}
}

func (hotAtmosphere) state(m *forward.Model, vmr []float64) forward.State {
	s := m.DefaultState()
	copy(s.VMR, vmr)
	s.HeH2 = 0.17
	s.Profile = &forward.Isothermal{T: 1000}
	s.RefRadius = 1.27 * forward.JupiterRadius
	s.Mass = 4.3 * s.RefRadius * s.RefRadius / forward.Gravitation
	s.StarRadius = 0.92 * forward.SolarRadius
	return s
}

// anchoredBins returns the bins of resolving power r whose edges
// exp(k/r) um lie inside [nuLo, nuHi] cm^-1.
func anchoredBins(t testing.TB, nuLo, nuHi, r float64) forward.Bins {
	lo, hi := 1e4/nuHi, 1e4/nuLo // um
	k0, k1 := int(math.Ceil(r*math.Log(lo))), int(math.Floor(r*math.Log(hi)))
	var edges []float64
	for k := k0; k <= k1; k++ {
		edges = append(edges, math.Exp(float64(k)/r)*1e-6)
	}
	b, err := forward.BinsFromEdges(edges)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// gasLines names a gas's line files (in ../shared/data/hitran-lines) and
// its TIPS-2021 partition files by isotopologue.
type gasLines struct {
	gas   string
	files []string
	q     map[lbl.IsoKey]string
}

var (
	linesCO = gasLines{"CO", []string{"05_hit12_CO_full.par"}, map[lbl.IsoKey]string{
		{Mol: 5, Iso: 1}: "q26_CO_26_tips2021_hapi.txt", {Mol: 5, Iso: 2}: "q27_CO_36_tips2021_hapi.txt", {Mol: 5, Iso: 3}: "q28_CO_28_tips2021_hapi.txt"}}
	linesCH4 = gasLines{"CH4", []string{"CH4_nu3_band_0000A1-0010F2_hapi.par",
		"CH4_band_0_0_0_1_1F2_to_0_0_1_1_1F1_hapi.par", "CH4_band_0_0_0_1_1F2_to_0_0_1_1_1F2_hapi.par",
		"CH4_band_0_0_0_1_1F2_to_0_0_1_1_1E_hapi.par", "CH4_band_0_0_0_1_1F2_to_0_0_1_1_1A1_hapi.par",
		"CH4_band_0_1_0_0_1E_to_0_1_1_0_1F1_hapi.par", "CH4_band_0_1_0_0_1E_to_0_1_1_0_1F2_hapi.par"},
		map[lbl.IsoKey]string{{Mol: 6, Iso: 1}: "q32_CH4_211_tips2021_hapi.txt"}}
	linesCO2 = gasLines{"CO2", []string{"CO2_626_HIRS-ch1_lblgasabs.tsv", "CO2_626_HIRS-ch2_lblgasabs.tsv", "CO2_626_HIRS-ch3_lblgasabs.tsv",
		"CO2_626_HIRS-ch4_lblgasabs.tsv", "CO2_626_HIRS-ch5_lblgasabs.tsv", "CO2_626_HIRS-ch6_lblgasabs.tsv", "CO2_626_HIRS-ch7_lblgasabs.tsv"},
		map[lbl.IsoKey]string{{Mol: 2, Iso: 1}: "q7_CO2_626_tips2021_hapi.txt"}}
	linesH2O2000 = gasLines{"H2O", []string{"H2O_2000-2100_hit16_radis.par"}, map[lbl.IsoKey]string{
		{Mol: 1, Iso: 1}: "q1_H2O_161_tips2021_hapi.txt", {Mol: 1, Iso: 2}: "q2_H2O_181_tips2021_hapi.txt"}}
	linesH2O6000 = gasLines{"H2O", []string{"H2O_6000-6400_vsmartmom.par"}, map[lbl.IsoKey]string{{Mol: 1, Iso: 1}: "q1_H2O_161_tips2021_hapi.txt"}}
	linesCO26000 = gasLines{"CO2", []string{"CO2_6000-6400_vsmartmom.par"}, map[lbl.IsoKey]string{{Mol: 2, Iso: 1}: "q7_CO2_626_tips2021_hapi.txt"}}
	linesCO6000  = gasLines{"CO", []string{"CO_6000-6400_vsmartmom.par"}, map[lbl.IsoKey]string{{Mol: 5, Iso: 1}: "q26_CO_26_tips2021_hapi.txt"}}
)

// load reads the lines within the wing cut-off of [nuLo, nuHi] and the
// isotopologue data (HITRAN molparam, TIPS-2011 for isotopologues without
// a TIPS-2021 file).
func (gl gasLines) load(t testing.TB, nuLo, nuHi float64) ([]lbl.Line, lbl.IsoData) {
	t.Helper()
	part := testenv.SharedData(t, "partition")
	lineDir := testenv.SharedData(t, "hitran-lines")
	iso, err := hitran.ReadMolParam(filepath.Join(part, "molparam_hitran.txt"))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := hitran.ReadTIPSTable(filepath.Join(part, "parsum2011_tips.dat"), iso); err != nil {
		t.Fatal(err)
	}
	for k, f := range gl.q {
		q, err := hitran.ReadQFile(filepath.Join(part, f))
		if err != nil {
			t.Fatal(err)
		}
		iso[k].Q = q
	}
	var all []lbl.Line
	cut := lbl.DefaultWingCutoff
	for _, f := range gl.files {
		ls, err := hitran.ReadLineFile(filepath.Join(lineDir, f), hitran.LineFilter{NuMin: nuLo - cut, NuMax: nuHi + cut})
		if err != nil {
			t.Fatal(err)
		}
		all = append(all, ls...)
	}
	return lbl.MergeLines(all), iso
}

// kCase is one comparison: gases, spectral window (cm^-1), bins.
type kCase struct {
	lines      []gasLines
	nuLo, nuHi float64
	binR       float64
	lineSet    lbl.LineSettings
}

// kResult holds a case's reference and k-table models.
type kResult struct {
	names []string
	ref   *forward.Model // per-bin model for the resolved mode
	srcs  map[string]forward.LineSource
	kmod  *forward.Model
	kts   []*opacity.KTable
}

// testKLog10P is the default table pressure axis cut to the test
// atmosphere (1e-6 to 10 bar) with one point to spare at each end.
func testKLog10P() []float64 {
	var out []float64
	for _, v := range opacity.DefaultKLog10P() {
		if v >= -1-1.0/6-1e-9 && v <= 6+1.0/6+1e-9 {
			out = append(out, v)
		}
	}
	return out
}

func (c kCase) build(t testing.TB) *kResult {
	t.Helper()
	bins := anchoredBins(t, c.nuLo, c.nuHi, c.binR)
	r := &kResult{srcs: map[string]forward.LineSource{}}
	for _, gl := range c.lines {
		lines, iso := gl.load(t, c.nuLo, c.nuHi)
		ls, err := lbl.NewLineSet(gl.gas, lines, iso, c.lineSet)
		if err != nil {
			t.Fatal(err)
		}
		kt, err := lbl.BuildK(lines, iso, &lbl.KSettings{
			Gas: gl.gas, Log10P: testKLog10P(), T: []float64{1000}, Lo: bins.Lo, Hi: bins.Hi, Lines: c.lineSet,
		})
		if err != nil {
			t.Fatal(err)
		}
		r.names = append(r.names, gl.gas)
		r.srcs[gl.gas] = ls
		r.kts = append(r.kts, kt)
	}
	var err error
	if r.ref, err = forward.NewModel(hotAtmosphere{}.config(r.names, bins)); err != nil {
		t.Fatal(err)
	}
	cfg := hotAtmosphere{}.config(r.names, bins)
	cfg.KTables = r.kts
	if r.kmod, err = forward.NewModel(cfg); err != nil {
		t.Fatal(err)
	}
	return r
}

// spectra returns the resolved and k-table depths (ppm) at vmr.
func (r *kResult) spectra(t testing.TB, vmr []float64, resolvingPower float64) (ref, kd []float64) {
	t.Helper()
	s := hotAtmosphere{}.state(r.ref, vmr)
	ref = make([]float64, r.ref.OutputLen())
	if err := r.ref.TransitResolved(ref, &s, r.srcs, forward.ResolvedOptions{R: resolvingPower}); err != nil {
		t.Fatal(err)
	}
	ks := hotAtmosphere{}.state(r.kmod, vmr)
	kd = make([]float64, r.kmod.OutputLen())
	if err := r.kmod.Transit(kd, &ks, r.kmod.NewWorkspace()); err != nil {
		t.Fatal(err)
	}
	for i := range ref {
		ref[i] *= 1e6
		kd[i] *= 1e6
	}
	return ref, kd
}

func maxRMS(a, b []float64) (mx, rms float64) {
	for i := range a {
		d := a[i] - b[i]
		mx = math.Max(mx, math.Abs(d))
		rms += d * d
	}
	return mx, math.Sqrt(rms / float64(len(a)))
}

var kCaseCache sync.Map

func cachedCase(t testing.TB, name string, c kCase) *kResult {
	if v, ok := kCaseCache.Load(name); ok {
		return v.(*kResult)
	}
	r := c.build(t)
	kCaseCache.Store(name, r)
	return r
}

// coarsen averages depths on R = 1000 bins into the R = 100 bins that
// hold ten each (box-car in wavelength: the mean over a union of bins is
// their width-weighted mean).
func coarsen(fine []float64, fb, cb forward.Bins) []float64 {
	out := make([]float64, cb.Len())
	for i := range out {
		s, w := 0.0, 0.0
		for j := range fine {
			if fb.Lo[j] >= cb.Lo[i]*(1-1e-12) && fb.Hi[j] <= cb.Hi[i]*(1+1e-12) {
				d := fb.Hi[j] - fb.Lo[j]
				s += d * fine[j]
				w += d
			}
		}
		out[i] = s / w
	}
	return out
}

func TestKAccuracySingleGas(t *testing.T) {
	if testing.Short() {
		t.Skip("line-by-line references take about a minute; skipped with -short")
	}
	cases := []struct {
		name       string
		lines      gasLines
		nuLo, nuHi float64
	}{
		{"CO 2000-2300 cm-1", linesCO, 2000, 2300},
		{"CH4 nu3 2850-3200 cm-1", linesCH4, 2850, 3200},
		// The 15 um band's full width (670-760 cm^-1) is in the
		// documented command of the README; the test takes its R branch
		// and hot bands near the Q branch, 680-730 cm^-1.
		{"CO2 680-730 cm-1", linesCO2, 680, 730},
	}
	for _, c := range cases {
		if only := os.Getenv("CHORD_KCASE"); only != "" && !strings.Contains(c.name, only) {
			continue
		}
		fine := anchoredBins(t, c.nuLo, c.nuHi, 1000)
		coarse := anchoredBins(t, c.nuLo, c.nuHi, 100)
		r1000 := cachedCase(t, c.name+" 1000", kCase{lines: []gasLines{c.lines}, nuLo: c.nuLo, nuHi: c.nuHi, binR: 1000})
		r100 := cachedCase(t, c.name+" 100", kCase{lines: []gasLines{c.lines}, nuLo: c.nuLo, nuHi: c.nuHi, binR: 100})
		// The R = 1000 tables merged into R = 100 bins (Leconte 2021).
		cfg := hotAtmosphere{}.config(r1000.names, coarse)
		cfg.KTables = r1000.kts
		merged, err := forward.NewModel(cfg)
		if err != nil {
			t.Fatal(err)
		}
		for _, vmr := range []float64{1e-3, 1e-5} {
			// One resolved spectrum on R = 1000 bins, averaged into the
			// R = 100 bins.
			ref, k1000 := r1000.spectra(t, []float64{vmr}, 1e6)
			ref100 := coarsen(ref, fine, coarse)
			k100 := kSpectrum(t, r100.kmod, vmr)
			km := kSpectrum(t, merged, vmr)
			for _, res := range []struct {
				what   string
				ref, k []float64
				limit  float64
			}{
				{"R = 100 bins", ref100, k100, 10},
				{"R = 1000 bins", ref, k1000, 30},
				// Merging costs accuracy (measured 3-10 ppm); the bound
				// is the R = 100 target plus that.
				{"R = 1000 tables merged into R = 100 bins", ref100, km, 15},
			} {
				mx, rms := maxRMS(res.k, res.ref)
				t.Logf("%s, %s (%d), VMR %g: k-table vs resolved max %.2f ppm, rms %.2f ppm", c.name, res.what, len(res.ref), vmr, mx, rms)
				if mx > res.limit {
					t.Errorf("%s, %s, VMR %g: max difference %.2f ppm, want at most %g", c.name, res.what, vmr, mx, res.limit)
				}
			}
		}
	}
}

// kSpectrum returns the depth (ppm) of a one-gas k model at vmr.
func kSpectrum(t testing.TB, m *forward.Model, vmr ...float64) []float64 {
	t.Helper()
	s := hotAtmosphere{}.state(m, vmr)
	out := make([]float64, m.OutputLen())
	if err := m.Transit(out, &s, m.NewWorkspace()); err != nil {
		t.Fatal(err)
	}
	for i := range out {
		out[i] *= 1e6
	}
	return out
}

// TestKAccuracyOverlap: several gases in the same bins, combined by each
// overlap method, against the resolved spectrum of their summed
// cross-sections (target 20 ppm for the default method).
func TestKAccuracyOverlap(t *testing.T) {
	if testing.Short() {
		t.Skip("line-by-line references; skipped with -short")
	}
	cases := []struct {
		name       string
		lines      []gasLines
		nuLo, nuHi float64
		vmrs       [][]float64
	}{
		{"H2O+CO 2000-2100 cm-1", []gasLines{linesH2O2000, linesCO}, 2000, 2100, [][]float64{{1e-3, 1e-3}, {1e-3, 1e-5}}},
		{"H2O+CO2+CO 6000-6400 cm-1", []gasLines{linesH2O6000, linesCO26000, linesCO6000}, 6000, 6400, [][]float64{{1e-3, 1e-3, 1e-3}, {1e-4, 1e-3, 1e-2}}},
	}
	for _, c := range cases {
		r := cachedCase(t, c.name, kCase{lines: c.lines, nuLo: c.nuLo, nuHi: c.nuHi, binR: 100})
		for _, vmr := range c.vmrs {
			ref, kd := r.spectra(t, vmr, 1e6)
			mx, rms := maxRMS(kd, ref)
			t.Logf("%s, VMR %v, overlap %s: max %.2f ppm, rms %.2f ppm", c.name, vmr, forward.OverlapProduct, mx, rms)
			if mx > 20 {
				t.Errorf("%s, VMR %v: max difference %.2f ppm, want at most 20", c.name, vmr, mx)
			}
			// The resort-rebin method, for the record: it is measured, not
			// bounded here (README, "Overlap of gases").
			cfg := hotAtmosphere{}.config(r.names, anchoredBins(t, c.nuLo, c.nuHi, 100))
			cfg.KTables, cfg.Overlap = r.kts, forward.OverlapResortRebin
			rr, err := forward.NewModel(cfg)
			if err != nil {
				t.Fatal(err)
			}
			mx, rms = maxRMS(kSpectrum(t, rr, vmr...), ref)
			t.Logf("%s, VMR %v, overlap %s: max %.2f ppm, rms %.2f ppm", c.name, vmr, forward.OverlapResortRebin, mx, rms)
		}
	}
}

// TestKResponse: the k path's response to pressure broadening (Lorentz
// widths scaled by 0.5 and 2) and to abundance (d depth / d log10 VMR)
// must follow the resolved spectrum's: within 10 % and 5 % of the
// reference's change.
func TestKResponse(t *testing.T) {
	if testing.Short() {
		t.Skip("line-by-line references; skipped with -short")
	}
	base := kCase{lines: []gasLines{linesCO}, nuLo: 2000, nuHi: 2300, binR: 100}
	r := cachedCase(t, "CO 2000-2300 cm-1 100", base)
	ref0, k0 := r.spectra(t, []float64{1e-4}, 1e6)
	for _, scale := range []float64{0.5, 2} {
		c := base
		c.lineSet.Broadening = lbl.Broadening{Name: fmt.Sprintf("air x %g", scale), Scale: scale}
		rs := c.build(t)
		ref, kd := rs.spectra(t, []float64{1e-4}, 1e6)
		worst := 0.0
		for i := range ref {
			dr, dk := ref[i]-ref0[i], kd[i]-k0[i]
			worst = math.Max(worst, math.Abs(dk-dr)/math.Max(math.Abs(dr), 1))
		}
		t.Logf("widths x %g: change of the k spectrum within %.1f %% of the resolved change", scale, 100*worst)
		if worst > 0.10 {
			t.Errorf("widths x %g: k-table change differs from the resolved change by %.1f %%, want at most 10 %%", scale, 100*worst)
		}
	}
	// Abundance: central differences over log10 VMR -4.1 .. -3.9.
	refLo, kLo := r.spectra(t, []float64{math.Pow(10, -4.1)}, 1e6)
	refHi, kHi := r.spectra(t, []float64{math.Pow(10, -3.9)}, 1e6)
	worst := 0.0
	for i := range refLo {
		dr, dk := (refHi[i]-refLo[i])/0.2, (kHi[i]-kLo[i])/0.2
		worst = math.Max(worst, math.Abs(dk-dr)/math.Abs(dr))
	}
	t.Logf("d depth / d log10 VMR of the k spectrum within %.2f %% of the resolved one", 100*worst)
	if worst > 0.05 {
		t.Errorf("abundance response differs by %.2f %%, want at most 5 %%", 100*worst)
	}
}

// TestResolvedConvergence: the resolved reference is converged in its grid
// (R = 1e6 against 2e6 within 0.1 ppm), on the CO band head region.
func TestResolvedConvergence(t *testing.T) {
	if testing.Short() {
		t.Skip("line-by-line references; skipped with -short")
	}
	r := cachedCase(t, "CO 2150-2250 cm-1 100", kCase{lines: []gasLines{linesCO}, nuLo: 2150, nuHi: 2250, binR: 100})
	a, _ := r.spectra(t, []float64{1e-3}, 1e6)
	b, _ := r.spectra(t, []float64{1e-3}, 2e6)
	mx, _ := maxRMS(a, b)
	t.Logf("resolved mode, R = 1e6 against 2e6: max %.4f ppm", mx)
	if mx > 0.1 {
		t.Errorf("resolved mode not converged: R = 1e6 and 2e6 differ by %.4f ppm, want at most 0.1", mx)
	}
}
