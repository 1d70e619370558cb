package benchmarks

import (
	"math/rand/v2"
	"testing"

	"chord/report"
)

var sinkDetection report.GasDetection

// BenchmarkClassifyGas: the Savage-Dickey verdict of one gas from a chain
// of 32 walkers x 1000 steps (once per gas per summary; it sorts a copy
// of the samples, so it allocates by design).
func BenchmarkClassifyGas(b *testing.B) {
	for _, c := range []struct {
		name string
		mean float64
	}{{"UpperLimit", -11.5}, {"Detected", -4}} {
		b.Run(c.name, func(b *testing.B) {
			rng := rand.New(rand.NewPCG(1, 1))
			x := make([]float64, 32000)
			for i := range x {
				v := c.mean + 0.5*rng.NormFloat64()
				for v < -12 || v > -1 {
					v = c.mean + 0.5*rng.NormFloat64()
				}
				x[i] = v
			}
			b.ReportAllocs()
			for b.Loop() {
				d, err := report.ClassifyGas(x, -12, -1, 1000)
				if err != nil {
					b.Fatal(err)
				}
				sinkDetection = d
			}
		})
	}
}
