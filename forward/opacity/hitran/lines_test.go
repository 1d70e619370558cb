package hitran_test

import (
	"bytes"
	"math"
	"path/filepath"
	"strings"
	"testing"

	"chord/forward/opacity/hitran"
	"chord/forward/opacity/lbl"
	"chord/internal/testenv"
)

// A HITRAN record from ../shared/data/reference-xsec/co2_6300_6400_lines.par
// (its first line), 160 characters.
const co2Record = " 21 6240.013616 1.633E-28 5.700e-05.07700.104 1470.11880.69-.005709       5 1 1 02       1 0 0 01                    R 14e     3677642029 5 4 5 7    31.0   29.0"

func TestReadRecordFields(t *testing.T) {
	if len(co2Record) != hitran.RecordLen {
		t.Fatalf("test record has %d characters", len(co2Record))
	}
	ls, err := hitran.ReadLines(strings.NewReader(co2Record+"\n"), "rec", hitran.LineFilter{})
	if err != nil {
		t.Fatal(err)
	}
	// Field values as printed in the record (HITRAN 2004 layout, Rothman
	// et al. 2005, JQSRT 96, 139, table 1).
	want := lbl.Line{Mol: 2, Iso: 1, Nu: 6240.013616, S: 1.633e-28, A: 5.700e-05, GammaAir: 0.0770, GammaSelf: 0.104,
		Elower: 1470.1188, NAir: 0.69, DeltaAir: -0.005709, GUpper: 31, GLower: 29}
	if len(ls) != 1 || ls[0] != want {
		t.Fatalf("got %+v\nwant %+v", ls, want)
	}
	// CRLF line endings give the same line.
	ls2, err := hitran.ReadLines(strings.NewReader(co2Record+"\r\n"+co2Record+"\r\n"), "crlf", hitran.LineFilter{})
	if err != nil || len(ls2) != 2 || ls2[1] != want {
		t.Fatalf("CRLF: %v %+v", err, ls2)
	}
	// Isotopologue codes beyond 9: 0 is 10, A is 11 (HITRAN convention).
	for code, iso := range map[byte]int{'0': 10, 'A': 11, 'B': 12, '7': 7} {
		rec := []byte(co2Record)
		rec[2] = code
		ls, err := hitran.ReadLines(bytes.NewReader(rec), "iso", hitran.LineFilter{})
		if err != nil || ls[0].Iso != iso {
			t.Errorf("iso code %c: %v %v, want %d", code, err, ls, iso)
		}
	}
}

// TestReadRealFiles reads every .par file in the shared data and checks
// the record counts and ranges stated in ../shared/data/SOURCES.md.
func TestReadRealFiles(t *testing.T) {
	dir := testenv.SharedData(t, "hitran-lines")
	for _, c := range []struct {
		file         string
		n            int
		nuLo, nuHi   float64
		mol          int
		isoCountIso1 int // lines of isotopologue 1, -1 to skip
	}{
		{"05_hit12_CO_full.par", 4606, 3.462, 8464.882, 5, -1},
		{"07_hit12_O2_full.par", 13975, 0.000001, 15927.809, 7, 1787},
		{"H2O_3400-4100_crosssection_CRLF.par", 7535, 3400.007, 4099.994, 1, 7535},
		{"H2O_1000-2000_hapigui.par", 9199, 1000.289, 1999.946, 1, 9199},
		{"CH4_nu3_band_0000A1-0010F2_hapi.par", 6489, 2731.264, 3254.245, 6, 6489},
		{"CO2_626_2380-2401_bandhead_radis.par", 332, 2380.019, 2399.966, 2, 332},
		{"H2O_2000-2100_hit16_radis.par", 864, 2000.395, 2099.995, 1, 611},
	} {
		ls, err := hitran.ReadLineFile(filepath.Join(dir, c.file), hitran.LineFilter{})
		if err != nil {
			t.Fatal(err)
		}
		if len(ls) != c.n {
			t.Errorf("%s: %d lines, SOURCES.md says %d", c.file, len(ls), c.n)
			continue
		}
		if math.Abs(ls[0].Nu-c.nuLo) > 5e-4 || math.Abs(ls[len(ls)-1].Nu-c.nuHi) > 5e-4 { // SOURCES.md rounds to 3 decimals
			t.Errorf("%s: range %g-%g, SOURCES.md says %g-%g", c.file, ls[0].Nu, ls[len(ls)-1].Nu, c.nuLo, c.nuHi)
		}
		n1 := 0
		for _, l := range ls {
			if l.Mol != c.mol {
				t.Fatalf("%s: molecule %d", c.file, l.Mol)
			}
			if l.Iso == 1 {
				n1++
			}
		}
		if c.isoCountIso1 >= 0 && n1 != c.isoCountIso1 {
			t.Errorf("%s: %d lines of isotopologue 1, SOURCES.md says %d", c.file, n1, c.isoCountIso1)
		}
	}
	// Filter: wavenumber range and minimum intensity.
	all, _ := hitran.ReadLineFile(filepath.Join(dir, "05_hit12_CO_full.par"), hitran.LineFilter{})
	f := hitran.LineFilter{NuMin: 2000, NuMax: 2300, SMin: 1e-21, Iso: []int{1}}
	sel, err := hitran.ReadLineFile(filepath.Join(dir, "05_hit12_CO_full.par"), f)
	if err != nil {
		t.Fatal(err)
	}
	want := 0
	for _, l := range all {
		if l.Nu >= 2000 && l.Nu <= 2300 && l.S >= 1e-21 && l.Iso == 1 {
			want++
		}
	}
	if len(sel) != want || want == 0 {
		t.Errorf("filter kept %d lines, want %d", len(sel), want)
	}
}

