package hitran_test

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"chord/forward/opacity"
	"chord/forward/opacity/hitran"
	"chord/forward/opacity/internal/opacitytest"
	"chord/forward/opacity/tablefile"
	"chord/internal/testenv"
)

// rawRow parses a data row of a CIA file with strings.Fields, in file units.
func rawRow(t *testing.T, s string) (nu, k float64) {
	t.Helper()
	f := strings.Fields(s)
	nu, err1 := strconv.ParseFloat(f[0], 64)
	k, err2 := strconv.ParseFloat(f[1], 64)
	if err1 != nil || err2 != nil {
		t.Fatalf("raw row %q does not parse", s)
	}
	return nu, k
}

// TestCIARealFiles reads the real HITRAN CIA files. The expected block
// counts, row totals, temperatures and negative-value counts are those
// listed in ../shared/data/SOURCES.md ("cia/" table and "Format checks run
// on the new .cia files"), which were counted independently of chord.
func TestCIARealFiles(t *testing.T) {
	dir := testenv.SharedData(t, "cia")
	cases := []struct {
		file     string
		blocks   int
		points   int
		negative int
		temps    []float64   // block temperatures in file order, where listed in full
		nuLo     float64     // cm^-1, lowest wavenumber of any block
		nuHi     float64     // cm^-1, highest
		sizes    map[int]int // blocks by row count
	}{
		{"N2-N2_2011.cia", 20, 67565, 4813 + 923,
			[]float64{40, 51.7, 66.7, 86.2, 111.3, 143.8, 185.7, 239.8, 309.7, 400}, 0.020, 3000.094,
			map[int]int{582: 10, 9543: 5, 2806: 5}},
		{"CO2-CO2_2018.cia", 20, 19969, 574, nil, 1.0, 3249.583,
			map[int]int{750: 10, 801: 6, 1361: 2, 1411: 1, 3530: 1}},
		{"CO2-CO2_2024.cia", 37, 92469, 726, nil, 1.0, 4499.5952,
			map[int]int{750: 10, 2995: 9, 4357: 3, 5641: 6, 1361: 2, 1411: 1, 676: 3, 3530: 1, 359: 1, 1047: 1}},
	}
	for _, c := range cases {
		t.Run(c.file, func(t *testing.T) {
			path := filepath.Join(dir, c.file)
			blocks, err := hitran.ReadCIAFile(path)
			if err != nil {
				t.Fatal(err)
			}
			lines := opacitytest.FileLines(t, path)
			if len(blocks) != c.blocks {
				t.Fatalf("%d blocks, want %d (SOURCES.md)", len(blocks), c.blocks)
			}
			points, negative := 0, 0
			lo, hi := math.Inf(1), math.Inf(-1)
			for i, b := range blocks {
				// The header as printed in the file, parsed here by
				// whitespace independently of the reader.
				h := strings.Fields(lines[b.Line])
				n, _ := strconv.Atoi(h[3])
				numin, _ := strconv.ParseFloat(h[1], 64)
				numax, _ := strconv.ParseFloat(h[2], 64)
				temp, _ := strconv.ParseFloat(h[4], 64)
				kmax, _ := strconv.ParseFloat(h[5], 64)
				if len(b.K) != n || len(b.Wavenumber) != n {
					t.Errorf("block %d (line %d): %d rows, header says %d", i, b.Line, len(b.K), n)
				}
				if b.T != temp {
					t.Errorf("block %d: T = %g, header says %g", i, b.T, temp)
				}
				if c.temps != nil && i < len(c.temps) && b.T != c.temps[i] {
					t.Errorf("block %d: T = %g, SOURCES.md lists %g", i, b.T, c.temps[i])
				}
				// The header range is printed to 2-7 decimals: agree to
				// half a unit in its last digit (at most 0.005 cm^-1).
				if d := math.Abs(b.Wavenumber[0]/100 - numin); d > 0.005 {
					t.Errorf("block %d: first wavenumber %g cm^-1, header %g", i, b.Wavenumber[0]/100, numin)
				}
				if d := math.Abs(b.Wavenumber[n-1]/100 - numax); d > 0.005 {
					t.Errorf("block %d: last wavenumber %g cm^-1, header %g", i, b.Wavenumber[n-1]/100, numax)
				}
				// Header maximum: SOURCES.md checked it to 1 %, and it is
				// printed to 4 significant digits.
				km := 0.0
				for _, v := range b.K {
					km = max(km, v)
				}
				if math.Abs(km/1e-10-kmax) > 0.01*kmax {
					t.Errorf("block %d: largest k %g cm^5, header maximum %g", i, km/1e-10, kmax)
				}
				if b.Line+n+1 < len(lines) && i+1 < len(blocks) && blocks[i+1].Line != b.Line+n+1 {
					t.Errorf("block %d: next block at line %d, want %d", i, blocks[i+1].Line, b.Line+n+1)
				}
				points += n
				negative += b.Clipped
				lo, hi = min(lo, numin), max(hi, numax)
			}
			sizes := map[int]int{}
			for _, b := range blocks {
				sizes[len(b.K)]++
			}
			if fmt.Sprint(sizes) != fmt.Sprint(c.sizes) {
				t.Errorf("blocks by row count %v, SOURCES.md lists %v", sizes, c.sizes)
			}
			if points != c.points {
				t.Errorf("%d rows in all, SOURCES.md lists %d", points, c.points)
			}
			if negative != c.negative {
				t.Errorf("%d negative values clipped, SOURCES.md lists %d", negative, c.negative)
			}
			if lo != c.nuLo || hi != c.nuHi {
				t.Errorf("range %g-%g cm^-1, SOURCES.md lists %g-%g", lo, hi, c.nuLo, c.nuHi)
			}

			tab, err := hitran.CIAFromBlocks(blocks, nil)
			if err != nil {
				t.Fatal(err)
			}
			if tab.Meta["negative_values_clipped"] != strconv.Itoa(c.negative) {
				t.Errorf("meta negative_values_clipped = %q", tab.Meta["negative_values_clipped"])
			}
			// At every block's own temperature, every 37th row of the file
			// (and its last row) is in the table as the file gives it,
			// converted to m^5 (exactly the same float64 operation);
			// negative rows are 0.
			checked, zeros := 0, 0
			for _, b := range blocks {
				it := indexOf(tab.T, b.T)
				n := len(b.K)
				for j := 0; j < n; j++ {
					nu, k := rawRow(t, lines[b.Line+1+j])
					if j%37 != 0 && j != n-1 && k >= 0 {
						continue
					}
					want := max(k, 0) * 1e-10
					if sameTOverlap(blocks, b, nu*100) {
						continue
					}
					ik := indexOf(tab.Wavenumber, nu*100)
					if ik < 0 || it < 0 {
						t.Fatalf("block at line %d: (%g K, %g cm^-1) not on the table axes", b.Line, b.T, nu)
					}
					if got := tab.K[it*len(tab.Wavenumber)+ik]; got != want {
						t.Fatalf("block at line %d, row %d: table %g m^5, file %g cm^5 -> %g m^5", b.Line, j+1, got, k, want)
					}
					checked++
					if k < 0 {
						zeros++
					}
				}
			}
			if zeros != c.negative {
				t.Errorf("%d negative rows found as 0 in the table, want %d", zeros, c.negative)
			}
			// Through a table file and back, bit for bit.
			tab.Meta[opacity.MetaProgramVersion] = "test"
			tp := filepath.Join(t.TempDir(), "cia.parquet")
			if err := tablefile.WriteCIA(tp, tab, false); err != nil {
				t.Fatal(err)
			}
			back, err := tablefile.ReadCIA(tp)
			if err != nil {
				t.Fatal(err)
			}
			opacitytest.EqualF64(t, "k", back.K, tab.K)
			opacitytest.EqualF64(t, "wavenumber", back.Wavenumber, tab.Wavenumber)
			t.Logf("%d table values checked against the file (%d of them negative in the file, 0 in the table); table %d T x %d wavenumbers",
				checked, zeros, len(tab.T), len(tab.Wavenumber))
		})
	}
}

