package obs

import (
	"math"
	"strings"
	"testing"
)

func TestReadBinsFile(t *testing.T) {
	b, e, err := parseBins(strings.NewReader("# bins\nwavelength_um width_um error_ppm\n1.0 0.1 50\n1.1 0.1 60\n"), "b.txt")
	if err != nil || b.Len() != 2 || e[1] != 60 || math.Abs(b.Lo[1]-1.05e-6) > 1e-18 {
		t.Fatalf("%+v %v %v", b, e, err)
	}
	b, e, err = parseBins(strings.NewReader("edge_low_nm,edge_high_nm\n1000,1100\n1100,1200\n"), "b.csv")
	if err != nil || b.Len() != 2 || e != nil || math.Abs(b.Hi[1]-1200e-9) > 1e-20 {
		t.Fatalf("%+v %v %v", b, e, err)
	}
	for i, c := range []struct{ text, want string }{
		{"lo,hi\n1,2\n", "b.csv:1: unknown column \"lo\""},
		{"edge_low_um,width_um\n1,2\n", "must name edge_low_um and edge_high_um"},
		{"edge_low_um,edge_high_um\n1,2,3\n", "b.csv:2: 3 fields"},
		{"edge_low_um,edge_high_um\n2,1\n", "b.csv:2: bin 2-1 um"},
		{"edge_low_um,edge_high_um\n1,2\n1.5,3\n", "b.csv:3: bin 1.5-3 um overlaps"},
		{"edge_low_um,edge_high_um\n1,NaN\n", "not a finite number"},
		{"edge_low_um,edge_high_um,error_ppm\n1,2,0\n", "error_ppm 0"},
		{"edge_low_um,edge_high_um,error_ppm\n1,2,1e300\n", "b.csv:2: error_ppm 1e+300: a transit-depth error of 1e+300 ppm is outside the physical range"},
		{"\xff\xfee\x00d\x00", "b.csv: the file is encoded in UTF-16"},
		{"# nothing\n", "no bins"},
	} {
		if _, _, err := parseBins(strings.NewReader(c.text), "b.csv"); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("case %d: %v, want %q", i, err, c.want)
		}
	}
}

// FuzzParseBins: any bins file gives bins or an error naming the file,
// never a panic; accepted bins are positive, ordered and have matching
// error counts.
func FuzzParseBins(f *testing.F) {
	f.Add("edge_low_um,edge_high_um\n1,2\n2,3\n")
	f.Add("wavelength_nm width_nm error_ppm\n1000 10 40\n1010 10 45\n")
	f.Add("# c\nedge_low_um,edge_high_um,error_ppm\n1,NaN,3\n")
	f.Fuzz(func(t *testing.T, text string) {
		b, e, err := parseBins(strings.NewReader(text), "f.csv")
		if err != nil {
			if !strings.Contains(err.Error(), "f.csv") {
				t.Fatalf("error without the file name: %v", err)
			}
			return
		}
		if e != nil && len(e) != b.Len() {
			t.Fatalf("%d errors for %d bins", len(e), b.Len())
		}
		for i := range b.Lo {
			if !(b.Lo[i] > 0 && b.Hi[i] > b.Lo[i]) {
				t.Fatalf("bin %d: %g-%g", i, b.Lo[i], b.Hi[i])
			}
		}
	})
}
