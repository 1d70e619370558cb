package hitran_test

import (
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"chord/forward/opacity/hitran"
	"chord/forward/opacity/internal/opacitytest"
	"chord/forward/opacity/lbl"
	"chord/internal/testenv"
)

// TestTIPSAgainstMolParam compares TIPS-2011 partition sums (Laraia et al.
// 2011, Icarus 215, 391; ../shared/data/partition/parsum2011_tips.dat),
// interpolated to 296 K, with Q(296 K) of HITRAN's molparam table
// (HITRAN2020 edition, from TIPS-2017/2021, Gamache et al. 2017, JQSRT 203,
// 70). The editions differ: for the main isotopologues of the molecules
// chord's demo and tests use, the revisions moved Q(296) by at most about
// 0.35 % (CO2 and N2O were recomputed), so the tolerance is 0.5 %; the
// interpolation error of 4-point Lagrange on a 25 K grid is below 1e-5.
func TestTIPSAgainstMolParam(t *testing.T) {
	d := opacitytest.IsoData(t)
	for _, name := range []string{"H2O_161", "CO2_626", "O3_666", "N2O_446", "CO_26", "CH4_211", "O2_66", "NO_46", "SO2_626", "NH3_4111"} {
		var iso *lbl.Isotopologue
		for _, v := range d {
			if v.Name == name {
				iso = v
			}
		}
		if iso == nil || iso.Q == nil {
			t.Errorf("%s: no molparam entry or no TIPS column", name)
			continue
		}
		q := iso.Q.Q(lbl.TRef)
		if rel := math.Abs(q/iso.Q296 - 1); rel > 5e-3 {
			t.Errorf("%s: TIPS-2011 Q(296) = %.5g, molparam %.5g (rel %.2g)", name, q, iso.Q296, rel)
		}
	}
	// molparam lists CO2 626 at 44.989830 g/mol, the sum of atomic masses
	// 12 + 2 x 15.9949146 (IUPAC/AME atomic masses, from memory).
	if m := d[lbl.IsoKey{Mol: 2, Iso: 1}].Mass; math.Abs(m-(12+2*15.9949146)) > 1e-5 {
		t.Errorf("CO2 626 mass %g", m)
	}
}

// TestQFileAgainstMolParam: HITRAN's q1.txt (TIPS-2017/2021, 1 K steps) at
// 296 K is 174.5813; molparam gives Q(296) = 1.7458E+02 for H2O 161, so they
// must agree to its 5 significant digits (rounding: 3e-5).
func TestQFileAgainstMolParam(t *testing.T) {
	q1, err := hitran.ReadQFile(filepath.Join(testenv.SharedData(t, "partition"), "q1_H2O_161_tips.txt"))
	if err != nil {
		t.Fatal(err)
	}
	d := opacitytest.IsoData(t)
	if got, want := q1.Q(lbl.TRef), d[lbl.IsoKey{Mol: 1, Iso: 1}].Q296; math.Abs(got/want-1) > 3e-5 {
		t.Errorf("q1 Q(296) = %g, molparam %g", got, want)
	}
	if lo, hi := q1.Range(); lo != 1 || hi != 5000 {
		t.Errorf("q1 range %g-%g K, SOURCES.md says 1-5000 K", lo, hi)
	}
	// Interpolation: take every 25th point of the 1 K table and compare the
	// 4-point Lagrange interpolant with the tabulated values in between.
	// The 4-point Lagrange error is at most max|d4Q/dT4| h^4 (9/16)/24 in
	// the middle interval (textbook bound); for Q ~ T^1.5 that is about
	// 2e-5 relative at 130 K with h = 25 K, less at higher T: tolerance 1e-4.
	var ts, qs []float64
	for i := 99; i < 3000; i += 25 {
		ts, qs = append(ts, q1.T[i]), append(qs, q1.Sum[i])
	}
	coarse, err := lbl.NewQTable(ts, qs)
	if err != nil {
		t.Fatal(err)
	}
	for i := 130; i < 2960; i += 37 { // inside the second to last-but-one intervals
		if got, want := coarse.Q(q1.T[i]), q1.Sum[i]; math.Abs(got/want-1) > 1e-4 {
			t.Errorf("T %g: interpolated %g, table %g", q1.T[i], got, want)
		}
	}
	// TIPS-2011 and the TIPS-2017 q1 table for H2O 161 are two editions of
	// the same calculation; they agree to 1e-3 from 70 to 500 K (at 1000 K
	// the later edition is 0.5 % lower, from its larger set of levels).
	for _, T := range []float64{70, 100, 200, 296, 500} {
		if a, b := d[lbl.IsoKey{Mol: 1, Iso: 1}].Q.Q(T), q1.Q(T); math.Abs(a/b-1) > 1e-3 {
			t.Errorf("H2O 161 at %g K: TIPS-2011 %g, q1 %g", T, a, b)
		}
	}
}

func TestPartitionBadInputs(t *testing.T) {
	dir := t.TempDir()
	write := func(name, body string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	for _, c := range []struct {
		name, body, want string
		read             func(string) error
	}{
		{"q_short.txt", "1 1\n2 2\n3 3\n", "need at least 4", readQ},
		{"q_nan.txt", "1 1\n2 x\n", "q_nan.txt:2", readQ},
		{"q_unsorted.txt", "1 1\n3 2\n2 3\n4 4\n", "not strictly ascending", readQ},
		{"q_neg.txt", "1 1\n2 -2\n3 3\n4 4\n", "must be positive", readQ},
		{"q_cols.txt", "1 1 1\n", "q_cols.txt:1: 3 fields", readQ},
		{"mp_badmol.txt", "   XX (99)\n  161 1 1 1 1\n", "mp_badmol.txt:1", readMP},
		{"mp_orphan.txt", "  161 1 1 1 1\n", "before any molecule", readMP},
		{"mp_num.txt", "   H2O (1)\n  161 1 abc 1 1\n", "mp_num.txt:2: Q(296 K)", readMP},
		{"mp_empty.txt", "", "empty", readMP},
		{"tips_hdr.txt", "T H2O_161\n", "should start with Temp", readTIPS},
		{"tips_cols.txt", "Temp(K) H2O_161\n60. 1 2\n", "tips_cols.txt:2: 3 fields", readTIPS},
		{"tips_empty.txt", "", "empty", readTIPS},
	} {
		err := c.read(write(c.name, c.body))
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want one containing %q", c.name, err, c.want)
		}
	}
}

func readQ(p string) error  { _, err := hitran.ReadQFile(p); return err }
func readMP(p string) error { _, err := hitran.ReadMolParam(p); return err }
func readTIPS(p string) error {
	_, err := hitran.ReadTIPSTable(p, lbl.IsoData{})
	return err
}
