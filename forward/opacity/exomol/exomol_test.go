package exomol

import (
	"bytes"
	"compress/bzip2"
	"math"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"testing"

	"chord/forward/opacity/hitran"
	"chord/forward/opacity/internal/opacitytest"
	"chord/forward/opacity/lbl"
	"chord/internal/testenv"
)

var (
	exomolCOOnce sync.Once
	exomolCOList *List
	exomolCOErr  error
)

// exomolCO returns the ExoMol CO line list (Li et al. 2015, ApJS 216, 15)
// from ../shared/data, read once per test binary and labelled as HITRAN CO
// isotopologue 1, unweighted (abundance 1).
func exomolCO(t *testing.T) *List {
	t.Helper()
	def := filepath.Join(testenv.SharedData(t, "exomol"), "12C-16O__Li2015.def")
	exomolCOOnce.Do(func() { exomolCOList, exomolCOErr = Read(def, Options{Mol: 5, Iso: 1}) })
	if exomolCOErr != nil {
		t.Fatal(exomolCOErr)
	}
	return exomolCOList
}

// weighted returns the lines in [lo, hi] cm^-1 with S >= sMin after
// multiplying S by the abundance a, as HITRAN weights its intensities.
func weighted(lines []lbl.Line, a, lo, hi, sMin float64) []lbl.Line {
	var out []lbl.Line
	for _, l := range lines {
		l.S *= a
		if l.Nu >= lo && l.Nu <= hi && l.S >= sMin {
			out = append(out, l)
		}
	}
	return out
}

// TestExoMolCORead checks the reader on the ExoMol CO files: counts as in
// SOURCES.md (6383 states, 125,496 transitions), and the partition function
// summed from the states against HITRAN's Q(296 K) for 12C16O in the
// molparam table (107.12; TIPS, Gamache et al. 2017). The two are
// independent computations whose stated accuracy is better than 1 %.
func TestExoMolCORead(t *testing.T) {
	l := exomolCO(t)
	if len(l.States.ID) != 6383 || len(l.Lines) != 125496 {
		t.Fatalf("read %d states and %d transitions, want 6383 and 125496", len(l.States.ID), len(l.Lines))
	}
	if l.Def.MassDa != 27.9949 || l.Def.Gamma != 0.07 || l.Def.N != 0.5 || l.Def.IsoSlug != "12C-16O" || l.Def.MaxTemp != 9000 {
		t.Errorf("def: %+v", l.Def)
	}
	for formula, want := range map[string]string{"(12C)(16O)": "CO", "(1H)2(16O)": "H2O", "(12C)(1H)4": "CH4", "(40Ca)(1H)": "CaH", "": ""} {
		if got := (&Def{IsoFormula: formula}).Molecule(); got != want {
			t.Errorf("Molecule of %q = %q, want %q", formula, got, want)
		}
	}
	iso := opacitytest.IsoData(t)[lbl.IsoKey{Mol: 5, Iso: 1}]
	if math.Abs(l.Q296/iso.Q296-1) > 0.01 {
		t.Errorf("Q(296 K) summed from the states = %g, HITRAN molparam %g: differ by more than 1 %%", l.Q296, iso.Q296)
	}
	// Check of the sum at 1 K, where only the three lowest states count
	// (the fourth, J = 3 at 23.07 cm^-1, adds 7e-14): state 1 (E = 0,
	// g = 1), 43 (J = 1, E = 3.845 cm^-1, g = 3) and 85 (J = 2,
	// E = 11.535 cm^-1, g = 5).
	if q, want := l.States.Q(1), 1+3*math.Exp(-lbl.C2*3.845)+5*math.Exp(-lbl.C2*11.535); math.Abs(q-want) > 1e-12 {
		t.Errorf("Q(1 K) = %.15g, want %.15g", q, want)
	}
}

