package forward

import (
	"math"
	"testing"
)

// TestOneMinusExpNeg checks the branch-free 1 - exp(-t) against the
// standard library's math.Expm1 (Go 1.26, accurate to about 1 ulp).
func TestOneMinusExpNeg(t *testing.T) {
	worst := 0.0
	for i := 0; i <= 200000; i++ {
		x := 40 * float64(i) / 200000
		if i%3 == 0 {
			x = math.Pow(10, -20+22*float64(i)/200000) // tiny to ~100
		}
		got := oneMinusExpNeg(x)
		want := -math.Expm1(-x)
		if x > satTau {
			want = 1 // the clamp: 1 - exp(-38) is 1 - 3e-17, below half an ulp of 1 away
		}
		if d := math.Abs(got - want); d > worst {
			worst = d
		}
	}
	// A few rounding errors of numbers near 1 (ulp 1.1e-16).
	if worst > 4e-16 {
		t.Errorf("largest absolute error %g, want at most 4e-16", worst)
	}
	if got := oneMinusExpNeg(0); got != 0 {
		t.Errorf("1-exp(-0) = %g, want 0", got)
	}
}

// TestExpNeg checks the k-distribution path's exp(-t) against the standard
// library's math.Exp (Go 1.26, accurate to about 1 ulp): relative error at
// most 2e-13 below satTau, 0 from it on.
func TestExpNeg(t *testing.T) {
	worst := 0.0
	for i := 0; i <= 200000; i++ {
		x := satTau * float64(i) / 200000
		if i%3 == 0 {
			x = math.Pow(10, -20+21.5*float64(i)/200000) // tiny to ~30
		}
		if x >= satTau {
			continue // checked below
		}
		got, want := expNeg(x), math.Exp(-x)
		if d := math.Abs(got-want) / want; d > worst {
			worst = d
		}
	}
	if worst > 2e-13 {
		t.Errorf("largest relative error %g, want at most 2e-13", worst)
	}
	t.Logf("largest relative error %.3g", worst)
	for _, x := range []float64{satTau, 40, 1e300, math.Inf(1)} {
		if got := expNeg(x); got != 0 {
			t.Errorf("expNeg(%g) = %g, want 0", x, got)
		}
	}
	if got := expNeg(0); got != 1 {
		t.Errorf("expNeg(0) = %g, want 1", got)
	}
}

func BenchmarkAddAbsorbed(b *testing.B) {
	tau := make([]float64, blockLen)
	dst := make([]float64, blockLen)
	for k := range tau {
		tau[k] = math.Pow(10, -6+8*float64((k*7919)%blockLen)/blockLen)
	}
	b.ReportAllocs()
	for b.Loop() {
		addAbsorbed(dst, 1.5, tau)
	}
}
