package hitran_test

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"chord/forward/opacity"
	"chord/forward/opacity/hitran"
	"chord/forward/opacity/lbl"
	"chord/internal/testenv"
)

// findLine returns the line at wavenumber nu (to 1e-6 cm^-1).
func findLine(t *testing.T, ls []lbl.Line, nu float64) *lbl.Line {
	t.Helper()
	for i := range ls {
		if math.Abs(ls[i].Nu-nu) < 1e-6 {
			return &ls[i]
		}
	}
	t.Fatalf("no line at %g cm^-1", nu)
	return nil
}

// TestPlanetaryBroadening reads HITRAN's planetary-broadening files for
// CO (../shared/data/broadening; SOURCES.md gives the field order, the
// counts and the spot values): the 160-character records equal those of
// the plain sample, the 18 fields land on He, H2 and CO2, and the H2 and
// He shift files, read with their field names and merged, add delta_H2
// and delta_He to the same lines.
func TestPlanetaryBroadening(t *testing.T) {
	dir := testenv.SharedData(t, "broadening")
	lines := testenv.SharedData(t, "hitran-lines")
	wide, err := hitran.ReadLineFile(filepath.Join(dir, "CO_sample_hit20_H2-He-CO2-broadening_planetary-broadeners.txt"), hitran.LineFilter{})
	if err != nil {
		t.Fatal(err)
	}
	plain, err := hitran.ReadLineFile(filepath.Join(lines, "CO_sample_hit20_planetary-broadeners.par"), hitran.LineFilter{})
	if err != nil {
		t.Fatal(err)
	}
	if len(wide) != 5381 || len(plain) != 5381 {
		t.Fatalf("%d and %d lines, SOURCES.md says 5381", len(wide), len(plain))
	}
	lo := [3]float32{1, 1, 1}
	hi := [3]float32{}
	for i := range wide {
		a := wide[i]
		a.Broad = plain[i].Broad
		if a != plain[i] {
			t.Fatalf("line %d: record fields differ from the plain sample: %+v vs %+v", i+1, wide[i], plain[i])
		}
		for j, b := range []lbl.Broadener{lbl.He, lbl.H2, lbl.CO2} {
			p := wide[i].Broad[b]
			if p.Has != lbl.HasGamma|lbl.HasN {
				t.Fatalf("line %d: %s parameters flags %b", i+1, b, p.Has)
			}
			lo[j], hi[j] = min(lo[j], p.Gamma), max(hi[j], p.Gamma)
		}
	}
	// Ranges of gamma_He, gamma_H2, gamma_CO2 from SOURCES.md.
	want := [3][2]float32{{0.0448, 0.0489}, {0.0624, 0.0755}, {0.0314, 0.1076}}
	for j := range want {
		if lo[j] != want[j][0] || hi[j] != want[j][1] {
			t.Errorf("broadener %d: gamma %g-%g, SOURCES.md says %g-%g", j, lo[j], hi[j], want[j][0], want[j][1])
		}
	}
	// Spot values at 3.401910 cm^-1 (SOURCES.md).
	l := findLine(t, wide, 3.40191)
	got := []float32{l.Broad[lbl.He].Gamma, l.Broad[lbl.He].N, l.Broad[lbl.H2].Gamma, l.Broad[lbl.H2].N, l.Broad[lbl.CO2].Gamma, l.Broad[lbl.CO2].N}
	if !slices.Equal(got, []float32{0.0489, 0.5143, 0.0755, 0.6634, 0.1076, 0.6983}) {
		t.Errorf("spot line: %v", got)
	}
	h2s, err := hitran.ReadLineFileFields(filepath.Join(dir, "CO_sample_hit20_H2-shifts_planetary-broadeners.txt"), hitran.LineFilter{}, []string{"delta_H2", "err", "ref"})
	if err != nil {
		t.Fatal(err)
	}
	hes, err := hitran.ReadLineFileFields(filepath.Join(dir, "CO_sample_hit20_He-shifts_planetary-broadeners.txt"), hitran.LineFilter{}, []string{"delta_He", "err", "ref"})
	if err != nil {
		t.Fatal(err)
	}
	merged := lbl.MergeLines(wide, h2s, hes)
	if len(merged) != 5381 {
		t.Fatalf("merged list has %d lines, want the 5381 of each file", len(merged))
	}
	dLo, dHi := float32(1), float32(-1)
	for _, m := range merged {
		if m.Broad[lbl.H2].Has != lbl.HasGamma|lbl.HasN|lbl.HasDelta || m.Broad[lbl.He].Has&lbl.HasDelta == 0 {
			t.Fatalf("merged line at %g lacks parameters: %+v", m.Nu, m.Broad)
		}
		dLo, dHi = min(dLo, m.Broad[lbl.H2].Delta), max(dHi, m.Broad[lbl.H2].Delta)
	}
	if dLo != -0.015531 || dHi != 0.000394 {
		t.Errorf("delta_H2 %g to %g, SOURCES.md says -0.015531 to 0.000394", dLo, dHi)
	}
	// A 3-field file without names is refused, naming the way out.
	if _, err := hitran.ReadLineFile(filepath.Join(dir, "CO_sample_hit20_H2-shifts_planetary-broadeners.txt"), hitran.LineFilter{}); err == nil ||
		!strings.Contains(err.Error(), ":1: 3 comma-separated fields after the record; name them") {
		t.Errorf("unnamed shift fields: %v", err)
	}
}

