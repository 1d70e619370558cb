package targets

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
)

// quad2 integrates exp(logf - shift) over [lo, hi]^2 by nested
// Gauss-Legendre quadrature with n nodes per axis (gonum v0.17.0
// quad.Fixed) and returns the log of the integral plus shift.
func quad2(logf func(x, y float64) float64, lo, hi float64, n int, shift float64) float64 {
	inner := func(x float64) float64 {
		return quad.Fixed(func(y float64) float64 { return math.Exp(logf(x, y) - shift) }, lo, hi, n, quad.Legendre{}, 0)
	}
	return math.Log(quad.Fixed(inner, lo, hi, n, quad.Legendre{}, 0)) + shift
}

// TestPublishedEvidence checks the published evidences of the nested
// sampling test problems against 2-d quadrature of our likelihoods:
// ln Z = ln(integral of L over the prior box) - ln(box area). The results
// with 600 and 1200 nodes per axis agree to better than 1e-6, so the
// quadrature is converged.
//   - Gaussian shells, 2-d: ln Z = -1.75 (Feroz & Hobson 2008, MNRAS 384,
//     449, table 1); quadrature -1.7456, within the rounding.
//   - Egg-box: ln Z = 235.88 (Feroz, Hobson & Bridges 2009, MNRAS 398,
//     1601, sect. 4.2, from their own numerical integration); quadrature
//     235.856. The difference, 0.024, is a fifth of the error of a nested
//     sampling run with 400 live points (0.12) and is allowed here; it is
//     the likely source of the sampler's mean offset of -0.045 +- 0.016
//     from 235.88 over 40 seeds.
func TestPublishedEvidence(t *testing.T) {
	shells := GaussianShells{D: 2}
	egg := EggBox{}
	xy := make([]float64, 2)
	cases := []struct {
		name      string
		logf      func(x, y float64) float64
		lo, hi    float64
		shift     float64
		published float64
		tol       float64
	}{
		{"shells", func(x, y float64) float64 { xy[0], xy[1] = x, y; return shells.LogProb(xy, nil) }, -ShellsBox, ShellsBox, 0, -1.75, 0.005},
		{"egg-box", func(x, y float64) float64 { xy[0], xy[1] = x, y; return egg.LogProb(xy, nil) }, 0, EggBoxSide, 243, 235.88, 0.03},
	}
	for _, c := range cases {
		area := 2 * math.Log(c.hi-c.lo)
		coarse := quad2(c.logf, c.lo, c.hi, 600, c.shift) - area
		fine := quad2(c.logf, c.lo, c.hi, 1200, c.shift) - area
		t.Logf("%s: ln Z = %.6f (600 nodes), %.6f (1200 nodes), published %.2f", c.name, coarse, fine, c.published)
		if math.Abs(fine-coarse) > 1e-6 {
			t.Errorf("%s: quadrature not converged: %.8f vs %.8f", c.name, coarse, fine)
		}
		if math.Abs(fine-c.published) > c.tol {
			t.Errorf("%s: ln Z = %.4f by quadrature, published %.2f", c.name, fine, c.published)
		}
	}
}
