package retrieve

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat"

	"chord/forward"
)

func TestResolvingPowerBins(t *testing.T) {
	const r = 100.0
	b, err := ResolvingPowerBins(1*forward.Micron, 5*forward.Micron, r)
	if err != nil {
		t.Fatal(err)
	}
	// Definition of resolving power, R = centre/width (fact of the trade):
	// every bin has it to rounding, bins are adjacent and inside the range.
	for i := range b.Lo {
		c, w := 0.5*(b.Lo[i]+b.Hi[i]), b.Hi[i]-b.Lo[i]
		if math.Abs(c/w-r) > 1e-9*r {
			t.Fatalf("bin %d: R = %g", i, c/w)
		}
		if i > 0 && b.Lo[i] != b.Hi[i-1] {
			t.Fatalf("bin %d not adjacent", i)
		}
	}
	// The number of bins is ln(hi/lo)/ln((2R+1)/(2R-1)) = 160.94... -> 160.
	if b.Len() != 160 || b.Hi[b.Len()-1] > 5*forward.Micron {
		t.Fatalf("%d bins ending at %g", b.Len(), b.Hi[b.Len()-1])
	}
	for i, c := range []struct{ lo, hi, r float64 }{
		{0, 1e-6, 100}, {2e-6, 1e-6, 100}, {1e-6, 2e-6, 0.5}, {1e-6, 2e-6, math.Inf(1)}, {1e-6, 1.001e-6, 10},
	} {
		if _, err := ResolvingPowerBins(c.lo, c.hi, c.r); err == nil {
			t.Errorf("case %d accepted", i)
		}
	}
}

func TestNoiseErrors(t *testing.T) {
	dst := make([]float64, 3)
	if err := (Noise{PPM: 60, Transits: 4}).Errors(dst); err != nil || math.Abs(dst[2]-30e-6) > 1e-18 {
		t.Fatalf("60 ppm / sqrt(4): %v %v", dst, err)
	}
	if err := (Noise{PerBinPPM: []float64{10, 20, 40}, Transits: 16}).Errors(dst); err != nil || math.Abs(dst[1]-5e-6) > 1e-18 {
		t.Fatalf("per bin: %v %v", dst, err)
	}
	for i, c := range []struct {
		n    Noise
		want string
	}{
		{Noise{PPM: 0}, "must be positive"},
		{Noise{PPM: -30}, "must be positive"},
		{Noise{PPM: math.NaN()}, "must be positive"},
		{Noise{PPM: 30, Transits: -1}, "transits"},
		{Noise{PerBinPPM: []float64{1, 2}}, "2 per-bin errors for 3 bins"},
		{Noise{PerBinPPM: []float64{1, 0, 3}}, "bin 2"},
	} {
		if err := c.n.Errors(dst); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("case %d: %v, want %q", i, err, c.want)
		}
	}
}

// The drawn noise has the stated standard deviation: 2e4 deviates give it
// to 0.5% (one standard error of a sample standard deviation is
// 1/sqrt(2n) = 0.5%); the tolerance is 3 of those.
func TestAddNoise(t *testing.T) {
	const n = 20000
	d, s := make([]float64, n), make([]float64, n)
	for i := range s {
		s[i] = 50e-6
	}
	AddNoise(d, s, rand.New(rand.NewPCG(1, 2)))
	if sd := stat.StdDev(d, nil); math.Abs(sd/50e-6-1) > 0.015 {
		t.Fatalf("sd %g", sd)
	}
}
