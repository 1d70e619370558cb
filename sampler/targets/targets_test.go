package targets

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// TestGaussian compares the log density with -1/2 (x-mu)^T y, y solving
// Cov y = x - mu by LU (gonum v0.17.0 mat.VecDense.SolveVec, an algorithm
// independent of the Cholesky forward substitution used by the target), and
// checks the covariance's condition number with mat.EigenSym. Tolerance:
// float64 rounding of 10-d solves with condition number 100, ~1e-12
// relative.
func TestGaussian(t *testing.T) {
	const d, cond = 10, 100
	cov := RandomCovariance(d, cond, rand.New(rand.NewPCG(1, 2)))
	var eig mat.EigenSym
	if !eig.Factorize(cov, false) {
		t.Fatal("eigen-decomposition failed")
	}
	ev := eig.Values(nil)
	if got := ev[d-1] / ev[0]; math.Abs(got/cond-1) > 1e-10 {
		t.Errorf("condition number %v, want %v", got, cond)
	}
	mean := make([]float64, d)
	for i := range mean {
		mean[i] = float64(i) - 3
	}
	g, err := NewGaussian(mean, cov)
	if err != nil {
		t.Fatal(err)
	}
	ref := func(x []float64) float64 {
		r := make([]float64, d)
		for i := range r {
			r[i] = x[i] - mean[i]
		}
		var y mat.VecDense
		if err := y.SolveVec(cov, mat.NewVecDense(d, r)); err != nil {
			t.Fatal(err)
		}
		return -0.5 * mat.Dot(mat.NewVecDense(d, r), &y)
	}
	e := g.NewEvaluator()
	rng := rand.New(rand.NewPCG(3, 4))
	x, extra := make([]float64, d), make([]float64, 1)
	for range 20 {
		for i := range x {
			x[i] = mean[i] + 10*rng.NormFloat64()
		}
		got, want := e.LogProb(x, extra), ref(x)
		if math.Abs(got-want) > 1e-12*math.Abs(want) {
			t.Errorf("log density %v, want %v", got, want)
		}
		if extra[0] != -2*got {
			t.Errorf("extra %v, want %v", extra[0], -2*got)
		}
	}
	if _, err := NewGaussian(mean[:3], cov); err == nil {
		t.Error("mismatched mean: no error")
	}
	if _, err := NewGaussian([]float64{0, 0}, mat.NewSymDense(2, []float64{1, 2, 2, 1})); err == nil {
		t.Error("indefinite covariance: no error")
	}
}

// TestRosenbrock checks the density against its formula at hand-computed
// points (Goodman & Weare 2010, CAMCoS 5, 65).
func TestRosenbrock(t *testing.T) {
	for _, c := range []struct{ x1, x2, want float64 }{
		{1, 1, 0},                    // the mode
		{0, 0, -1.0 / 20},            // (100*0 + 1)/20
		{2, 3, -(100*1 + 1) / 20.0},  // x2 - x1^2 = -1, 1 - x1 = -1
		{-1, 2, -(100*1 + 4) / 20.0}, // x2 - x1^2 = 1, 1 - x1 = 2
	} {
		if got := (Rosenbrock{}).LogProb([]float64{c.x1, c.x2}, nil); got != c.want {
			t.Errorf("log pi(%v, %v) = %v, want %v", c.x1, c.x2, got, c.want)
		}
	}
}