// TestMixtureWidthOneLine: the Lorentz half-width of CO's R(0) line of
// the fundamental (2147.081134 cm^-1; planetary-broadening fields gamma_H2
// 0.0755, n_H2 0.6634, gamma_He 0.0489, n_He 0.5143, delta_H2 -0.001833,
// delta_He 0.000158 cm^-1/atm) in an H2 0.85 / He 0.15 background at 1
// atm, against the hand calculation from those fields:
//
//	296 K:  0.85 x 0.0755 + 0.15 x 0.0489 = 0.07151 cm^-1
//	1000 K: 0.85 x 0.0755 x 0.296^0.6634 + 0.15 x 0.0489 x 0.296^0.5143
//	        = 0.0286168 + 0.0039218 = 0.0325386 cm^-1
//	shift:  0.85 x (-0.001833) + 0.15 x 0.000158 = -0.00153435 cm^-1
//
// (its air width, 0.0803 x 0.296^0.76 = 0.0318344 cm^-1 at 1000 K, is
// what a build without the mixture uses). Without the He parameters the
// He share falls back to the air values, as the fallback states.
func TestMixtureWidthOneLine(t *testing.T) {
	dir := testenv.SharedData(t, "broadening")
	wide, err := hitran.ReadLineFile(filepath.Join(dir, "CO_sample_hit20_H2-He-CO2-broadening_planetary-broadeners.txt"), hitran.LineFilter{NuMin: 2147, NuMax: 2148})
	if err != nil {
		t.Fatal(err)
	}
	h2s, err := hitran.ReadLineFileFields(filepath.Join(dir, "CO_sample_hit20_H2-shifts_planetary-broadeners.txt"), hitran.LineFilter{NuMin: 2147, NuMax: 2148}, []string{"delta_H2", "err", "ref"})
	if err != nil {
		t.Fatal(err)
	}
	hes, err := hitran.ReadLineFileFields(filepath.Join(dir, "CO_sample_hit20_He-shifts_planetary-broadeners.txt"), hitran.LineFilter{NuMin: 2147, NuMax: 2148}, []string{"delta_He", "err", "ref"})
	if err != nil {
		t.Fatal(err)
	}
	l := findLine(t, lbl.MergeLines(wide, h2s, hes), 2147.081134)
	mix := lbl.Mixture{{Gas: "H2", Fraction: 0.85}, {Gas: "He", Fraction: 0.15}}
	for _, c := range []struct{ t, gamma, shift float64 }{{296, 0.07151, -0.00153435}, {1000, 0.0325386, -0.00153435}} {
		g, d, err := lbl.LorentzWidth(l, mix, lbl.Broadening{}, 0, 1, c.t)
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("CO R(0) at %g K, 1 atm, H2 0.85 / He 0.15: gamma_L %.7f cm^-1 (hand %.7f), shift %.8f cm^-1 (hand %.8f)", c.t, g, c.gamma, d, c.shift)
		if math.Abs(g/c.gamma-1) > 2e-6 || math.Abs(d-c.shift) > 1e-9 {
			t.Errorf("%g K: gamma %.8g, shift %.8g; hand calculation %.8g, %.8g", c.t, g, d, c.gamma, c.shift)
		}
	}
	if g, _, _ := lbl.LorentzWidth(l, nil, lbl.Broadening{}, 0, 1, 1000); math.Abs(g/0.0318344-1) > 1e-5 {
		t.Errorf("air width at 1000 K %.7g, hand 0.0318344", g)
	}
	noHe := *l
	noHe.Broad[lbl.He] = lbl.BroadParams{}
	g, _, _ := lbl.LorentzWidth(&noHe, mix, lbl.Broadening{}, 0, 1, 1000)
	if want := 0.0286168 + 0.15*0.0318344; math.Abs(g/want-1) > 1e-5 {
		t.Errorf("He fallback: gamma %.7g, want %.7g (the H2 share plus 0.15 x the air width)", g, want)
	}
}