func indexOf(x []float64, v float64) int {
	for i, u := range x {
		if u == v {
			return i
		}
	}
	return -1
}

// sameTOverlap reports whether another block at b's temperature covers nu
// (there the table holds the mean of the two).
func sameTOverlap(blocks []*hitran.CIABlock, b *hitran.CIABlock, nu float64) bool {
	for _, o := range blocks {
		if o != b && o.T == b.T && nu >= o.Wavenumber[0] && nu <= o.Wavenumber[len(o.Wavenumber)-1] {
			return true
		}
	}
	return false
}

// TestCIAN2Interpolation checks the combination rules on N2-N2 2011: the
// rototranslational band (0-554 cm^-1, 40-400 K) at a temperature of the
// fundamental-band sets (300.9 K) is linear in T between its 239.8 K and
// 309.7 K blocks; the fundamental band at 40 K is held at its coldest
// block (228.2 K); 1000 cm^-1, covered by no block, is 0. The expected
// values are computed here from the file's rows by the stated rules
// (linear interpolation: fact of the trade, common practice).
func TestCIAN2Interpolation(t *testing.T) {
	path := filepath.Join(testenv.SharedData(t, "cia"), "N2-N2_2011.cia")
	blocks, err := hitran.ReadCIAFile(path)
	if err != nil {
		t.Fatal(err)
	}
	tab, err := hitran.CIAFromBlocks(blocks, nil)
	if err != nil {
		t.Fatal(err)
	}
	lines := opacitytest.FileLines(t, path)
	nW := len(tab.Wavenumber)
	rowOf := func(temp, nuCm float64) (k float64) {
		for _, b := range blocks {
			if b.T != temp {
				continue
			}
			for j := range len(b.K) {
				nu, kk := rawRow(t, lines[b.Line+1+j])
				if nu == nuCm {
					return max(kk, 0) * 1e-10
				}
			}
		}
		t.Fatalf("no row at %g cm^-1 in the %g K block", nuCm, temp)
		return 0
	}
	at := func(temp, nuCm float64) float64 {
		it, ik := indexOf(tab.T, temp), indexOf(tab.Wavenumber, nuCm*100)
		if it < 0 || ik < 0 {
			t.Fatalf("(%g K, %g cm^-1) not on the table axes", temp, nuCm)
		}
		return tab.K[it*nW+ik]
	}
	// 100.0 cm^-1 is a row of the rototranslational blocks (step 0.96-1 cm^-1
	// near there; the file lists it).
	nu := firstRowNear(t, lines, blocks[0], 100)
	w := (300.9 - 239.8) / (309.7 - 239.8)
	want := (1-w)*rowOf(239.8, nu) + w*rowOf(309.7, nu)
	// Same formula, evaluated in another order: a few ulp.
	if got := at(300.9, nu); math.Abs(got-want) > 1e-14*want {
		t.Errorf("k(300.9 K, %g cm^-1) = %g, want %g (linear in T)", nu, got, want)
	}
	nu2 := firstRowNear(t, lines, blocks[15], 2400)
	if got, want := at(40, nu2), rowOf(228.2, nu2); got != want {
		t.Errorf("k(40 K, %g cm^-1) = %g, want the 228.2 K value %g (nearest covering temperature)", nu2, got, want)
	}
	gap, err := hitran.CIAFromBlocks(blocks, []float64{1000 * 100, 1500 * 100})
	if err != nil {
		t.Fatal(err)
	}
	for i, v := range gap.K {
		if v != 0 {
			t.Fatalf("k[%d] = %g in the 554-1850 cm^-1 gap, want 0 where no block covers", i, v)
		}
	}
	if len(tab.T) != 20 {
		t.Errorf("%d temperatures, want the 20 distinct block temperatures", len(tab.T))
	}
}