// TestExoMolLineIntensity works one line by hand: the CO 1-0 R(5) line,
// states 254 -> 211 of the Li2015 list: A = 17.00 s^-1, nu = 2165.601028
// cm^-1, g' = 13, E” = 57.6704 cm^-1, Q(296) = 107.4205 (summed from the
// states). With c2 = 1.438776877 cm K and c = 2.99792458e10 cm/s:
//
//	g' A / (8 pi c nu^2)    = 6.254244e-17 cm
//	exp(-c2 E''/296)        = 0.7555416
//	1 - exp(-c2 nu/296)     = 0.9999732
//	S = product / Q(296)    = 4.398802e-19 cm^-1/(molecule cm^-2)
//
// (Simeckova et al. 2006, JQSRT 98, 130, eq. 20.) Weighted by HITRAN's
// abundance 0.986544 that is 4.3396e-19, against 4.249e-19 in HITRAN2012:
// 2.1 % apart, within HITRAN's stated intensity uncertainty for the line
// (error code 6: 2-5 %).
func TestExoMolLineIntensity(t *testing.T) {
	var sel []lbl.Line
	for _, x := range exomolCO(t).Lines {
		if x.Nu >= 2165.60 && x.Nu <= 2165.61 {
			sel = append(sel, x)
		}
	}
	if len(sel) != 1 {
		t.Fatalf("%d lines in 2165.60-2165.61 cm^-1, want 1", len(sel))
	}
	got := sel[0]
	if math.Abs(got.S/4.398802e-19-1) > 1e-6 || got.GUpper != 13 || got.GLower != 11 || got.Elower != 57.6704 || got.A != 17 {
		t.Errorf("line: %+v, want S = 4.398802e-19 (1e-6), g' 13, g'' 11, E'' 57.6704, A 17", got)
	}
	// Broadening from the .def file: 0.07 cm^-1/bar = 0.0709275 cm^-1/atm, n = 0.5.
	if math.Abs(got.GammaAir-0.0709275) > 1e-9 || got.NAir != 0.5 {
		t.Errorf("broadening %g cm^-1/atm, n %g; want 0.0709275, 0.5", got.GammaAir, got.NAir)
	}
	// The same transition with abundance weighting and explicit broadening.
	st := exomolCO(t).States
	conv, err := NewConverter(exomolCO(t).Def, st, Options{Abundance: 0.986544, Gamma: 0.05, N: 0.7})
	if err != nil {
		t.Fatal(err)
	}
	up, _ := st.Index(254)
	lo, _ := st.Index(211)
	if g := conv.Line(up, lo, 17, 2165.601028); math.Abs(g.S/4.3396e-19-1) > 1e-4 || math.Abs(g.GammaAir-0.05*1.01325) > 1e-12 || g.NAir != 0.7 {
		t.Errorf("with abundance and broadening options: %+v", g)
	}
}

// TestExoMolVsHITRANLines matches the strong lines of two independent
// databases, HITRAN2012 CO (Rothman et al. 2013) and ExoMol Li2015: every
// HITRAN isotopologue-1 line with S > 1e-23 has an ExoMol line with the
// same lower-state energy within 2e-3 cm^-1 (HITRAN's position error code 4
// is 1e-4 to 1e-3 cm^-1; ExoMol's energies carry a similar uncertainty) and
// an intensity within 5 % (HITRAN's intensity error code 6 on these lines:
// 2-5 %).
func TestExoMolVsHITRANLines(t *testing.T) {
	ex := weighted(exomolCO(t).Lines, opacitytest.IsoData(t)[lbl.IsoKey{Mol: 5, Iso: 1}].Abundance, 0, math.Inf(1), 1e-25)
	sort.Slice(ex, func(i, j int) bool { return ex[i].Nu < ex[j].Nu })
	hit, err := hitran.ReadLineFile(filepath.Join(testenv.SharedData(t, "hitran-lines"), "05_hit12_CO_full.par"), hitran.LineFilter{Iso: []int{1}, SMin: 1e-23})
	if err != nil {
		t.Fatal(err)
	}
	if len(hit) < 200 {
		t.Fatalf("%d strong HITRAN lines, want the whole fundamental and overtone bands", len(hit))
	}
	for _, h := range hit {
		k := sort.Search(len(ex), func(i int) bool { return ex[i].Nu >= h.Nu-2e-3 })
		best := -1
		for ; k < len(ex) && ex[k].Nu <= h.Nu+2e-3; k++ {
			if math.Abs(ex[k].Elower-h.Elower) < 0.5 {
				best = k
			}
		}
		if best < 0 {
			t.Errorf("HITRAN line at %.6f cm^-1 (E'' %g): no ExoMol line within 2e-3 cm^-1", h.Nu, h.Elower)
			continue
		}
		if r := ex[best].S/h.S - 1; math.Abs(r) > 0.05 {
			t.Errorf("line at %.6f cm^-1: ExoMol S %.4g, HITRAN %.4g (%+.1f %%), want within 5 %%", h.Nu, ex[best].S, h.S, 100*r)
		}
	}
}

