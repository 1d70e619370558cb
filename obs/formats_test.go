package obs

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

// table is the expected content of one data set: edges in um, depths and
// errors as fractions, source lines.
type table struct {
	name       string
	lo, hi     []float64
	depth, sig []float64
	line       []int
}

// checkTable compares d with want. The expected values are the files'
// numbers converted by hand (1 um = 1e-6 m, 1 nm = 1e-9 m, 1% = 1e-2,
// 1 ppm = 1e-6, SI prefixes; D = k^2 and sigma_D = 2 k sigma_k for
// Rp/Rs = k, first-order error propagation, fact of the trade); the
// tolerance is a few ulps of the float64 arithmetic.
func checkTable(t *testing.T, d *Dataset, want table) {
	t.Helper()
	if d.Name != want.name || d.Len() != len(want.lo) {
		t.Fatalf("data set %q with %d bins, want %q with %d", d.Name, d.Len(), want.name, len(want.lo))
	}
	eq := func(what string, i int, got, w float64) {
		t.Helper()
		if !scalar.EqualWithinAbsOrRel(got, w, 0, 1e-12) {
			t.Errorf("%s bin %d: %s = %.17g, want %.17g", d.Name, i, what, got, w)
		}
	}
	for i := range want.lo {
		eq("lo", i, d.Lo[i], want.lo[i]*1e-6)
		eq("hi", i, d.Hi[i], want.hi[i]*1e-6)
		eq("depth", i, d.Depth[i], want.depth[i])
		eq("sigma", i, d.Sigma[i], want.sig[i])
		if d.Line[i] != want.line[i] {
			t.Errorf("%s bin %d from line %d, want %d", d.Name, i, d.Line[i], want.line[i])
		}
	}
}

func fixture(name string) string { return filepath.Join("..", "testdata", "obs", "formats", name) }

// TestIPAC: an IPAC table with keywords, comments, types, units (microns,
// %), null values, asymmetric errors, a column chord does not read and an
// instrument column that splits it into two data sets.
func TestIPAC(t *testing.T) {
	ds, err := Read(fixture("velmora-c.tbl"), ReadOptions{Columns: map[string]Column{
		"wavelength": {Name: "wv_center"}, "width": {Name: "wv_width"}, "depth": {Name: "transit_depth"},
		"error_plus": {Name: "tran_unc_plus"}, "error_minus": {Name: "TRAN_UNC_MINUS"}, "instrument": {Name: "instrument"},
	}})
	if err != nil {
		t.Fatal(err)
	}
	if len(ds) != 2 {
		t.Fatalf("%d data sets, want 2", len(ds))
	}
	checkTable(t, ds[0], table{name: "velmora_c_Hesper_VIS",
		lo: []float64{0.55, 0.65, 0.75}, hi: []float64{0.65, 0.75, 0.85},
		depth: []float64{0.012010, 0.012040, 0.012080}, sig: []float64{5e-5, 4.5e-5, 6e-5}, line: []int{8, 9, 10}})
	checkTable(t, ds[1], table{name: "velmora_c_Hesper_IR",
		lo: []float64{1.0, 1.5}, hi: []float64{1.5, 2.0},
		depth: []float64{0.012150, 0.012230}, sig: []float64{3e-5, 3e-5}, line: []int{11, 12}})
	if ds[0].Instrument != "Hesper/VIS" || ds[1].Instrument != "Hesper IR" {
		t.Errorf("instruments %q, %q", ds[0].Instrument, ds[1].Instrument)
	}
	notes := strings.Join(append(ds[0].Notes, ds[1].Notes...), "\n")
	for _, w := range []string{"asymmetric", "splits the file into 2 data sets"} {
		if !strings.Contains(notes, w) {
			t.Errorf("notes %q lack %q", notes, w)
		}
	}
}