func firstRowNear(t *testing.T, lines []string, b *hitran.CIABlock, nuCm float64) float64 {
	t.Helper()
	for j := range len(b.K) {
		nu, _ := rawRow(t, lines[b.Line+1+j])
		if nu >= nuCm {
			return nu
		}
	}
	t.Fatalf("block at line %d has no row above %g cm^-1", b.Line, nuCm)
	return 0
}

// TestCIASuppliedGrid puts CO2-CO2 2018 on a regular 1 cm^-1 grid: a grid
// point between two rows of a block gets the linear interpolation of the
// two rows (computed here from the file's text).
func TestCIASuppliedGrid(t *testing.T) {
	path := filepath.Join(testenv.SharedData(t, "cia"), "CO2-CO2_2018.cia")
	lines := opacitytest.FileLines(t, path)
	grid := make([]float64, 0, 4000)
	for nu := 0.5; nu < 4000; nu++ {
		grid = append(grid, nu*100)
	}
	tab, err := hitran.LoadCIA(grid, path)
	if err != nil {
		t.Fatal(err)
	}
	src, err := opacity.ParseSources(tab.Meta[opacity.MetaSources])
	if err != nil || len(src) != 1 || src[0].File != "CO2-CO2_2018.cia" || len(src[0].SHA256) != 64 {
		t.Errorf("sources = %+v, %v", src, err)
	}
	blocks, err := hitran.ReadCIAFile(path)
	if err != nil {
		t.Fatal(err)
	}
	// The 298 K block (2850.819-3249.583 cm^-1) is the only one covering 3000.5.
	var b *hitran.CIABlock
	for _, bb := range blocks {
		if bb.T == 298 {
			b = bb
		}
	}
	for j := range len(b.K) - 1 {
		nu0, k0 := rawRow(t, lines[b.Line+1+j])
		nu1, k1 := rawRow(t, lines[b.Line+2+j])
		if nu0 <= 3000.5 && nu1 > 3000.5 {
			w := (3000.5 - nu0) / (nu1 - nu0)
			want := ((1-w)*max(k0, 0) + w*max(k1, 0)) * 1e-10
			got := tab.K[indexOf(tab.T, 298)*len(grid)+3000]
			// The interpolation weight is computed from m^-1 values here
			// from cm^-1: a few ulp of float64.
			if math.Abs(got-want) > 1e-13*want {
				t.Errorf("k(298 K, 3000.5 cm^-1) = %g, want %g", got, want)
			}
			return
		}
	}
	t.Fatal("3000.5 cm^-1 not found in the 298 K block")
}