// TestExoMolVsHITRANCrossSection builds CO cross-sections at 296 K and
// 1 atm from both databases with the line-by-line engine and compares them.
// With the same broadening (the .def default, no pressure shift) the two
// must agree point by point within 5 % wherever sigma exceeds 1 % of its
// peak, the strong-line region of the fundamental: the difference is the
// databases' intensities (within 5 %, see TestExoMolVsHITRANLines),
// positions (1e-3 cm^-1 against 0.07 cm^-1 widths) and partition sums
// (0.3 %). With each database's own broadening the band-integrated
// cross-sections agree within 5 % (integration removes the widths; the
// 25 cm^-1 wing cut-off loses about 0.2 % of a 0.07 cm^-1 Lorentzian).
func TestExoMolVsHITRANCrossSection(t *testing.T) {
	isoData := opacitytest.IsoData(t)
	hit, err := hitran.ReadLineFile(filepath.Join(testenv.SharedData(t, "hitran-lines"), "05_hit12_CO_full.par"), hitran.LineFilter{Iso: []int{1}, NuMin: 1900, NuMax: 2400, SMin: 1e-27})
	if err != nil {
		t.Fatal(err)
	}
	list := exomolCO(t)
	a := isoData[lbl.IsoKey{Mol: 5, Iso: 1}].Abundance
	exIso := lbl.IsoData{lbl.IsoKey{Mol: 5, Iso: 1}: list.Isotopologue()}
	exIso[lbl.IsoKey{Mol: 5, Iso: 1}].Abundance = a

	var nu []float64 // 1950-2300 cm^-1 in 0.01 cm^-1 steps, m^-1
	for k := 0; k <= 35000; k++ {
		nu = append(nu, 100*(1950+0.01*float64(k)))
	}
	settings := func(gas string) *lbl.XSecSettings {
		return &lbl.XSecSettings{Gas: gas, Log10P: []float64{math.Log10(lbl.StandardAtmosphere)}, T: []float64{lbl.TRef}, Wavenumber: nu, NoPressureShift: true}
	}
	own, err := lbl.BuildXSec(hit, isoData, settings("CO"))
	if err != nil {
		t.Fatal(err)
	}
	same := append([]lbl.Line(nil), hit...)
	for i := range same {
		same[i].GammaAir, same[i].GammaSelf, same[i].NAir = 0.07*1.01325, 0.07*1.01325, 0.5
	}
	hs, err := lbl.BuildXSec(same, isoData, settings("CO"))
	if err != nil {
		t.Fatal(err)
	}
	ex, err := lbl.BuildXSec(weighted(list.Lines, a, 1900, 2400, 1e-27), exIso, settings("CO"))
	if err != nil {
		t.Fatal(err)
	}
	peak := float32(0)
	for _, v := range hs.Sigma {
		peak = max(peak, v)
	}
	n, worst := 0, 0.0
	for k, v := range hs.Sigma {
		if v < peak/100 {
			continue
		}
		n++
		if r := float64(ex.Sigma[k])/float64(v) - 1; math.Abs(r) > math.Abs(worst) {
			worst = r
		}
	}
	if n < 1000 || math.Abs(worst) > 0.05 {
		t.Errorf("same broadening: %d points above 1 %% of the peak, largest difference %+.2f %%; want >= 1000 points within 5 %%", n, 100*worst)
	}
	var iOwn, iEx float64
	for k := range nu {
		iOwn += float64(own.Sigma[k])
		iEx += float64(ex.Sigma[k])
	}
	if r := iEx/iOwn - 1; math.Abs(r) > 0.05 {
		t.Errorf("own broadening: band-integrated cross-sections differ by %+.2f %%, want within 5 %%", 100*r)
	}
}

