package build_test

import (
	"encoding/json"
	"fmt"
	"math"
	"path/filepath"
	"testing"

	"chord/forward"
	"chord/forward/opacity"
	"chord/forward/opacity/hitran"
	"chord/forward/opacity/lbl"
	"chord/internal/testenv"
)

// The weak-line treatment (lbl.LineSettings.WeakCut: lines below a
// fraction of the strongest line near them moved into a pseudo-continuum)
// checked in transmission as forward/kaccuracy_test.go checks the
// k-tables: the hot hydrogen atmosphere of the k-table issue (1000 K
// isothermal, H2+He with He/H2 0.17, g = 4.3 m/s^2 and 1.27 Jupiter radii
// at 10 bar around a 0.92 solar-radius star, 1e-6 to 10 bar in 80 layers,
// no clouds, no CIA), R = 100 bins on the anchored grid exp(k/100) um,
// the gas at VMR 1e-3 and 1e-5. The reference is the k-table built from
// every line; the target (issue 18) is 2 ppm. Measured (max over the
// bins, VMR 1e-3 / 1e-5): CO2 fragment 1.9 / 0.05 ppm at a cut of 1e-2,
// 0.42 / 0.27 at 1e-3, 0.065 / 0.056 at 1e-4 (10, 15, 23 % of line
// evaluations profiled); CH4 17.7 / 6.3, 3.0 / 0.94, 0.092 / 0.040 ppm
// (79, 90, 96 % profiled: these files hold strong lines only).

func hotConfig(gas string, lo, hi []float64, kt *opacity.KTable) (*forward.Model, error) {
	edges := append(append([]float64(nil), lo...), hi[len(hi)-1])
	bins, err := forward.BinsFromEdges(edges)
	if err != nil {
		return nil, err
	}
	return forward.NewModel(forward.Config{
		TopPressure: 1e-6 * forward.Bar, BottomPressure: 10 * forward.Bar, Layers: 80,
		RefPressure: 10 * forward.Bar, Fill: forward.FillH2He, Gases: []string{gas}, Bins: &bins,
		KTables: []*opacity.KTable{kt},
	})
}

func hotDepth(t *testing.T, m *forward.Model, vmr float64) []float64 {
	t.Helper()
	s := m.DefaultState()
	s.VMR[0] = vmr
	s.HeH2 = 0.17
	s.Profile = &forward.Isothermal{T: 1000}
	s.RefRadius = 1.27 * forward.JupiterRadius
	s.Mass = 4.3 * s.RefRadius * s.RefRadius / forward.Gravitation
	s.StarRadius = 0.92 * forward.SolarRadius
	out := make([]float64, m.OutputLen())
	if err := m.Transit(out, &s, m.NewWorkspace()); err != nil {
		t.Fatal(err)
	}
	for i := range out {
		out[i] *= 1e6
	}
	return out
}

// hotLog10P is chord's default k-table pressure axis cut to 1e-6-10 bar
// with a point to spare either side, thinned to 2 points per decade: the
// tables compared share it, so their difference is that of the lines'
// treatment.
func hotLog10P() []float64 {
	var out []float64
	for i, v := range opacity.DefaultKLog10P() {
		if v >= -1-1.0/6-1e-9 && v <= 6+1.0/6+1e-9 && i%3 == 0 {
			out = append(out, v)
		}
	}
	return out
}

// readHot reads line files of shared data with molparam and the given
// TIPS-2021 partition files.
func readHot(t *testing.T, files []string, q map[lbl.IsoKey]string, nuLo, nuHi float64) ([]lbl.Line, lbl.IsoData) {
	part := testenv.SharedData(t, "partition")
	dir := testenv.SharedData(t, "hitran-lines")
	iso, err := hitran.ReadMolParam(filepath.Join(part, "molparam_hitran.txt"))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := hitran.ReadTIPSTable(filepath.Join(part, "parsum2011_tips.dat"), iso); err != nil {
		t.Fatal(err)
	}
	for k, f := range q {
		p, err := hitran.ReadPartition(filepath.Join(part, f))
		if err != nil {
			t.Fatal(err)
		}
		iso[k].Q, iso[k].QSource = p.Q, p.Source
	}
	var lists [][]lbl.Line
	for _, f := range files {
		l, err := hitran.ReadLineFile(filepath.Join(dir, f), hitran.LineFilter{NuMin: nuLo - 25, NuMax: nuHi + 25})
		if err != nil {
			t.Fatal(err)
		}
		lists = append(lists, l)
	}
	return lbl.MergeLines(lists...), iso
}