// writeCIA writes a synthetic file in the HITRAN CIA layout (Fortran
// A20,F10.3,F10.3,I7,F7.1,E10.3,F6.3,A27,I3 header, then "F10.4 E10.3"
// rows), the way the H2-H2 and H2-He files at HITRAN are laid out.
func writeCIA(t *testing.T, path, pair string, sets []ciaSet, eol string) {
	t.Helper()
	var sb strings.Builder
	for _, s := range sets {
		for _, temp := range s.temps {
			n := int(math.Round((s.hi-s.lo)/s.step)) + 1
			kmax := 0.0
			for j := range n {
				kmax = max(kmax, s.k(s.lo+float64(j)*s.step, temp))
			}
			fmt.Fprintf(&sb, "%20s%10.3f%10.3f%7d%7.1f%10.3E%6.3f%27s%3d%s", pair, s.lo, s.hi, n, temp, kmax, -0.999, s.comment, s.ref, eol)
			for j := range n {
				nu := s.lo + float64(j)*s.step
				fmt.Fprintf(&sb, "%10.4f %10.3E%s", nu, s.k(nu, temp), eol)
			}
		}
	}
	if err := os.WriteFile(path, []byte(sb.String()), 0o644); err != nil {
		t.Fatal(err)
	}
}

type ciaSet struct {
	lo, hi, step float64 // cm^-1
	temps        []float64
	k            func(nu, temp float64) float64 // cm^5 molecule^-2
	comment      string
	ref          int
}

