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
	// bins with edges exp(k/R) have centre/width = coth(1/(2R))/2, R to
	// 1/(12 R^2) (Taylor series of coth, fact of calculus); bins are
	// adjacent, inside the range, and their edges are exp(k/R) um.
	for i := range b.Lo {
		c, w := 0.5*(b.Lo[i]+b.Hi[i]), b.Hi[i]-b.Lo[i]
		if math.Abs(c/w-r) > r/(12*r*r)*1.01 {
			t.Fatalf("bin %d: R = %.10g", i, c/w)
		}
		if i > 0 && b.Lo[i] != b.Hi[i-1] {
			t.Fatalf("bin %d not adjacent", i)
		}
		k := r * math.Log(b.Lo[i]/Micron)
		if math.Abs(k-math.Round(k)) > 1e-6 {
			t.Fatalf("bin %d starts at exp(%g/R) um, not at an integer k", i, k)
		}
	}
	// k from ceil(R ln 1) = 0 to floor(R ln 5) = 160: 160 bins.
	if b.Len() != 160 || b.Hi[b.Len()-1] > 5*Micron {
		t.Fatalf("%d bins ending at %g", b.Len(), b.Hi[b.Len()-1])
	}
	// R = 10 bins are unions of R = 100 bins (the k-tables' use).
	c, err := ResolvingPowerBins(1*Micron, 5*Micron, 10)
	if err != nil {
		t.Fatal(err)
	}
	for i := range c.Lo {
		if math.Abs(c.Lo[i]-b.Lo[10*i])/c.Lo[i] > 1e-12 {
			t.Fatalf("R = 10 bin %d starts at %g, the R = 100 bin %d at %g", i, c.Lo[i], 10*i, b.Lo[10*i])
		}
	}
	for i, c := range []struct{ lo, hi, r float64 }{
		{0, 1e-6, 100}, {2e-6, 1e-6, 100}, {1e-6, 2e-6, 0.5}, {1e-6, 2e-6, math.Inf(1)}, {1e-6, 1.001e-6, 10},
	} {
		if _, err := ResolvingPowerBins(c.lo, c.hi, c.r); err == nil {
			t.Errorf("case %d accepted", i)
		}
	}
}
