package obs

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

// TestRadiusRatioConversion: Rp/Rs 0.1 ± 0.001 is a depth of 0.01 ±
// 0.0002 (D = k^2, sigma_D = 2 k sigma_k; first-order error propagation,
// fact of the trade). Tolerance: a few ulps of the float64 products.
func TestRadiusRatioConversion(t *testing.T) {
	d, err := ReadDataset("../testdata/obs/rprs.csv")
	if err != nil {
		t.Fatal(err)
	}
	if d.Name != "rprs" || d.Len() != 2 {
		t.Fatalf("name %q, %d bins", d.Name, d.Len())
	}
	check := func(what string, got, want float64) {
		t.Helper()
		if !scalar.EqualWithinAbsOrRel(got, want, 0, 1e-14) {
			t.Errorf("%s = %.17g, want %.17g", what, got, want)
		}
	}
	check("depth", d.Depth[0], 0.01)
	check("error", d.Sigma[0], 0.0002)
	check("depth 2", d.Depth[1], 0.101*0.101)
	check("error 2", d.Sigma[1], 2*0.101*0.001)
	// Centre 1.00 um, width 0.02 um: 0.99-1.01 um.
	check("lo", d.Lo[0], 0.99e-6)
	check("hi", d.Hi[0], 1.01e-6)
	if len(d.Notes) != 0 {
		t.Errorf("unexpected notes %q", d.Notes)
	}
}

// TestPPMAndNanometres: 10000 ppm is 0.01; 1000 nm is 1 um (SI prefixes);
// asymmetric errors +60/-40 ppm average to 50 ppm; unsorted rows are sorted
// with a note, keeping their line numbers.
func TestPPMAndNanometres(t *testing.T) {
	d, err := ReadDataset("../testdata/obs/ppm-nm.txt")
	if err != nil {
		t.Fatal(err)
	}
	wantLo := []float64{1.0e-6, 1.1e-6, 1.2e-6}
	wantD := []float64{0.01, 0.0101, 0.01015}
	wantLine := []int{5, 6, 4}
	for i := range wantLo {
		if !scalar.EqualWithinAbsOrRel(d.Lo[i], wantLo[i], 0, 1e-14) || !scalar.EqualWithinAbsOrRel(d.Depth[i], wantD[i], 0, 1e-14) {
			t.Errorf("bin %d: lo %g depth %g, want %g %g", i, d.Lo[i], d.Depth[i], wantLo[i], wantD[i])
		}
		if !scalar.EqualWithinAbsOrRel(d.Sigma[i], 50e-6, 0, 1e-12) {
			t.Errorf("bin %d: error %g, want 5e-5", i, d.Sigma[i])
		}
		if d.Line[i] != wantLine[i] {
			t.Errorf("bin %d from line %d, want %d", i, d.Line[i], wantLine[i])
		}
	}
	notes := strings.Join(d.Notes, "\n")
	if !strings.Contains(notes, "asymmetric") || !strings.Contains(notes, "sorted") {
		t.Errorf("notes %q lack the asymmetric-error and sorting remarks", notes)
	}
}

func TestFractionEdges(t *testing.T) {
	d, err := ReadDataset("../testdata/obs/fraction.csv")
	if err != nil {
		t.Fatal(err)
	}
	if d.Depth[1] != 0.0124 || d.Sigma[0] != 0.0001 || d.Hi[1] != 1.2e-6 {
		t.Errorf("read %+v", d)
	}
}

// TestBadObservations: every malformed file is an error naming the file and,
// where a row is at fault, its line.
func TestBadObservations(t *testing.T) {
	cases := []struct{ file, want string }{
		{"obs-nan.csv", ":2: column 3 (depth): NaN is not a finite number; expected the depth"},
		{"obs-inf.csv", ":2: column 4 (error): +Inf is not a finite number"},
		{"obs-zero-error.csv", ":3: column 4 (error): error 0 must be positive"},
		{"obs-negative-error.csv", ":2: column 4 (error_plus), column 5 (error_minus): error_plus 20 and error_minus -5 must both be positive"},
		{"obs-depth-one.csv", ":2: column 3 (depth_percent) in percent: 100 is a transit depth of 1, outside [0, 1)"},
		{"obs-depth-negative.csv", ":2: column 3 (depth_ppm) in ppm: -20 is a transit depth of -2e-05, outside [0, 1)"},
		{"obs-rprs-big.csv", ":2: column 3 (radius_ratio) in rp_rs: 1.2 is a transit depth of 1.44"},
		{"obs-rprs-negative.csv", ":2: column 3 (radius_ratio): radius_ratio -0.1 must not be negative"},
		{"obs-overlap.csv", ":3: bin 1.05-1.2 um overlaps the bin 1-1.1 um on line 2"},
		{"obs-duplicate.csv", ":4: duplicated bin 0.95-1.05 um (also on line 2)"},
		{"obs-no-header.csv", ":1: the first line that is not a comment must be a header"},
		{"obs-unknown-column.csv", `:1: header: unknown column "flux"`},
		{"obs-bad-unit.csv", `:1: header: column "wavelength_mm": unknown wavelength unit "mm"`},
		{"obs-no-width.csv", ":1: header: a wavelength column needs a width column"},
		{"obs-two-depths.csv", `:1: header: two depth columns, "depth" and "depth_ppm"`},
		{"obs-no-error.csv", ":1: header: no error column"},
		{"obs-short-row.csv", ":3: 3 fields, the header names 4"},
		{"obs-not-number.csv", `:3: column 3 (depth): "abc" is not a number; expected the depth`},
		{"obs-edges-reversed.csv", ":2: column 2 (edge_high_um): edge_high 1.1 must be above edge_low 1.2"},
		{"obs-zero-width.csv", ":2: column 2 (width_um): bin width 0 must be positive"},
		{"obs-empty.csv", ": no header and no data"},
		{"obs-header-only.csv", ": header but no data rows"},
		{"obs-mixed-bins.csv", ":1: header: give bins either as wavelength and width or as edge_low and edge_high"},
		// Error bars outside the physical range (issue 12: these blamed the
		// priors).
		{"obs-error-huge.csv", ":3: column 4 (error_ppm): a transit-depth error of 1e+300 ppm is outside the physical range 0.001 to 1e+06 ppm"},
		{"obs-error-tiny.csv", ":2: column 4 (error_ppm): a transit-depth error of 1e-300 ppm is outside the physical range"},
	}
	seen := map[string]bool{}
	for _, c := range cases {
		seen[c.file] = true
		path := filepath.Join("..", "testdata", "bad", c.file)
		_, err := ReadDataset(path)
		if err == nil {
			t.Errorf("%s: no error", c.file)
			continue
		}
		if !strings.HasPrefix(err.Error(), path) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %q, want it to start with the path and contain %q", c.file, err, c.want)
		}
	}
	// Every obs-* file in testdata/bad has a case.
	files, _ := filepath.Glob("../testdata/bad/obs-*")
	for _, f := range files {
		if !seen[filepath.Base(f)] {
			t.Errorf("%s has no test case", f)
		}
	}
	if _, err := ReadDataset("../testdata/obs/missing.csv"); err == nil || !strings.Contains(err.Error(), "missing.csv") {
		t.Errorf("missing file: %v", err)
	}
}