// TestCIASyntheticH2 checks the reader and combiner on H2-H2 and H2-He files
// written by the test in the HITRAN layout (the real files, 24 and 147 MB,
// are not at hand; SOURCES.md, "Still missing"). Values are exact at the
// printed precision, so the expected table values are the printed numbers
// times 1e-10 (cm^5 -> m^5: (1e-2 m)^5, unit definition).
func TestCIASyntheticH2(t *testing.T) {
	dir := t.TempDir()
	// Exactly representable at 4 significant digits: k = m * 10^-46.
	kfun := func(nu, temp float64) float64 { return float64(1+int(nu)%7) * temp * 1e-49 }
	h2h2Low := filepath.Join(dir, "H2-H2_low.cia")
	h2h2High := filepath.Join(dir, "H2-H2_high.cia")
	writeCIA(t, h2h2Low, "H2-H2", []ciaSet{{lo: 20, hi: 40, step: 1, temps: []float64{200, 300}, k: kfun, ref: 1}}, "\n")
	writeCIA(t, h2h2High, "H2-H2", []ciaSet{{lo: 30, hi: 60, step: 2, temps: []float64{1000}, k: kfun, comment: "model", ref: 2}}, "\r\n")
	tab, err := hitran.LoadCIA(nil, h2h2Low, h2h2High)
	if err != nil {
		t.Fatal(err)
	}
	if tab.Pair != [2]string{"H2", "H2"} {
		t.Errorf("pair %v", tab.Pair)
	}
	opacitytest.EqualF64(t, "T", tab.T, []float64{200, 300, 1000})
	// Union grid: 20..40 step 1 and 30..60 step 2 -> 20..40 and 42..60 step 2.
	if len(tab.Wavenumber) != 21+10 || tab.Wavenumber[0] != 2000 || tab.Wavenumber[len(tab.Wavenumber)-1] != 6000 {
		t.Fatalf("wavenumber axis %v", tab.Wavenumber)
	}
	nW := len(tab.Wavenumber)
	get := func(temp, nuCm float64) float64 {
		return tab.K[indexOf(tab.T, temp)*nW+indexOf(tab.Wavenumber, nuCm*100)]
	}
	check := func(temp, nuCm float64, want float64, why string) {
		t.Helper()
		if got := get(temp, nuCm); math.Abs(got-want) > 1e-14*want {
			t.Errorf("k(%g K, %g cm^-1) = %g, want %g (%s)", temp, nuCm, got, want, why)
		}
	}
	check(200, 25, kfun(25, 200)*1e-10, "file value")
	check(1000, 50, kfun(50, 1000)*1e-10, "file value, CRLF file")
	check(1000, 25, kfun(25, 300)*1e-10, "only the low file covers 25: held at its warmest block")
	check(200, 50, kfun(50, 1000)*1e-10, "only the high file covers 50")
	// 31 cm^-1 at 1000 K: the high file interpolates between its rows at 30
	// and 32, so k = mean of the two; between 300 and 1000 K linear in T.
	k1000 := (kfun(30, 1000) + kfun(32, 1000)) / 2
	w := (1000.0 - 300) / (1000 - 300)
	check(1000, 31, ((1-w)*kfun(31, 300)+w*k1000)*1e-10, "row interpolation at 1000 K")
	if tab.Meta["cia_references"] != "1,2" {
		t.Errorf("references %q, want \"1,2\"", tab.Meta["cia_references"])
	}
	if src, _ := opacity.ParseSources(tab.Meta[opacity.MetaSources]); len(src) != 2 {
		t.Errorf("sources %v, want both files", src)
	}

	// H2-He: negative values clipped; a round trip through a table file.
	h2he := filepath.Join(dir, "H2-He.cia")
	kneg := func(nu, temp float64) float64 { return float64(int(nu)%5-1) * 1e-46 }
	writeCIA(t, h2he, "H2-He", []ciaSet{{lo: 100, hi: 110, step: 0.5, temps: []float64{500, 1500, 3000}, k: kneg, ref: 7}}, "\n")
	blocks, err := hitran.ReadCIAFile(h2he)
	if err != nil {
		t.Fatal(err)
	}
	if len(blocks) != 3 || blocks[1].T != 1500 || blocks[0].Ref != "7" {
		t.Fatalf("blocks %d, T %g, ref %q", len(blocks), blocks[1].T, blocks[0].Ref)
	}
	clipped := 0
	for _, b := range blocks {
		clipped += b.Clipped
	}
	// int(nu)%5 == 0 gives -1e-46 at nu = 100, 100.5, 105, 105.5, 110: 5 rows
	// per block, 3 blocks.
	if clipped != 15 {
		t.Errorf("%d values clipped, want 15", clipped)
	}
	he, err := hitran.CIAFromBlocks(blocks, nil)
	if err != nil {
		t.Fatal(err)
	}
	he.Meta[opacity.MetaProgramVersion] = "test"
	tf := filepath.Join(dir, "H2-He.parquet")
	if err := tablefile.WriteCIA(tf, he, false); err != nil {
		t.Fatal(err)
	}
	back, err := tablefile.ReadCIA(tf)
	if err != nil {
		t.Fatal(err)
	}
	opacitytest.EqualF64(t, "k", back.K, he.K)
	// Rows at 100 and 104 cm^-1: -1e-46 and 3e-46 cm^5 in the file.
	if back.K[0] != 0 || math.Abs(back.K[8]-3e-56) > 1e-70 {
		t.Errorf("k[0] = %g (want 0, clipped), k[8] = %g (want 3e-56)", back.K[0], back.K[8])
	}
}