// TestH2BroadenedBand: the CO fundamental in the planetary-broadening
// sample, at 1 atm and 1000 K, with the H2/He widths (85/15) against the
// air widths. Over the band's strong lines the mixture's widths are
// larger than air's (checked from the file's own numbers), so the
// expected direction (fact of the trade: a Lorentz line's peak falls as
// 1/gamma and its far wing rises as gamma) is lower peaks and higher
// absorption half-way between lines.
func TestH2BroadenedBand(t *testing.T) {
	dir := testenv.SharedData(t, "broadening")
	part := testenv.SharedData(t, "partition")
	lines, err := hitran.ReadLineFile(filepath.Join(dir, "CO_sample_hit20_H2-He-CO2-broadening_planetary-broadeners.txt"), hitran.LineFilter{NuMin: 2050, NuMax: 2250, Iso: []int{1}})
	if err != nil {
		t.Fatal(err)
	}
	iso, err := hitran.ReadMolParam(filepath.Join(part, "molparam_hitran.txt"))
	if err != nil {
		t.Fatal(err)
	}
	p, err := hitran.ReadPartition(filepath.Join(part, "q26_CO_26_tips2021_hapi.txt"))
	if err != nil {
		t.Fatal(err)
	}
	iso[p.Iso].Q = p.Q
	mix := lbl.H2HeMixture(0.15 / 0.85)
	var strong []lbl.Line
	ratio := 0.0
	for _, l := range lines {
		if l.S > 1e-21 {
			strong = append(strong, l)
			g, _, _ := lbl.LorentzWidth(&l, mix, lbl.Broadening{}, 0, 1, 1000)
			a, _, _ := lbl.LorentzWidth(&l, nil, lbl.Broadening{}, 0, 1, 1000)
			ratio += g / a
		}
	}
	ratio /= float64(len(strong))
	if len(strong) < 40 || !(ratio > 1) {
		t.Fatalf("%d strong lines, mean width ratio H2/He : air %.3f; the test needs a band whose mixture widths are larger", len(strong), ratio)
	}
	sigma := func(m lbl.Mixture, nu float64) float64 {
		ls, err := lbl.NewLineSet("CO", lines, iso, lbl.LineSettings{Mixture: m})
		if err != nil {
			t.Fatal(err)
		}
		g := opacity.LnGrid{Nu0: nu, R: 1e7}
		v := []float64{0}
		ls.CrossSections(v, g, 0, lbl.StandardAtmosphere, 1000)
		return v[0]
	}
	var peakLower, gapHigher, n int
	for i := 1; i < len(strong); i++ {
		a, b := strong[i-1], strong[i]
		if b.Nu-a.Nu < 2 {
			continue
		}
		n++
		if sigma(mix, b.Nu) < sigma(nil, b.Nu) {
			peakLower++
		}
		if mid := (a.Nu + b.Nu) / 2; sigma(mix, mid) > sigma(nil, mid) {
			gapHigher++
		}
	}
	t.Logf("mean Lorentz width ratio H2/He : air %.3f over %d strong lines; peaks lower at %d of %d, gaps higher at %d of %d", ratio, len(strong), peakLower, n, gapHigher, n)
	if peakLower < n*9/10 || gapHigher < n*9/10 {
		t.Errorf("peaks lower at %d of %d lines, gaps higher at %d of %d; want at least 90 %% each", peakLower, n, gapHigher, n)
	}
}