// TestReadTSV reads HITRANonline's tab-separated CO2 files (seven
// overlapping windows): SOURCES.md gives 17,719 rows and 9906 distinct
// lines, 666.016-764.999 cm^-1, isotopologue 626 only. Its 9906 counts
// distinct wavenumbers: two different lines (S 4.716e-30 and 9.841e-28)
// share 713.611456 cm^-1, so there are 9907 distinct lines.
func TestReadTSV(t *testing.T) {
	dir := testenv.SharedData(t, "hitran-lines")
	var lists [][]lbl.Line
	rows := 0
	for ch := 1; ch <= 7; ch++ {
		ls, err := hitran.ReadLineFile(filepath.Join(dir, "CO2_626_HIRS-ch"+string(rune('0'+ch))+"_lblgasabs.tsv"), hitran.LineFilter{})
		if err != nil {
			t.Fatal(err)
		}
		rows += len(ls)
		lists = append(lists, ls)
	}
	m := lbl.MergeLines(lists...)
	if rows != 17719 || len(m) != 9907 {
		t.Errorf("%d rows, %d distinct lines; want 17719 and 9907", rows, len(m))
	}
	if math.Abs(m[0].Nu-666.016232) > 1e-9 || math.Abs(m[len(m)-1].Nu-764.999) > 1e-3 {
		t.Errorf("range %g-%g", m[0].Nu, m[len(m)-1].Nu)
	}
	// First row of ch1: 2, 666.016232, 9.946e-29, 1.166, 0.0683, 0.086, 4690.5806, 0.76, -0.000732.
	if l := lists[0][0]; l != (lbl.Line{Mol: 2, Iso: 1, Nu: 666.016232, S: 9.946e-29, A: 1.166, GammaAir: 0.0683, GammaSelf: 0.086, Elower: 4690.5806, NAir: 0.76, DeltaAir: -0.000732}) {
		t.Errorf("first TSV row %+v", l)
	}
	// A header row of column names is skipped.
	ls, err := hitran.ReadLines(strings.NewReader("molec_id\tnu\tsw\ta\tgamma_air\tgamma_self\telower\tn_air\tdelta_air\n2\t666.0\t1e-20\t1\t0.07\t0.08\t10\t0.7\t0\n"), "hdr", hitran.LineFilter{})
	if err != nil || len(ls) != 1 {
		t.Errorf("header: %v %v", err, ls)
	}
}