// TestCIABadInput checks that malformed files give an error naming the
// file and the line.
func TestCIABadInput(t *testing.T) {
	const hdr = "               H2-H2    20.000    22.000      3  300.0 3.000E-46 -.999                             1\n"
	rows := "   20.0000  1.000E-46\n   21.0000  2.000E-46\n   22.0000  3.000E-46\n"
	cases := []struct {
		name, text, want string
		line             int
	}{
		{"empty", "", "empty", -1},
		{"blank lines only", "\n  \n\n", "empty", -1},
		{"count too large", strings.Replace(hdr, "      3", "      4", 1) + rows + hdr + rows, "not a data row", 5},
		{"count too small", strings.Replace(strings.Replace(hdr, "      3", "      2", 1), "    22.000", "    21.000", 1) + rows, "found a data row", 4},
		{"count too small, range", strings.Replace(hdr, "      3", "      2", 1) + rows, "does not match", 1},
		{"truncated block", hdr + rows[:44], "truncated", 1},
		{"non-numeric value", hdr + "   20.0000  1.000E-46\n   21.0000  abc\n   22.0000  3.000E-46\n", "not a number", 3},
		{"non-numeric wavenumber", hdr + "   20.0000  1.000E-46\n   2x.0000  2.0E-46\n   22.0000  3.000E-46\n", "not a number", 3},
		{"NaN value", hdr + "   20.0000  1.000E-46\n   21.0000  NaN\n   22.0000  3.000E-46\n", "finite", 3},
		{"unsorted wavenumbers", hdr + "   20.0000  1.000E-46\n   19.0000  2.000E-46\n   22.0000  3.000E-46\n", "ascending", 3},
		{"range mismatch", strings.Replace(hdr, "22.000", "23.000", 1) + rows, "does not match", 1},
		{"bad pair", strings.Replace(hdr, "H2-H2", "H2_H2", 1) + rows, "A-B", 1},
		{"bad count", strings.Replace(hdr, "      3", "    3.5", 1) + rows, "row count", 1},
		{"non-numeric header", strings.Replace(hdr, "300.0", "  hot", 1) + rows, "temperature", 1},
		{"negative temperature", strings.Replace(hdr, "300.0", "-10.0", 1) + rows, "not positive", 1},
		{"short header", "H2-H2 20 22 3\n" + rows, "at least 7", 1},
		{"fields run together", "H2-H2 20.000 22.000 3 300.0 3.000E-46-0.999 1\n" + rows, "maximum \"3.000E-46-0.999\": not a number", 1},
		{"no header", rows, "expected a block header", 1},
		{"one-field row", hdr + "   20.0000\n" + rows[22:], "1 field", 2},
		{"huge value", hdr + "   20.0000  1.000E+300\n" + rows[22:], "out of range", 2},
	}
	dir := t.TempDir()
	for i, c := range cases {
		path := filepath.Join(dir, fmt.Sprintf("case%d.cia", i))
		if err := os.WriteFile(path, []byte(c.text), 0o644); err != nil {
			t.Fatal(err)
		}
		_, err := hitran.ReadCIAFile(path)
		if err == nil {
			t.Errorf("%d %s: no error", i, c.name)
			continue
		}
		msg := err.Error()
		if !strings.Contains(msg, path) || !strings.Contains(msg, c.want) {
			t.Errorf("%d %s: error %q, want it to name the file and say %q", i, c.name, msg, c.want)
		}
		if c.line > 0 && !strings.Contains(msg, fmt.Sprintf("line %d:", c.line)) {
			t.Errorf("%d %s: error %q, want line %d", i, c.name, msg, c.line)
		}
	}

	// Combining blocks of two pairs, and an unsorted supplied grid.
	a := filepath.Join(dir, "a.cia")
	b := filepath.Join(dir, "b.cia")
	os.WriteFile(a, []byte(hdr+rows), 0o644)
	os.WriteFile(b, []byte(strings.Replace(hdr, "H2-H2", "H2-He", 1)+rows), 0o644)
	if _, err := hitran.LoadCIA(nil, a, b); err == nil || !strings.Contains(err.Error(), "differs") || !strings.Contains(err.Error(), b) {
		t.Errorf("two pairs: err = %v", err)
	}
	if _, err := hitran.LoadCIA([]float64{2000, 2100, 2050}, a); err == nil || !strings.Contains(err.Error(), "ascending") {
		t.Errorf("unsorted grid: err = %v", err)
	}
	if _, err := hitran.LoadCIA(nil, filepath.Join(dir, "missing.cia")); err == nil || !strings.Contains(err.Error(), "missing.cia") {
		t.Errorf("missing file: err = %v", err)
	}
}