// TestNamedColumns reads HITRANonline-style tables whose header names the
// columns (tab- and comma-separated, "#" for a missing value), and refuses
// bad headers and rows with the file, line and column.
func TestNamedColumns(t *testing.T) {
	dir := t.TempDir()
	header := []string{"molec_id", "local_iso_id", "nu", "sw", "a", "gamma_air", "gamma_self", "elower", "n_air", "delta_air", "gamma_H2", "n_H2", "delta_H2", "gamma_He", "n_He", "gp", "gpp", "extra"}
	rows := [][]string{
		{"5", "1", "2147.081134", "9.290E-20", "11.71", "0.0803", "0.087", "0.0", "0.76", "-0.0021", "0.0755", "0.6634", "-0.001833", "0.0489", "0.5143", "3", "1", "x"},
		{"5", "2", "2100.5", "1e-21", "#", "0.07", "0.08", "100", "0.7", "0", "#", "#", "#", "0.05", "0.5", "#", "#", "y"},
	}
	for _, sep := range []string{"\t", ","} {
		var b strings.Builder
		b.WriteString(strings.Join(header, sep) + "\n")
		for _, r := range rows {
			b.WriteString(strings.Join(r, sep) + "\r\n")
		}
		p := filepath.Join(dir, fmt.Sprintf("t%d.txt", len(sep)))
		if err := os.WriteFile(p, []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
		ls, err := hitran.ReadLineFile(p, hitran.LineFilter{})
		if err != nil {
			t.Fatal(err)
		}
		want0 := lbl.Line{Mol: 5, Iso: 1, Nu: 2147.081134, S: 9.29e-20, A: 11.71, GammaAir: 0.0803, GammaSelf: 0.087, NAir: 0.76, DeltaAir: -0.0021, GUpper: 3, GLower: 1}
		want0.Broad[lbl.H2] = lbl.BroadParams{Gamma: 0.0755, N: 0.6634, Delta: -0.001833, Has: lbl.HasGamma | lbl.HasN | lbl.HasDelta}
		want0.Broad[lbl.He] = lbl.BroadParams{Gamma: 0.0489, N: 0.5143, Has: lbl.HasGamma | lbl.HasN}
		want1 := lbl.Line{Mol: 5, Iso: 2, Nu: 2100.5, S: 1e-21, GammaAir: 0.07, GammaSelf: 0.08, Elower: 100, NAir: 0.7}
		want1.Broad[lbl.He] = lbl.BroadParams{Gamma: 0.05, N: 0.5, Has: lbl.HasGamma | lbl.HasN}
		if len(ls) != 2 || ls[0] != want0 || ls[1] != want1 {
			t.Errorf("separator %q: got %+v", sep, ls)
		}
	}
	for _, c := range []struct{ body, want string }{
		{"molec_id,nu,sw,elower,gamma_air,n_air,gamma_Ar\n", "unknown broadener \"Ar\""},
		{"molec_id,nu,sw,elower,gamma_air\n5,2000,1e-20,0,0.07\n", "no \"n_air\" column"},
		{"molec_id,nu,sw,elower,gamma_air,n_air\n5,2000,1e-20,#,0.07,0.7\n", "bad.txt:2: column 4 (elower) is blank"},
		{"molec_id,nu,sw,elower,gamma_air,n_air\n5,2000,1e-20,0,0.07\n", "bad.txt:2: 5 fields, the header names 6"},
		{"molec_id,nu,nu,elower\n", "named twice"},
		{"a,b,c\n1,2,3\n", "does not name HITRAN's columns"},
	} {
		p := filepath.Join(dir, "bad.txt")
		if err := os.WriteFile(p, []byte(c.body), 0o644); err != nil {
			t.Fatal(err)
		}
		if _, err := hitran.ReadLineFile(p, hitran.LineFilter{}); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%q: error %v, want %q", c.body, err, c.want)
		}
	}
}

// TestCDSDRecords reads the 127-character CDSD-HITEMP fragment
// (SOURCES.md: 4096 lines, 2284/535/1277 of isotopologues 1/2/3,
// 2283.70012-2285.09336 cm^-1) and its first record's fields.
func TestCDSDRecords(t *testing.T) {
	p := filepath.Join(testenv.SharedData(t, "hitran-lines"), "CO2_cdsd-hitemp_2283.7-2285.1_radis.txt")
	ls, err := hitran.ReadLineFile(p, hitran.LineFilter{})
	if err != nil {
		t.Fatal(err)
	}
	count := map[int]int{}
	for _, l := range ls {
		count[l.Iso]++
	}
	if len(ls) != 4096 || count[1] != 2284 || count[2] != 535 || count[3] != 1277 || ls[0].Nu != 2283.70012 || ls[len(ls)-1].Nu != 2285.09336 {
		t.Errorf("%d lines %v, %g-%g cm^-1", len(ls), count, ls[0].Nu, ls[len(ls)-1].Nu)
	}
	// " 23 2283.700120 4.517E-46 4.817E+02.0528.064812620.34940.59-.005067 ..."
	want := lbl.Line{Mol: 2, Iso: 3, Nu: 2283.70012, S: 4.517e-46, A: 481.7, GammaAir: 0.0528, GammaSelf: 0.0648, Elower: 12620.3494, NAir: 0.59, DeltaAir: -0.005067}
	if ls[0] != want {
		t.Errorf("first record %+v, want %+v", ls[0], want)
	}
	// A HITRAN record in a CDSD file is refused.
	b, _ := os.ReadFile(p)
	bad := filepath.Join(t.TempDir(), "mixed.txt")
	os.WriteFile(bad, append(b[:128:128], []byte(co2Record+"\n")...), 0o644)
	if _, err := hitran.ReadLineFile(bad, hitran.LineFilter{}); err == nil || !strings.Contains(err.Error(), "mixed.txt:2: record has 160 characters") {
		t.Errorf("mixed layouts: %v", err)
	}
}
