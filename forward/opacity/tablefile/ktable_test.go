package tablefile

import (
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"chord/forward/opacity"
)

// testK returns a small k-table with values spread over many decades and
// the default split quadrature, non-decreasing in g as KTable.Validate
// requires.
func testK(gas string, nP, nT, nB int, seed uint64) *opacity.KTable {
	rng := rand.New(rand.NewPCG(seed, 4))
	q := opacity.DefaultQuadrature()
	t := &opacity.KTable{Gas: gas, G: q.G, W: q.W, Meta: map[string]string{opacity.MetaProgramVersion: "test", opacity.MetaBuildSettings: `{"quadrature":"16"}`}}
	for i := range nP {
		t.Log10P = append(t.Log10P, -2+float64(i)/6)
	}
	for i := range nT {
		t.T = append(t.T, 100+300*float64(i)+rng.Float64())
	}
	for b := range nB {
		t.Lo = append(t.Lo, math.Exp(float64(b)/100)*1e-6)
		t.Hi = append(t.Hi, math.Exp(float64(b+1)/100)*1e-6)
	}
	ng := len(q.G)
	t.K = make([]float32, nP*nT*nB*ng)
	for o := 0; o < len(t.K); o += ng {
		v := float32(0)
		if o%(3*ng) != 0 { // some bins all zero
			v = float32(math.Pow(10, -40+10*rng.Float64()))
		}
		for i := range ng {
			t.K[o+i] = v
			v *= float32(1 + rng.Float64())
		}
	}
	return t
}

// TestKFileRoundTrip: a k-table reads back exactly (axes, bins, nodes,
// weights, every float32 bit, metadata), through ReadK, Read and LoadDir,
// which fills Set.K beside a cross-section table of the same gas.
func TestKFileRoundTrip(t *testing.T) {
	dir := t.TempDir()
	want := testK("CO", 3, 4, 5, 1)
	path := filepath.Join(dir, "CO.k.parquet")
	if err := WriteK(path, want, false); err != nil {
		t.Fatal(err)
	}
	got, err := ReadK(path)
	if err != nil {
		t.Fatal(err)
	}
	for _, ax := range []struct {
		name      string
		got, want []float64
	}{{"log10P", got.Log10P, want.Log10P}, {"T", got.T, want.T}, {"Lo", got.Lo, want.Lo}, {"Hi", got.Hi, want.Hi}, {"G", got.G, want.G}, {"W", got.W, want.W}} {
		if !slices.Equal(ax.got, ax.want) {
			t.Errorf("%s: got %v, want %v", ax.name, ax.got, ax.want)
		}
	}
	equalF32(t, "k", got.K, want.K)
	if got.Gas != "CO" || got.Meta[opacity.MetaBuildSettings] != want.Meta[opacity.MetaBuildSettings] || got.Meta[MetaKind] != KindK ||
		got.Meta[MetaShape] != "3,4,5,16" || got.Meta[MetaUnitsKCoeff] != "m^2 molecule^-1" {
		t.Errorf("metadata %v", got.Meta)
	}
	if tab, err := Read(path); err != nil || tab.K == nil || tab.XSec != nil || tab.CIA != nil {
		t.Errorf("Read: %v %+v", err, tab)
	}
	if _, err := ReadXSec(path); err == nil || !strings.Contains(err.Error(), "holds a ktable table, not a xsec table") {
		t.Errorf("ReadXSec of a k-table file: %v", err)
	}
	if err := WriteXSec(filepath.Join(dir, "CO.parquet"), testXSec("CO", 2, 2, 3, 2), false); err != nil {
		t.Fatal(err)
	}
	set, err := LoadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	if set.K["CO"] == nil || set.XSec["CO"] == nil || len(set.Files) != 2 {
		t.Errorf("LoadDir: k %v, xsec %v, files %v", set.K, set.XSec, set.Files)
	}
	// A second k-table of the same gas is an error naming both files.
	if err := WriteK(filepath.Join(dir, "CO-again.parquet"), want, false); err != nil {
		t.Fatal(err)
	}
	if _, err := LoadDir(dir); err == nil || !strings.Contains(err.Error(), "k-tables of gas CO are in both") {
		t.Errorf("duplicate k-tables: %v", err)
	}
}

// TestKFileCorrupt: a file with a flipped byte is either refused (the
// content checksum or the Parquet decoder) or, where the byte held nothing
// read (statistics, padding), reads as the very table written; a table
// that does not validate is not written.
func TestKFileCorrupt(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "H2O.parquet")
	if err := WriteK(path, testK("H2O", 2, 2, 3, 5), false); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	want := testK("H2O", 2, 2, 3, 5)
	bad := filepath.Join(dir, "bad.parquet")
	refused := 0
	for pos := 4; pos < len(b)-4; pos += 7 {
		c := slices.Clone(b)
		c[pos] ^= 0x40
		if err := os.WriteFile(bad, c, 0o644); err != nil {
			t.Fatal(err)
		}
		got, err := ReadK(bad)
		if err != nil {
			if !strings.Contains(err.Error(), "bad.parquet") {
				t.Errorf("byte %d: error %v does not name the file", pos, err)
			}
			refused++
			continue
		}
		if !slices.Equal(got.K, want.K) || !slices.Equal(got.Lo, want.Lo) || !slices.Equal(got.W, want.W) {
			t.Errorf("byte %d flipped: read a different table without error", pos)
		}
	}
	if refused == 0 {
		t.Error("no corrupted file was refused")
	}
	k := testK("H2O", 2, 2, 3, 5)
	k.K[1], k.K[2] = 1, 0 // decreasing in g
	if err := WriteK(filepath.Join(dir, "dec.parquet"), k, false); err == nil || !strings.Contains(err.Error(), "non-decreasing") {
		t.Errorf("decreasing k(g) written: %v", err)
	}
}
