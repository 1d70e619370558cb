package exomol_test

import (
	"math"
	"path/filepath"
	"strings"
	"testing"

	"chord/forward/opacity/exomol"
	"chord/forward/opacity/lbl"
	"chord/internal/testenv"
)

// TestBroadHCN reads the two HCN .broad fragments of shared data
// (SOURCES.md: H2 rows a0 for J” = 0-9, gamma 0.1133-0.1223 cm^-1/bar,
// n = 0.5; He a0 rows J” = 0-10; the a4 rows are other codes). Each a0
// row's gamma (per bar, converted to per atm by 1.01325, the exact ratio
// of the units) is what a transition from that J” carries; a transition
// from a J” beyond the file carries none, so the build uses the
// stated fallback (the line's own default width from the .def file), and
// the fallback is counted.
func TestBroadHCN(t *testing.T) {
	dir := testenv.SharedData(t, "broadening")
	h2, err := exomol.ReadBroad(filepath.Join(dir, "1H-12C-14N__H2_exocross-fragment.broad"), lbl.NumBroadeners)
	if err == nil || !strings.Contains(err.Error(), "cannot tell the broadener") {
		t.Fatalf("fragment named ...__H2_exocross-fragment.broad: %v, want a refusal to guess", err)
	}
	h2, err = exomol.ReadBroad(filepath.Join(dir, "1H-12C-14N__H2_exocross-fragment.broad"), lbl.H2)
	if err != nil {
		t.Fatal(err)
	}
	he, err := exomol.ReadBroad(filepath.Join(dir, "1H-12C-14N__He_exocross-fragment.broad"), lbl.He)
	if err != nil {
		t.Fatal(err)
	}
	if h2.MaxJ != 9 || he.MaxJ != 10 || h2.Skipped["a4"] != 5 || he.Skipped["a4"] != 6 {
		t.Errorf("max J'' %g and %g, skipped %v and %v", h2.MaxJ, he.MaxJ, h2.Skipped, he.Skipped)
	}
	// The J dependence of the H2 fragment, row by row (file values).
	for j, want := range []float64{0.1184, 0.1184, 0.1184, 0.1184, 0.1184, 0.1133, 0.1211, 0.1218, 0.1223, 0.1203} {
		g, n, ok := h2.Lookup(float64(j), float64(j+1))
		if !ok || math.Abs(g-want*1.01325) > 1e-12 || n != 0.5 {
			t.Errorf("H2 J'' = %d: gamma %g cm^-1/atm, n %g, %v; file %g cm^-1/bar", j, g, n, ok, want)
		}
	}
	if _, _, ok := h2.Lookup(12, 13); ok {
		t.Error("J'' = 12 found in a file that stops at 9")
	}
	// Lines through a converter: states J'' = 3 (in the file) and 12
	// (beyond it).
	st := &exomol.States{ID: []int64{1, 2, 3, 4}, E: []float64{0, 10, 100, 3000}, G: []float64{7, 9, 25, 27}, J: []float64{3, 4, 12, 13}}
	def := &exomol.Def{MassDa: 27.01, Gamma: 0.07, N: 0.5}
	conv, err := exomol.NewConverter(def, st, exomol.Options{Mol: 23, Iso: 1, Broad: []*exomol.Broad{h2, he}})
	if err != nil {
		t.Fatal(err)
	}
	in := conv.Line(1, 0, 1, 10)    // J'' 3 -> J' 4
	out := conv.Line(3, 2, 1, 2900) // J'' 12 -> J' 13
	if p := in.Broad[lbl.H2]; p.Has != lbl.HasGamma|lbl.HasN || math.Abs(float64(p.Gamma)-0.1184*1.01325) > 1e-7 {
		t.Errorf("J'' = 3 line: H2 %+v", p)
	}
	if p := in.Broad[lbl.He]; math.Abs(float64(p.Gamma)-0.0452*1.01325) > 1e-7 {
		t.Errorf("J'' = 3 line: He %+v", p)
	}
	if out.Broad[lbl.H2].Has != 0 || out.Broad[lbl.He].Has != 0 {
		t.Errorf("J'' = 12 line carries parameters: %+v", out.Broad)
	}
	// The fallback: the line's default width, 0.07 cm^-1/bar.
	mix := lbl.Mixture{{Gas: "H2", Fraction: 1}}
	g, _, err := lbl.LorentzWidth(&out, mix, lbl.Broadening{}, 0, 1, 296)
	if err != nil || math.Abs(g-0.07*1.01325) > 1e-12 {
		t.Errorf("J'' = 12 line: width %g (%v), want the .def default 0.07 cm^-1/bar", g, err)
	}
	iso := lbl.IsoData{{Mol: 23, Iso: 1}: {Name: "HCN", Mass: 27.01, Q: st, Q296: st.Q(296)}}
	ls, err := lbl.NewLineSet("HCN", []lbl.Line{in, out}, iso, lbl.LineSettings{Mixture: mix})
	if err != nil {
		t.Fatal(err)
	}
	if ls.Fallbacks["H2"] != 1 {
		t.Errorf("fallback count %v, want H2: 1", ls.Fallbacks)
	}
}

func TestBroadBadInput(t *testing.T) {
	for _, c := range []struct{ body, want string }{
		{"a0 0.1 0.5\n", "x.broad:1: code a0 row has 3 columns"},
		{"a0 abc 0.5 1\n", "x.broad:1: gamma \"abc\""},
		{"a0 -0.1 0.5 1\n", "must not be negative"},
		{"a1 0.1 0.5 1\n", "code a1 row has 4 columns"},
		{"a4 0.1 0.5 1 0 1 1 0\n", "no a0 or a1 rows"},
		{"", "no a0 or a1 rows"},
	} {
		if _, err := exomol.ParseBroad(strings.NewReader(c.body), "x.broad", lbl.H2); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%q: %v, want %q", c.body, err, c.want)
		}
	}
}

// FuzzBroad: any .broad input is read or refused with an error naming
// it; what is read gives finite, non-negative widths.
func FuzzBroad(f *testing.F) {
	f.Add([]byte("a0 0.1184 0.500 0\na0 0.1133 0.500 5\n"))
	f.Add([]byte("a4 0.1133 0.500       5  0  1  1  0\na1 0.05 0.5 3 4\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		b, err := exomol.ParseBroad(strings.NewReader(string(data)), "fuzz.broad", lbl.He)
		if err != nil {
			if !strings.Contains(err.Error(), "fuzz.broad") {
				t.Fatalf("error does not name the input: %v", err)
			}
			return
		}
		for j := -1.0; j <= b.MaxJ+1; j++ {
			if g, n, ok := b.Lookup(j, j+1); ok && (!(g >= 0) || math.IsInf(g, 0) || math.IsNaN(n) || math.IsInf(n, 0)) {
				t.Fatalf("J'' %g: gamma %g, n %g", j, g, n)
			}
		}
	})
}
