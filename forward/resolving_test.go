package forward

import (
	"math"
	"testing"
)

func TestResolvingPowerBins(t *testing.T) {
	const r = 100.0
	b, err := ResolvingPowerBins(1*Micron, 5*Micron, r)
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
	if b.Len() != 160 || b.Hi[b.Len()-1] > 5*Micron {
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