// FuzzReadCIA feeds arbitrary text to the CIA reader: it must return an
// error or blocks that keep the documented invariants (row counts as
// declared, strictly ascending wavenumbers, finite non-negative values),
// and blocks of one pair must always combine into a valid table.
func FuzzReadCIA(f *testing.F) {
	const hdr = "               H2-H2    20.000    22.000      3  300.0 3.000E-46 -.999                             1\n"
	rows := "   20.0000  1.000E-46\n   21.0000 -2.000E-46\n   22.0000  3.000E-46\n"
	f.Add([]byte(hdr + rows))
	f.Add([]byte(hdr + rows + strings.Replace(hdr, "300.0", "500.0", 1) + rows))
	f.Add([]byte(strings.ReplaceAll(hdr+rows, "\n", "\r\n")))
	f.Add([]byte("H2-He 1 2 2 100 1e-45 -.999 comment 7\n1 1e-45 0.1\n2 2e-45 0.2\n"))
	f.Add([]byte(hdr + rows + strings.Replace(hdr, "H2-H2", "H2-He", 1) + rows))
	f.Add([]byte(""))
	f.Fuzz(func(t *testing.T, data []byte) {
		blocks, err := hitran.ReadCIA(strings.NewReader(string(data)), "fuzz")
		if err != nil {
			if !strings.Contains(err.Error(), "fuzz") {
				t.Fatalf("error %q does not name the input", err)
			}
			return
		}
		samePair := true
		for _, b := range blocks {
			if len(b.K) == 0 || len(b.K) != len(b.Wavenumber) {
				t.Fatalf("block at line %d: %d values, %d wavenumbers", b.Line, len(b.K), len(b.Wavenumber))
			}
			for i, v := range b.K {
				if !(v >= 0) || math.IsInf(v, 0) {
					t.Fatalf("block at line %d: k[%d] = %g", b.Line, i, v)
				}
				if i > 0 && !(b.Wavenumber[i] > b.Wavenumber[i-1]) {
					t.Fatalf("block at line %d: wavenumbers not ascending at %d", b.Line, i)
				}
			}
			samePair = samePair && b.Pair == blocks[0].Pair
		}
		tab, err := hitran.CIAFromBlocks(blocks, nil)
		if samePair && err != nil {
			t.Fatalf("blocks of one pair did not combine: %v", err)
		}
		if err == nil {
			if err := tab.Validate(); err != nil {
				t.Fatal(err)
			}
		}
	})
}
