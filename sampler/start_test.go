package sampler

import (
	"context"
	"math"
	"testing"
)

// Nelder-Mead finds the minimum (1, 1) of Rosenbrock's function
// (Rosenbrock 1960, Comput. J. 3, 175: f = 100 (y - x^2)^2 + (1 - x)^2),
// the classic test of the simplex method; 1e-3 is well within what 2000
// evaluations reach from (-1.2, 1) (fact of the trade).
func TestNelderMead(t *testing.T) {
	x := []float64{-1.2, 1}
	f := func(v []float64) float64 { a, b := v[1]-v[0]*v[0], 1-v[0]; return 100*a*a + b*b }
	nelderMead(context.Background(), x, f, []float64{0.05, 0.05}, 2000)
	if math.Abs(x[0]-1) > 1e-3 || math.Abs(x[1]-1) > 2e-3 {
		t.Errorf("minimum at %v, want (1, 1)", x)
	}
}