// TestExoMolCaH reads the CaH list (Yadin et al. 2012), whose transitions
// file mixes 4-column rows and 5-column rows with an extra integer before
// the wavenumber (SOURCES.md): every row is read, with the wavenumber from
// the last column, which SOURCES.md reports equal to E' - E”.
func TestExoMolCaH(t *testing.T) {
	l, err := Read(filepath.Join(testenv.SharedData(t, "exomol"), "40Ca-1H__Yadin.def"), Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(l.States.ID) != 1892 || len(l.Lines) != 26980 {
		t.Fatalf("%d states, %d transitions; want 1892 and 26980 (as the .def says)", len(l.States.ID), len(l.Lines))
	}
	// Row 591 of the file: "627 575 1.0257e+00 1 100.198265".
	found := false
	for _, x := range l.Lines {
		if x.Nu == 100.198265 {
			found = true
			i, _ := l.States.Index(627)
			j, _ := l.States.Index(575)
			if d := l.States.E[i] - l.States.E[j]; math.Abs(d-x.Nu) > 1e-4 {
				t.Errorf("E' - E'' = %g, listed wavenumber %g", d, x.Nu)
			}
		}
	}
	if !found {
		t.Error("5-column row with wavenumber 100.198265 not read")
	}
}

const exomolTestDef = `EXOMOL.def    # ID
(1H)(2H)      # IsoFormula
1H-2H         # Iso-slug
Test          # Isotopologue dataset name
   3.0219 5.0e-27   # Isotopologue mass (Da) and (kg)
3             # No. of states in .states file
0.0500        # Default value of Lorentzian half-width for all lines (in cm-1/bar)
0.600         # Default value of temperature exponent for all lines
`

// exomolTestStatesBz2 is exomolTestStates compressed by bzip2 -9 (bzip2 1.0.8).
const exomolTestStatesBz2 = "\x42\x5a\x68\x39\x31\x41\x59\x26\x53\x59\x73\x1f\xb7\xcb\x00\x00\x1a\xd8\x00\x38\x90\x40\x01\x7a\x00\x20\x00\x54\x40\xd0\x34\x06\xd2\x29\xe9\xa6\x9a\x95\x63\x12\xc8\xc9\x40\x3a\x1f\xb7\xc5\xf3\xe6\xad\x19\x90\x2e\xb4\xb9\xa5\x6e\xf6\x66\x03\xb7\x8b\xb9\x22\x9c\x28\x48\x39\x8f\xdb\xe5\x80"

const exomolTestStates = `           1     0.000000      1       0
           2   100.000000      3       1
           3  2000.000000      5       2
`

// TestExoMolSmall reads a small hand-made list: the states' partition sum
// Q(T) = 1 + 3 exp(-100 c2/T) + 5 exp(-2000 c2/T), wavenumbers taken from
// the energies when the column is missing, and the line intensity formula.
func TestExoMolSmall(t *testing.T) {
	dir := t.TempDir()
	base := filepath.Join(dir, "1H-2H__Test")
	opacitytest.WriteFile(t, base+".def", exomolTestDef)
	opacitytest.WriteFile(t, base+".states", exomolTestStates)
	opacitytest.WriteFile(t, base+".trans", "3 1 2.0\n3 2 1.0 1900.0\n")
	l, err := Read(base+".def", Options{Mol: 0, Iso: 0})
	if err != nil {
		t.Fatal(err)
	}
	for _, T := range []float64{100, 296, 3000} {
		want := 1 + 3*math.Exp(-100*lbl.C2/T) + 5*math.Exp(-2000*lbl.C2/T)
		if q := l.States.Q(T); math.Abs(q/want-1) > 1e-14 {
			t.Errorf("Q(%g) = %.15g, want %.15g", T, q, want)
		}
	}
	if len(l.Lines) != 2 || l.Lines[0].Nu != 2000 || l.Lines[1].Nu != 1900 {
		t.Fatalf("lines %+v", l.Lines)
	}
	q := l.Q296
	for i, c := range []struct{ a, nu, el float64 }{{2, 2000, 0}, {1, 1900, 100}} {
		want := 5 * c.a / (8 * math.Pi * 2.99792458e10 * c.nu * c.nu) * math.Exp(-lbl.C2*c.el/296) * (1 - math.Exp(-lbl.C2*c.nu/296)) / q
		if got := l.Lines[i].S; math.Abs(got/want-1) > 1e-12 {
			t.Errorf("line %d: S = %g, want %g (Simeckova et al. 2006, eq. 20)", i, got, want)
		}
	}
	if g := l.Lines[0].GammaAir; math.Abs(g-0.05*1.01325) > 1e-15 || l.Lines[0].NAir != 0.6 {
		t.Errorf("broadening %g, %g: want the .def defaults 0.05 cm^-1/bar, 0.6", g, l.Lines[0].NAir)
	}
	iso := l.Isotopologue()
	if iso.Mass != 3.0219 || iso.Q296 != q || iso.Abundance != 1 {
		t.Errorf("isotopologue %+v", iso)
	}

	// Sparse state ids (looked up by search) and a last row without a
	// newline.
	sparse, err := ParseStates(strings.NewReader("2 0 1 0\n7 10 3 1\n40 50 5 2"), "sparse.states")
	if err != nil {
		t.Fatal(err)
	}
	sc, err := NewConverter(nil, sparse, Options{})
	if err != nil {
		t.Fatal(err)
	}
	var got []float64
	err = sc.ScanTrans(strings.NewReader("7 2 1.0\n40 7 1.0 40.0"), "sparse.trans", func(l lbl.Line) error {
		got = append(got, l.Nu, l.Elower)
		return nil
	})
	if err != nil || len(got) != 4 || got[0] != 10 || got[1] != 0 || got[2] != 40 || got[3] != 10 {
		t.Errorf("sparse ids: %v, %v; want nu 10 (E'' 0) and 40 (E'' 10)", got, err)
	}
	if _, ok := sparse.Index(3); ok {
		t.Error("state 3 found in a list without it")
	}

	// Split transitions files <base>__<range>.trans, bzip2-compressed states.
	dir2 := t.TempDir()
	base2 := filepath.Join(dir2, "1H-2H__Test")
	opacitytest.WriteFile(t, base2+".def", exomolTestDef)
	opacitytest.WriteFile(t, base2+".states.bz2", string(bz2Bytes(t)))
	opacitytest.WriteFile(t, base2+"__00000-01950.trans", "3 2 1.0 1900.0\n")
	opacitytest.WriteFile(t, base2+"__01950-02100.trans", "3 1 2.0\n")
	l2, err := Read(base2+".def", Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(l2.Lines) != 2 || len(l2.Files) != 4 || l2.Q296 != q {
		t.Errorf("split files: %d lines, files %v, Q296 %g", len(l2.Lines), l2.Files, l2.Q296)
	}
}

// bz2Bytes returns exomolTestStates compressed by bzip2 1.0.8
// ("bzip2 -9"; Go's library only decompresses), checking the fixture first.
func bz2Bytes(t *testing.T) []byte {
	t.Helper()
	b := []byte(exomolTestStatesBz2)
	r := bzip2.NewReader(bytes.NewReader(b))
	var out bytes.Buffer
	if _, err := out.ReadFrom(r); err != nil || out.String() != exomolTestStates {
		t.Fatalf("bzip2 test fixture does not decode to the test states (%v)", err)
	}
	return b
}

// TestExoMolBadInput checks that malformed input gives an error naming the
// file and line.
func TestExoMolBadInput(t *testing.T) {
	defs := []struct{ in, want string }{
		{"", "empty"},
		{"EXOMOL.def # ID\n", "no isotopologue mass"},
		{"nonsense\n", "d.def:1: no '#'"},
		{"EXOMOL.xyz # ID\n", "d.def:1: ID"},
		{"# IsoFormula\n", "not an ExoMol .def"},
		{"EXOMOL.def # ID\nabc # Isotopologue mass (Da) and (kg)\n", "d.def:2: isotopologue mass"},
		{"EXOMOL.def # ID\n1.0 # Isotopologue mass (Da) and (kg)\nx # Default value of Lorentzian half-width for all lines (in cm-1/bar)\n", "d.def:3: default Lorentzian"},
		{"EXOMOL.def # ID\n1.0 # Isotopologue mass (Da) and (kg)\n-3 # No. of states in .states file\n", "d.def:3: number of states"},
	}
	for i, c := range defs {
		_, err := ParseDef(strings.NewReader(c.in), "d.def")
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("def %d: error %v, want one containing %q", i, err, c.want)
		}
	}
	states := []struct{ in, want string }{
		{"", "no states"},
		{"1 0.0 1\n", "s.states:1: 3 columns"},
		{"1 0.0 1 0\nx 1.0 3 1\n", "s.states:2: state id"},
		{"1 0.0 1 0\n1 1.0 3 1\n", "s.states:2: state id 1 does not follow 1"},
		{"1 abc 1 0\n", "s.states:1: energy"},
		{"1 -1 1 0\n", "s.states:1: energy"},
		{"1 0 0 0\n", "s.states:1: degeneracy"},
		{"1 0 1 NaN\n", "s.states:1: J"},
		{"1 Inf 1 0\n", "s.states:1: energy"},
	}
	for i, c := range states {
		_, err := ParseStates(strings.NewReader(c.in), "s.states")
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("states %d: error %v, want one containing %q", i, err, c.want)
		}
	}
	st, err := ParseStates(strings.NewReader(exomolTestStates), "s.states")
	if err != nil {
		t.Fatal(err)
	}
	conv, err := NewConverter(nil, st, Options{})
	if err != nil {
		t.Fatal(err)
	}
	trans := []struct{ in, want string }{
		{"3 1\n", "t.trans:1: 2 columns"},
		{"3 1 1.0\n3 9 1.0\n", "t.trans:2: state id 9 is not in the states file"},
		{"3 1 1.0\n\n7 1 1.0\n", "t.trans:3: state id 7"},
		{"3 1 x\n", "t.trans:1: Einstein A"},
		{"3 1 -1\n", "t.trans:1: Einstein A"},
		{"3 1 1 abc\n", "t.trans:1: wavenumber \"abc\""},
		{"1 3 1.0\n", "t.trans:1: wavenumber -2000"},
		{"3 1 1 0\n", "t.trans:1: wavenumber 0"},
		{"a b 1\n", "t.trans:1: state ids"},
		{"3 1 1 " + strings.Repeat("1", 300000) + "\n", "t.trans:1: line longer"},
	}
	for i, c := range trans {
		err := conv.ScanTrans(strings.NewReader(c.in), "t.trans", func(lbl.Line) error { return nil })
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("trans %d: error %v, want one containing %q", i, err, c.want)
		}
	}
	for i, o := range []Options{{Abundance: 2}, {Abundance: -1}, {Gamma: -1}, {Gamma: math.NaN()}, {SMin: -1}, {NuMin: 10, NuMax: 5}} {
		if _, err := NewConverter(nil, st, o); err == nil {
			t.Errorf("options %d %+v: no error", i, o)
		}
	}
	// Missing files name what was looked for.
	dir := t.TempDir()
	opacitytest.WriteFile(t, filepath.Join(dir, "x__y.def"), exomolTestDef)
	if _, err := Read(filepath.Join(dir, "x__y.def"), Options{}); err == nil || !strings.Contains(err.Error(), "x__y.states") {
		t.Errorf("missing states: %v", err)
	}
	opacitytest.WriteFile(t, filepath.Join(dir, "x__y.states"), "1 0 1 0\n")
	if _, err := Read(filepath.Join(dir, "x__y.def"), Options{}); err == nil || !strings.Contains(err.Error(), "has 1 states") {
		t.Errorf("state count against the .def: %v", err)
	}
	opacitytest.WriteFile(t, filepath.Join(dir, "x__y.states"), exomolTestStates)
	if _, err := Read(filepath.Join(dir, "x__y.def"), Options{}); err == nil || !strings.Contains(err.Error(), "no transitions file") {
		t.Errorf("missing transitions: %v", err)
	}
	opacitytest.WriteFile(t, filepath.Join(dir, "x__y.trans.bz2"), "not bzip2 data")
	if _, err := Read(filepath.Join(dir, "x__y.def"), Options{}); err == nil || !strings.Contains(err.Error(), "x__y.trans.bz2") {
		t.Errorf("corrupt bzip2: %v", err)
	}
}