func TestReadBadInputs(t *testing.T) {
	rec := func(col int, s string) string { // replace columns col.. (1-based) by s
		b := []byte(co2Record)
		copy(b[col-1:], s)
		return string(b)
	}
	for i, c := range []struct {
		in, want string
	}{
		{"", "no line records (empty file)"},
		{"\n\n  \n", "no line records (empty file)"},
		{co2Record + "\n" + co2Record[:120] + "\n", "bad:2: truncated record: 120 characters"},
		{co2Record + "xx\n", "bad:1: record has 162 characters"},
		{rec(1, "99"), "bad:1: unknown HITRAN molecule id 99"},
		{rec(1, " 0"), "unknown HITRAN molecule id 0"},
		{rec(1, "x2"), "molecule id (columns 1-2)"},
		{rec(3, "#"), "isotopologue code (column 3)"},
		{rec(4, "  6240.01x6 "), "wavenumber (columns 4-15) \"6240.01x6\" is not a number"},
		{rec(16, " 1.633Q-28"), "intensity (columns 16-25)"},
		{rec(16, "       NaN"), "intensity (columns 16-25) \"NaN\" is not a number"},
		{rec(16, "     1e999"), "intensity (columns 16-25) \"1e999\" is not a number"},
		{rec(16, "-1.633E-28"), "intensity -1.633e-28 must not be negative"},
		{rec(36, "     "), "gamma_air (columns 36-40) is blank"},
		{rec(4, "   -1.000000"), "wavenumber -1 cm^-1 must be positive"},
		{rec(56, "0x12"), "n_air (columns 56-59)"},
		{"2\t666.0\t1e-20\t1\t0.07\t0.08\t10\t0.7\n", "bad:1: 8 tab-separated fields, want 9"},
		{"2\t666.0\t1e-20\tabc\t0.07\t0.08\t10\t0.7\t0\n", "bad:1: field 4 (A) \"abc\" is not a number"},
		{"77\t666.0\t1e-20\t1\t0.07\t0.08\t10\t0.7\t0\n", "unknown HITRAN molecule id 77"},
		{"2.5\t666.0\t1e-20\t1\t0.07\t0.08\t10\t0.7\t0\n", "field 1 (molecule id) \"2.5\" is not an integer"},
	} {
		_, err := hitran.ReadLines(strings.NewReader(c.in), "bad", hitran.LineFilter{})
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("case %d: error %v, want one containing %q", i, err, c.want)
		}
	}
	if _, err := hitran.ReadLineFile(filepath.Join(t.TempDir(), "missing.par"), hitran.LineFilter{}); err == nil || !strings.Contains(err.Error(), "missing.par") {
		t.Errorf("missing file: %v", err)
	}
}

// FuzzReadLines: any input is either read or rejected with an error that
// names the input; no panic, and every line read is physically valid.
func FuzzReadLines(f *testing.F) {
	f.Add([]byte(co2Record + "\n"))
	f.Add([]byte(co2Record + "\r\n" + co2Record))
	f.Add([]byte("2\t666.016232\t9.946e-29\t1.166\t0.0683\t0.086\t4690.5806\t0.76\t-0.000732\n"))
	f.Add([]byte("molec_id\tnu\tsw\ta\tgamma_air\tgamma_self\telower\tn_air\tdelta_air\n"))
	// The layouts of issue 18: comma-separated broadener fields after the
	// record, a header-named table, a CDSD-HITEMP record.
	f.Add([]byte(co2Record + ",   0.0489,   5, 1345,   0.5143,   5, 1345,   0.0755,   5, 1345,   0.6634,   5, 1345,   0.1076,   5, 1345,   0.6983,   5, 1345 \n"))
	f.Add([]byte("molec_id,local_iso_id,nu,sw,elower,gamma_air,n_air,gamma_H2,n_H2,delta_H2\n5,1,2147.08,9.29e-20,0,0.0803,0.76,0.0755,#,-0.0018\n"))
	f.Add([]byte(" 23 2283.700120 4.517E-46 4.817E+02.0528.064812620.34940.59-.005067 0.66  1 2 2 32       1 2 2 22 13 2  50 10 2  23  R123f  750\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		ls, err := hitran.ReadLines(bytes.NewReader(data), "fuzz", hitran.LineFilter{})
		if err != nil {
			if !strings.Contains(err.Error(), "fuzz") {
				t.Fatalf("error does not name the input: %v", err)
			}
			return
		}
		for _, l := range ls {
			if l.Validate() != nil || l.Mol < 1 || l.Mol >= len(lbl.MoleculeNames) || l.Iso < 1 ||
				math.IsNaN(l.S+l.Nu+l.A+l.GammaAir+l.GammaSelf+l.Elower+l.NAir+l.DeltaAir) {
				t.Fatalf("invalid line accepted: %+v", l)
			}
		}
	})
}
