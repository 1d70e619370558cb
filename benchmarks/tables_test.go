package benchmarks

import (
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"chord/forward/opacity"
	"chord/forward/opacity/tablefile"
)

// w1XSecTable is a table of the W1 size (DESIGN.md section 7): 13 pressures
// x 12 temperatures x 3000 wavenumbers from 0.6 to 12 um, with values of
// line-like spread over ten decades.
func w1XSecTable() *opacity.XSecTable {
	rng := rand.New(rand.NewPCG(1, 1))
	t := &opacity.XSecTable{Gas: "H2O", Meta: map[string]string{opacity.MetaProgramVersion: "bench"}}
	for i := range 13 {
		t.Log10P = append(t.Log10P, -2+float64(i)*0.625)
	}
	for i := range 12 {
		t.T = append(t.T, 200+float64(i)*250)
	}
	const n = 3000
	lo, hi := 1/12e-6, 1/0.6e-6 // m^-1
	for k := range n {
		t.Wavenumber = append(t.Wavenumber, lo+(hi-lo)*float64(k)/(n-1))
	}
	t.Sigma = make([]float32, 13*12*n)
	for i := range t.Sigma {
		t.Sigma[i] = float32(math.Pow(10, -30+10*rng.Float64()))
	}
	return t
}

var sinkXSec *opacity.XSecTable

// BenchmarkReadXSecFile reads (and fully checks) one W1-size table file.
func BenchmarkReadXSecFile(b *testing.B) {
	path := filepath.Join(b.TempDir(), "H2O.parquet")
	if err := tablefile.WriteXSec(path, w1XSecTable(), false); err != nil {
		b.Fatal(err)
	}
	st, err := os.Stat(path)
	if err != nil {
		b.Fatal(err)
	}
	b.SetBytes(st.Size())
	b.ReportAllocs()
	for b.Loop() {
		t, err := tablefile.ReadXSec(path)
		if err != nil {
			b.Fatal(err)
		}
		sinkXSec = t
	}
}

// BenchmarkWriteXSecFile writes one W1-size table file (temporary file,
// fsync, rename).
func BenchmarkWriteXSecFile(b *testing.B) {
	t := w1XSecTable()
	path := filepath.Join(b.TempDir(), "H2O.parquet")
	b.ReportAllocs()
	for b.Loop() {
		if err := tablefile.WriteXSec(path, t, true); err != nil {
			b.Fatal(err)
		}
	}
}