// TestECSV: a comma-delimited ECSV file with units in its header, half
// widths (width = "half"), quoted fields and a missing value in a column
// not read; and a space-delimited one with edges in nm, Rp/Rs depths
// (depth_unit, the file states no unit) and an instrument column.
func TestECSV(t *testing.T) {
	ds, err := Read(fixture("tarsk-b.ecsv"), ReadOptions{Width: "half", Columns: map[string]Column{
		"wavelength": {Name: "lambda"}, "width": {Name: "half_width"}, "depth": {Name: "depth"}, "error": {Name: "depth_err"},
	}})
	if err != nil {
		t.Fatal(err)
	}
	checkTable(t, ds[0], table{name: "tarsk_b",
		lo: []float64{1.05, 1.15, 1.25}, hi: []float64{1.15, 1.25, 1.35},
		depth: []float64{4510e-6, 4530e-6, 4555e-6}, sig: []float64{40e-6, 42e-6, 45e-6}, line: []int{14, 15, 16}})

	ds, err = Read(fixture("tarsk-b-rprs.ecsv"), ReadOptions{DepthUnit: "rp_rs", Columns: map[string]Column{
		"edge_low": {Name: "wl_lo"}, "edge_high": {Name: "wl_hi"}, "depth": {Name: "rp_rs"}, "error": {Name: "rp_rs_err"}, "instrument": {Name: "instrument"},
	}})
	if err != nil {
		t.Fatal(err)
	}
	if len(ds) != 2 {
		t.Fatalf("%d data sets, want 2", len(ds))
	}
	checkTable(t, ds[0], table{name: "tarsk_b_rprs_Lumen_A", lo: []float64{1.0, 1.1}, hi: []float64{1.1, 1.2},
		depth: []float64{0.067 * 0.067, 0.0672 * 0.0672}, sig: []float64{2 * 0.067 * 0.0005, 2 * 0.0672 * 0.0005}, line: []int{10, 11}})
	checkTable(t, ds[1], table{name: "tarsk_b_rprs_LumenB", lo: []float64{1.15}, hi: []float64{1.25},
		depth: []float64{0.068 * 0.068}, sig: []float64{2 * 0.068 * 0.0006}, line: []int{12}})
}

// TestHeaderlessAndMapped: a whitespace table without a header read by
// position (depths in percent, wavelengths in um from the keys), and a
// CSV whose columns are not chord's (half widths in nm, percent).
func TestHeaderlessAndMapped(t *testing.T) {
	ds, err := Read(fixture("headerless.txt"), ReadOptions{WavelengthUnit: "um", DepthUnit: "percent", Columns: map[string]Column{
		"wavelength": {Position: 1}, "width": {Position: 2}, "depth": {Position: 4}, "error": {Position: 5},
	}})
	if err != nil {
		t.Fatal(err)
	}
	checkTable(t, ds[0], table{name: "headerless", lo: []float64{0.99, 1.01, 1.03}, hi: []float64{1.01, 1.03, 1.05},
		depth: []float64{0.00512, 0.00513, 0.00509}, sig: []float64{4e-5, 4e-5, 5e-5}, line: []int{3, 4, 5}})
	if len(ds[0].Notes) != 0 {
		t.Errorf("notes %q: edges equal up to float rounding need none", ds[0].Notes)
	}

	ds, err = Read(fixture("mapped.csv"), ReadOptions{WavelengthUnit: "nm", DepthUnit: "percent", Width: "half", Columns: map[string]Column{
		"wavelength": {Name: "centre_nm"}, "width": {Name: "halfwidth_nm"}, "depth": {Name: "td"}, "error": {Name: "td_err"},
	}})
	if err != nil {
		t.Fatal(err)
	}
	checkTable(t, ds[0], table{name: "mapped", lo: []float64{0.89, 0.91, 0.93}, hi: []float64{0.91, 0.93, 0.95},
		depth: []float64{0.005, 0.0052, 0.0051}, sig: []float64{4e-5, 4e-5, 5e-5}, line: []int{3, 4, 5}})
}

