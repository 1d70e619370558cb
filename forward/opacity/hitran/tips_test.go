package hitran_test

import (
	"math"
	"path/filepath"
	"strings"
	"testing"

	"chord/forward/opacity/hitran"
	"chord/forward/opacity/internal/opacitytest"
	"chord/forward/opacity/lbl"
	"chord/internal/testenv"
)

// TestTIPS2021Files: every TIPS-2021 and TIPS-2025 table in
// ../shared/data/partition names its edition and isotopologue in its
// header, and its Q(296 K) (4-point Lagrange on the 10 K grid) agrees with
// HITRAN's molparam Q(296) within 1e-4 (SOURCES.md measured 5.1e-5 at
// most: the rounding of molparam's five digits). Q(1000 K) of CO2 626
// TIPS-2025 is the spot value SOURCES.md quotes, 2838.47.
func TestTIPS2021Files(t *testing.T) {
	dir := testenv.SharedData(t, "partition")
	iso := opacitytest.IsoData(t)
	files, err := filepath.Glob(filepath.Join(dir, "q*_tips20*_hapi.txt"))
	if err != nil || len(files) != 42 {
		t.Fatalf("%d TIPS-2021/2025 files (%v), SOURCES.md lists 42", len(files), err)
	}
	for _, f := range files {
		p, err := hitran.ReadPartition(f)
		if err != nil {
			t.Fatal(err)
		}
		edition := lbl.EditionTIPS2021
		if strings.Contains(f, "tips2025") {
			edition = lbl.EditionTIPS2025
		}
		if !strings.HasPrefix(p.Source, edition+" (") {
			t.Errorf("%s: source %q, want edition %s", f, p.Source, edition)
		}
		d := iso[p.Iso]
		if d == nil {
			t.Errorf("%s: header isotopologue %v not in molparam", f, p.Iso)
			continue
		}
		if rel := math.Abs(p.Q.Q(lbl.TRef)/d.Q296 - 1); rel > 1e-4 {
			t.Errorf("%s (%s): Q(296) %.6g, molparam %.6g (rel %.2g)", f, d.Name, p.Q.Q(lbl.TRef), d.Q296, rel)
		}
	}
	p, err := hitran.ReadPartition(filepath.Join(dir, "q7_CO2_626_tips2025_hapi.txt"))
	if err != nil {
		t.Fatal(err)
	}
	if q := p.Q.Q(1000); math.Abs(q/2838.47-1) > 1e-5 {
		t.Errorf("CO2 626 TIPS-2025 Q(1000 K) = %.8g, SOURCES.md 2838.47 (to its six digits)", q)
	}
	// A bare two-column file is HITRAN's qN.txt; a .pf name is ExoMol's.
	if p, err := hitran.ReadPartition(filepath.Join(dir, "q1_H2O_161_tips.txt")); err != nil || !strings.HasPrefix(p.Source, "TIPS-2017 or later, HITRAN qN.txt") {
		t.Errorf("q1.txt: %v, source %q", err, p.Source)
	}
}

// TestCOIntensityEditions: CO intensities at 1000 and 1500 K from the
// TIPS-2021 and the TIPS-2011 partition sums differ by the ratio of the
// sums, Q2011(T)/Q2021(T) Q2021(296)/Q2011(296): 0.65 % at 1000 K and
// 1.0 % at 1500 K (issue 18, measured from the two tables): TIPS-2011's
// larger sums make the intensities that much too low.
func TestCOIntensityEditions(t *testing.T) {
	dir := testenv.SharedData(t, "partition")
	iso := opacitytest.IsoData(t) // molparam + TIPS-2011
	old := iso[lbl.IsoKey{Mol: 5, Iso: 1}].Q
	p, err := hitran.ReadPartition(filepath.Join(dir, "q26_CO_26_tips2021_hapi.txt"))
	if err != nil {
		t.Fatal(err)
	}
	l := lbl.Line{Mol: 5, Iso: 1, Nu: 2147.081134, S: 9.29e-20, Elower: 0}
	for _, c := range []struct{ t, want float64 }{{1000, 0.0065}, {1500, 0.010}} {
		s2011 := lbl.LineIntensity(&l, c.t, old.Q(lbl.TRef), old.Q(c.t))
		s2021 := lbl.LineIntensity(&l, c.t, p.Q.Q(lbl.TRef), p.Q.Q(c.t))
		d := s2021/s2011 - 1
		t.Logf("CO R(0) at %g K: intensity from TIPS-2021 %.5g, from TIPS-2011 %.5g (%+.3f %%)", c.t, s2021, s2011, 100*d)
		if math.Abs(d-c.want) > 0.0006 {
			t.Errorf("%g K: TIPS-2021 intensity %+.3f %% from TIPS-2011's, want +%.2f %%", c.t, 100*d, 100*c.want)
		}
	}
}