// profiledShare says from a k-table's build settings how many line
// evaluations were profiled and how many binned.
func profiledShare(t *testing.T, k *opacity.KTable) string {
	var bs struct {
		P int64 `json:"line_evaluations_profiled"`
		B int64 `json:"line_evaluations_binned"`
	}
	if err := json.Unmarshal([]byte(k.Meta[opacity.MetaBuildSettings]), &bs); err != nil {
		t.Fatal(err)
	}
	return fmt.Sprintf("%.1f %% of %d line evaluations profiled", 100*float64(bs.P)/float64(bs.P+bs.B), bs.P+bs.B)
}

func TestWeakLinesAccuracy(t *testing.T) {
	if testing.Short() {
		t.Skip("builds k-tables of two bands twice (about 20 s); skipped with -short")
	}
	for _, c := range []struct {
		name       string
		gas        string
		files      []string
		q          map[lbl.IsoKey]string
		nuLo, nuHi float64
	}{
		{"CO2 CDSD-HITEMP fragment", "CO2", []string{"CO2_cdsd-hitemp_2283.7-2285.1_radis.txt"},
			map[lbl.IsoKey]string{{Mol: 2, Iso: 1}: "q7_CO2_626_tips2021_hapi.txt", {Mol: 2, Iso: 2}: "q8_CO2_636_tips2021_hapi.txt", {Mol: 2, Iso: 3}: "q9_CO2_628_tips2021_hapi.txt"},
			2270, 2305},
		{"CH4 nu3 and hot bands", "CH4", []string{"CH4_nu3_band_0000A1-0010F2_hapi.par",
			"CH4_band_0_0_0_1_1F2_to_0_0_1_1_1F1_hapi.par", "CH4_band_0_0_0_1_1F2_to_0_0_1_1_1F2_hapi.par",
			"CH4_band_0_0_0_1_1F2_to_0_0_1_1_1E_hapi.par", "CH4_band_0_0_0_1_1F2_to_0_0_1_1_1A1_hapi.par",
			"CH4_band_0_1_0_0_1E_to_0_1_1_0_1F1_hapi.par", "CH4_band_0_1_0_0_1E_to_0_1_1_0_1F2_hapi.par"},
			map[lbl.IsoKey]string{{Mol: 6, Iso: 1}: "q32_CH4_211_tips2021_hapi.txt"}, 2850, 3200},
	} {
		lines, iso := readHot(t, c.files, c.q, c.nuLo, c.nuHi)
		lo, hi := opacity.AnchoredBins(1e4/c.nuHi, 1e4/c.nuLo, 100)
		s := lbl.KSettings{Gas: c.gas, Log10P: hotLog10P(), T: []float64{1000}, Lo: lo, Hi: hi,
			Lines: lbl.LineSettings{Mixture: lbl.H2HeMixture(0.17)}}
		all, err := lbl.BuildK(lines, iso, &s)
		if err != nil {
			t.Fatal(err)
		}
		mAll, err := hotConfig(c.gas, lo, hi, all)
		if err != nil {
			t.Fatal(err)
		}
		for _, c2 := range []struct{ cut, widths float64 }{{lbl.DefaultWeakCut, 0}, {lbl.DefaultWeakCut, 5000}} {
			cut := c2.cut
			s.Lines.WeakCut, s.Lines.WingWidths = cut, c2.widths
			weak, err := lbl.BuildK(lines, iso, &s)
			if err != nil {
				t.Fatal(err)
			}
			mWeak, err := hotConfig(c.gas, lo, hi, weak)
			if err != nil {
				t.Fatal(err)
			}
			for _, vmr := range []float64{1e-3, 1e-5} {
				a, b := hotDepth(t, mAll, vmr), hotDepth(t, mWeak, vmr)
				mx := 0.0
				for i := range a {
					mx = math.Max(mx, math.Abs(a[i]-b[i]))
				}
				t.Logf("%s (%d lines), weak cut %g, wing cut-off min(25 cm-1, %g half-widths), VMR %g: %s; max difference %.3f ppm over %d bins",
					c.name, len(lines), cut, c2.widths, vmr, profiledShare(t, weak), mx, len(a))
				if mx > 2 {
					t.Errorf("%s, VMR %g, wing widths %g: weak lines in a pseudo-continuum change the depth by %.3f ppm, want at most 2", c.name, vmr, c2.widths, mx)
				}
			}
		}
	}
}