// TestRoundedEdges: centres and widths rounded to 4 decimals overlap by
// 5e-5 um (0.3% of a width): below the default tolerance they are snapped
// to their midpoints with a note; with edge_tolerance = 1e-4 the overlap is
// refused with digits enough to see it.
func TestRoundedEdges(t *testing.T) {
	ds, err := Read(fixture("rounded.csv"), ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	d := ds[0]
	// 1.0168 + 0.0169/2 = 1.02525 and 1.0338 - 0.0172/2 = 1.0252: midpoint 1.022225.
	mid := 0.5 * (1.02525 + 1.0252)
	if !scalar.EqualWithinAbsOrRel(d.Hi[1], mid*1e-6, 0, 1e-12) || d.Lo[2] != d.Hi[1] {
		t.Errorf("shared edge %.10g / %.10g um, want both %.10g", d.Hi[1]*1e6, d.Lo[2]*1e6, mid)
	}
	for i := 1; i < d.Len(); i++ {
		if d.Lo[i] > d.Hi[i-1] || d.Hi[i-1]-d.Lo[i] > 1e-9*d.Lo[i] {
			t.Errorf("bins %d and %d: %.17g and %.17g", i-1, i, d.Hi[i-1], d.Lo[i])
		}
	}
	if n := strings.Join(d.Notes, "\n"); !strings.Contains(n, "2 shared edges") || !strings.Contains(n, "5e-05 um") {
		t.Errorf("notes %q", n)
	}
	_, err = Read(fixture("rounded.csv"), ReadOptions{EdgeTolerance: 1e-4})
	want := "rounded.csv:6: bin 1.0252-1.0424 um overlaps the bin 1.00835-1.02525 um on line 5 by 5e-05 um (0.00296 of the narrower bin's width"
	if err == nil || !strings.Contains(err.Error(), want) {
		t.Errorf("overlap: %v, want %q", err, want)
	}
}

// TestRangeTolerance: a bin reaching the model grid's end up to rounding
// (1.12 um written as a centre minus half a width) is accepted and moved
// onto it; one reaching beyond by a real amount is refused with the digits
// that show it.
func TestRangeTolerance(t *testing.T) {
	in := "wavelength_um,width_um,depth,error\n1.1225,0.005,0.01,0.0001\n1.6375,0.005,0.01,0.0001\n"
	d, err := ParseDataset(strings.NewReader(in), "range.csv", "r")
	if err != nil {
		t.Fatal(err)
	}
	// The grid's ends a rounding step inside the data's: 1.12 um reached
	// two ways.
	wl := []float64{math.Nextafter(d.Lo[0], 1), 1.3e-6, 1.4e-6, 1.5e-6, math.Nextafter(d.Hi[1], 0)}
	if err := d.Cover(wl, 0); err != nil {
		t.Fatal(err)
	}
	if d.Lo[0] != wl[0] || d.Hi[1] != wl[4] {
		t.Errorf("edges %.17g, %.17g not moved onto the grid's ends %.17g, %.17g", d.Lo[0], d.Hi[1], wl[0], wl[4])
	}
	wl[0] = 1.12001e-6
	err = d.Cover(wl, 0)
	if err == nil || !strings.Contains(err.Error(), "range.csv:2: bin 1.12-1.125 um begins below the model wavelength range 1.12001-1.64 um") {
		t.Errorf("outside: %v", err)
	}
}

// TestBadFormats: malformed files and options, each an error naming the
// file, the line and the column where there is one, and what was expected.
func TestBadFormats(t *testing.T) {
	ipacCols := map[string]Column{"wavelength": {Name: "wl"}, "width": {Name: "dw"}, "depth": {Name: "d"}, "error": {Name: "e"}}
	ecsvCols := map[string]Column{"wavelength": {Name: "w"}, "width": {Name: "dw"}, "depth": {Name: "d"}, "error": {Name: "e"}}
	byPos := map[string]Column{"wavelength": {Position: 1}, "width": {Position: 2}, "depth": {Position: 3}, "error": {Position: 4}}
	cases := []struct {
		file string
		opt  ReadOptions
		want string
	}{
		{"ipac-under-bar.tbl", ReadOptions{Columns: ipacCols}, ":6: character 7 ('5') lies under a '|' of the header"},
		{"ipac-tab.tbl", ReadOptions{Columns: ipacCols}, ":5: a tab character"},
		{"ipac-field-count.tbl", ReadOptions{Columns: ipacCols}, ":3: header line with 3 fields between its bars; the column names line has 4 columns"},
		{"ipac-char-depth.tbl", ReadOptions{Columns: ipacCols}, `:1: column 3 (d) is declared "char"; depth is a number`},
		{"ipac-unit-conflict.tbl", ReadOptions{Columns: ipacCols, DepthUnit: "ppm"}, `: column 3 (d): the file's units line (line 3) gives the unit "%" but depth_unit = "ppm" gives "ppm"`},
		{"ipac-bad-unit.tbl", ReadOptions{Columns: ipacCols}, `: column 1 (wl): the file's units line (line 3): unknown wavelength unit "furlong" (um, nm or angstrom)`},
		{"ipac-null-depth.tbl", ReadOptions{Columns: ipacCols}, ":7: column 3 (d): no value (empty or null); expected the depth as a number"},
		{"ipac-no-names.tbl", ReadOptions{Format: FormatIPAC, Columns: ipacCols}, ":2: a data row before the column names line"},
		{"ipac-after-last.tbl", ReadOptions{Columns: ipacCols}, `:5: text after the last column (from character 27): "9"`},
		{"ipac-unit-conflict.tbl", ReadOptions{Columns: map[string]Column{"wavelength": {Name: "wavelen"}, "width": {Name: "dw"}, "depth": {Name: "d"}, "error": {Name: "e"}}}, `:1: columns.wavelength = "wavelen": no such column (the file's columns: wl, dw, d, e)`},
		{"ecsv-no-dashes.ecsv", ReadOptions{Columns: ecsvCols}, `:2: the ECSV header begins with the line "# ---"`},
		{"ecsv-bad-yaml.ecsv", ReadOptions{Columns: ecsvCols}, "the ECSV header is not valid YAML: yaml: line 5: mapping values are not allowed"},
		{"ecsv-delimiter.ecsv", ReadOptions{Columns: ecsvCols}, `: ECSV delimiter ";": a space or a comma`},
		{"ecsv-names.ecsv", ReadOptions{Columns: ecsvCols}, ":8: the column names line gives w, dw, depth, e; the ECSV header lists w, dw, d, e"},
		{"ecsv-fields.ecsv", ReadOptions{Columns: ecsvCols}, ":10: 3 fields, the header lists 4 columns"},
		{"ecsv-string-depth.ecsv", ReadOptions{Columns: ecsvCols}, `:8: column 3 (d) is declared "string"; depth is a number`},
		{"ecsv-quote.ecsv", ReadOptions{Columns: ecsvCols}, ":8: a quoted field is not closed"},
		{"ecsv-version.ecsv", ReadOptions{Columns: ecsvCols}, `:1: "# %ECSV 2.0": ECSV versions 0.9 and 1.x are read`},
		{"ecsv-no-depth-unit.ecsv", ReadOptions{Columns: ecsvCols}, ": column 3 (d): the file states no unit for the transit depth; give depth_unit (fraction, ppm, percent or rp_rs)"},
		{"headerless.txt", ReadOptions{DepthUnit: "ppm", Columns: map[string]Column{"wavelength": {Position: 1}, "width": {Position: 2}, "depth": {Position: 3}, "error": {Position: 7}}}, ": columns.error = 7: the rows have 4 columns"},
		{"headerless.txt", ReadOptions{DepthUnit: "ppm", Columns: byPos}, ": column 1: the file states no wavelength unit; give wavelength_unit (um, nm or angstrom)"},
		{"headerless.txt", ReadOptions{WavelengthUnit: "um", Columns: byPos}, ": column 3: the file states no unit for the transit depth; give depth_unit"},
		{"headerless.txt", ReadOptions{WavelengthUnit: "um", DepthUnit: "ppm", Columns: byPos}, ":3: column 3: \"x\" is not a number; expected the depth"},
		{"headerless.txt", ReadOptions{Columns: map[string]Column{"wavelength": {Position: 1}, "depth": {Name: "d"}}}, "columns: give every column by name (a file with a header) or every column by position"},
		{"headerless.txt", ReadOptions{Columns: map[string]Column{"flux": {Name: "f"}}}, "columns.flux: unknown quantity"},
		{"headerless.txt", ReadOptions{Width: "quarter"}, `width: "quarter"`},
		{"headerless.txt", ReadOptions{DepthUnit: "mmag"}, `depth_unit: unknown depth unit "mmag"`},
		{"instrument-empty.csv", ReadOptions{}, ":4: column 5 (instrument): no instrument given (empty or null); every row needs one"},
		{"instrument-clash.csv", ReadOptions{}, `:3: instruments "A/B" and "A B" both give the data set name "instrument_clash_A_B"`},
		{"duplicate-instruments.csv", ReadOptions{}, "(if the file holds several instruments' data, name its instrument column: columns.instrument)"},
		{"utf16.csv", ReadOptions{}, ": the file is encoded in UTF-16"},
	}
	for _, c := range cases {
		path := filepath.Join("..", "testdata", "bad", "formats", c.file)
		_, err := Read(path, c.opt)
		if err == nil {
			t.Errorf("%s: no error", c.file)
			continue
		}
		if !strings.HasPrefix(err.Error(), path) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error\n  %q\nwant it to start with the path and contain\n  %q", c.file, err, c.want)
		}
	}
}