// FuzzExoMol feeds arbitrary .def, .states and .trans text to the readers:
// they must return an error or lines with finite positive wavenumbers and
// finite non-negative intensities, and never panic.
func FuzzExoMol(f *testing.F) {
	f.Add([]byte(exomolTestDef), []byte(exomolTestStates), []byte("3 1 2.0\n3 2 1.0 1900.0\n"))
	f.Add([]byte("EXOMOL.def # ID\n1 # Isotopologue mass\n"), []byte("1 0 1 0\n5 10 3 1 e\n"), []byte("5 1 1e-3 10 \n"))
	f.Add([]byte(""), []byte("2 1e300 1e300 0\n3 1e-300 1 0\n"), []byte("3 2 1e300\n"))
	f.Fuzz(func(t *testing.T, def, states, trans []byte) {
		d, _ := ParseDef(bytes.NewReader(def), "f.def")
		st, err := ParseStates(bytes.NewReader(states), "f.states")
		if err != nil {
			return
		}
		conv, err := NewConverter(d, st, Options{})
		if err != nil {
			return
		}
		_ = conv.ScanTrans(bytes.NewReader(trans), "f.trans", func(l lbl.Line) error {
			if !(l.Nu > 0) || math.IsInf(l.Nu, 0) || !(l.S >= 0) || math.IsInf(l.S, 0) {
				t.Fatalf("bad line %+v", l)
			}
			return nil
		})
	})
}