// TestAdjacentRoundedBins: centres 1.10 and 1.12 um with widths 0.02 um
// share an edge that float64 rounds differently in the two rows; that is
// not an overlap.
func TestAdjacentRoundedBins(t *testing.T) {
	in := "wavelength_um,width_um,depth,error\n"
	for i := range 50 {
		in += fmt.Sprintf("%.2f,0.02,0.01,0.0001\n", 1.1+0.02*float64(i))
	}
	if _, err := ParseDataset(strings.NewReader(in), "adjacent.csv", "a"); err != nil {
		t.Error(err)
	}
}

func TestCheckCoverage(t *testing.T) {
	d, err := ReadDataset("../testdata/obs/fraction.csv")
	if err != nil {
		t.Fatal(err)
	}
	wl := make([]float64, 101)
	for i := range wl {
		wl[i] = 1.05e-6 + float64(i)*0.01e-6
	}
	err = d.Cover(wl, 2)
	if err == nil || !strings.Contains(err.Error(), "../testdata/obs/fraction.csv:2: bin 1-1.1 um begins below the model wavelength range 1.05-2.05 um") {
		t.Errorf("coverage error %v", err)
	}
	for i := range wl {
		wl[i] = 0.9e-6 + float64(i)*0.07e-6 // 1.04 um alone lies in 1.0-1.1 um
	}
	err = d.Cover(wl, 2)
	if err == nil || !strings.Contains(err.Error(), "fraction.csv:2: bin 1-1.1 um holds 1 model points, need at least 2") {
		t.Errorf("coverage error %v", err)
	}
	if err := d.Cover(wl, 1); err != nil {
		t.Error(err)
	}
}

// FuzzParseDataset: any input gives a dataset that obeys the documented
// invariants, or an error; never a panic.
func FuzzParseDataset(f *testing.F) {
	for _, dir := range []string{"../testdata/obs", "../testdata/bad"} {
		files, _ := filepath.Glob(filepath.Join(dir, "*"))
		for _, p := range files {
			if b, err := os.ReadFile(p); err == nil {
				f.Add(b)
			}
		}
	}
	f.Fuzz(func(t *testing.T, in []byte) {
		d, err := ParseDataset(strings.NewReader(string(in)), "fuzz.csv", "fuzz")
		if err != nil {
			if !strings.HasPrefix(err.Error(), "fuzz.csv") {
				t.Fatalf("error %q does not name the file", err)
			}
			return
		}
		for i := range d.Lo {
			if !(d.Lo[i] > 0 && d.Hi[i] > d.Lo[i]) || math.IsInf(d.Hi[i], 0) {
				t.Fatalf("bin %d: %g-%g", i, d.Lo[i], d.Hi[i])
			}
			if !(d.Depth[i] >= 0 && d.Depth[i] < 1) || !(d.Sigma[i] > 0) || math.IsInf(d.Sigma[i], 0) {
				t.Fatalf("bin %d: depth %g error %g", i, d.Depth[i], d.Sigma[i])
			}
			if i > 0 && d.Lo[i] < d.Lo[i-1] {
				t.Fatalf("bins not sorted at %d", i)
			}
		}
	})
}

// TestByteOrderMarkAndCRLF: files saved by spreadsheet programs start with
// a UTF-8 byte-order mark and end lines with CR LF.
func TestByteOrderMarkAndCRLF(t *testing.T) {
	in := "\ufeffwavelength_um,width_um,depth,error\r\n1.0,0.1,0.01,0.001\r\n"
	d, err := ParseDataset(strings.NewReader(in), "bom.csv", "bom")
	if err != nil {
		t.Fatal(err)
	}
	if d.Len() != 1 || d.Depth[0] != 0.01 {
		t.Errorf("read %+v", d)
	}
}