// FuzzParseFormats: any input read as an IPAC table, an ECSV file or a
// headerless table, with a column mapping, gives data sets that obey the
// documented invariants (positive increasing edges, no overlaps beyond
// rounding, depths in [0, 1), positive finite errors), or an error naming
// the file; never a panic.
func FuzzParseFormats(f *testing.F) {
	for _, dir := range []string{"../testdata/obs/formats", "../testdata/bad/formats"} {
		files, _ := filepath.Glob(filepath.Join(dir, "*"))
		for _, p := range files {
			if b, err := os.ReadFile(p); err == nil {
				for k := range 3 {
					f.Add(b, uint8(k))
				}
			}
		}
	}
	named := map[string]Column{"wavelength": {Name: "wl"}, "width": {Name: "dw"}, "depth": {Name: "d"}, "error": {Name: "e"}, "instrument": {Name: "instrument"}}
	opts := []ReadOptions{
		{Format: FormatIPAC, Columns: named, WavelengthUnit: "um", DepthUnit: "ppm"},
		{Format: FormatECSV, Columns: named, Width: "half"},
		{Format: FormatTable, Columns: map[string]Column{"edge_low": {Position: 1}, "edge_high": {Position: 2}, "depth": {Position: 3}, "error": {Position: 4}, "instrument": {Position: 5}},
			WavelengthUnit: "nm", DepthUnit: "rp_rs"},
	}
	f.Fuzz(func(t *testing.T, in []byte, k uint8) {
		ds, err := Parse(bytes.NewReader(in), "fuzz.dat", "fuzz", opts[int(k)%len(opts)])
		if err != nil {
			if !strings.HasPrefix(err.Error(), "fuzz.dat") {
				t.Fatalf("error %q does not name the file", err)
			}
			return
		}
		for _, d := range ds {
			checkInvariants(t, d)
		}
	})
}

// checkInvariants fails t when d breaks what a read data set promises.
func checkInvariants(t *testing.T, d *Dataset) {
	t.Helper()
	for i := range d.Lo {
		if !(d.Lo[i] > 0 && d.Hi[i] > d.Lo[i]) || math.IsInf(d.Hi[i], 0) {
			t.Fatalf("%s bin %d: %g-%g", d.Name, i, d.Lo[i], d.Hi[i])
		}
		if !(d.Depth[i] >= 0 && d.Depth[i] < 1) || !(d.Sigma[i] > 0) || math.IsInf(d.Sigma[i], 0) {
			t.Fatalf("%s bin %d: depth %g error %g", d.Name, i, d.Depth[i], d.Sigma[i])
		}
		if i > 0 && (d.Lo[i] < d.Lo[i-1] || d.Lo[i] < d.Hi[i-1]-DefaultEdgeTolerance*(d.Hi[i]-d.Lo[i])-RangeTolerance*d.Lo[i]) {
			t.Fatalf("%s bins %d, %d overlap: %g-%g, %g-%g", d.Name, i-1, i, d.Lo[i-1], d.Hi[i-1], d.Lo[i], d.Hi[i])
		}
	}
}
