package benchmarks

import (
	"bytes"
	"fmt"
	"math/rand/v2"
	"strings"
	"testing"

	"chord/forward/opacity/demo"
	"chord/forward/opacity/exomol"
	"chord/forward/opacity/lbl"
)

// exomolSink keeps the benchmarked lines alive.
var exomolSink float64

// BenchmarkExoMolTrans measures reading ExoMol transitions: parsing one
// row "i_upper i_lower A nu" and converting it to a Line with its 296 K
// intensity. One op reads a synthetic list of 100000 transitions between
// 5000 states, in the published layout; ns/transition is reported.
func BenchmarkExoMolTrans(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 2))
	var st strings.Builder
	const nStates, nTrans = 5000, 100000
	for i := 1; i <= nStates; i++ {
		fmt.Fprintf(&st, "%12d %12.6f %6d %7d\n", i, float64(i)*3.7, 2*(i%40)+1, i%40)
	}
	states, err := exomol.ParseStates(strings.NewReader(st.String()), "bench.states")
	if err != nil {
		b.Fatal(err)
	}
	conv, err := exomol.NewConverter(nil, states, exomol.Options{})
	if err != nil {
		b.Fatal(err)
	}
	var tr bytes.Buffer
	for range nTrans {
		up := 2 + rng.IntN(nStates-1)
		lo := 1 + rng.IntN(up-1)
		fmt.Fprintf(&tr, "%12d %12d %10.4e %12.6f\n", up, lo, rng.Float64()*10, float64(up-lo)*3.7)
	}
	data := tr.Bytes()
	b.ReportAllocs()
	b.SetBytes(int64(len(data)))
	for b.Loop() {
		err := conv.ScanTrans(bytes.NewReader(data), "bench.trans", func(l lbl.Line) error {
			exomolSink += l.S
			return nil
		})
		if err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/nTrans, "ns/transition")
}

// BenchmarkDemoBuild measures building the whole demo opacity set in
// memory (eight gases through BuildXSec on the 13 x 12 x 7379 demo grid,
// plus the two demo CIA tables); one op is one complete build. Run it with
// -benchtime 1x or 3x: an op takes seconds.
func BenchmarkDemoBuild(b *testing.B) {
	b.ReportAllocs()
	for b.Loop() {
		s, err := demo.Build(nil)
		if err != nil {
			b.Fatal(err)
		}
		exomolSink += float64(len(s.XSec))
	}
}
