// Package targets holds analytic log-densities with known moments, for
// testing and benchmarking the sampler (as gonum's optimize/functions holds
// published test problems for its optimisers).
package targets

import (
	"fmt"
	"math"
	"math/rand/v2"

	"chord/sampler"

	"gonum.org/v1/gonum/mat"
)

// Gaussian is the multivariate normal N(Mean, Cov), with log density
// -1/2 (x-mu)^T Cov^-1 (x-mu) (unnormalised). It has one extra value per
// sample: the squared Mahalanobis distance (x-mu)^T Cov^-1 (x-mu).
type Gaussian struct {
	mean []float64
	chol mat.Cholesky
	l    *mat.TriDense // lower Cholesky factor of Cov
}

// NewGaussian returns N(mean, cov); cov must be symmetric positive definite.
func NewGaussian(mean []float64, cov *mat.SymDense) (*Gaussian, error) {
	if cov.SymmetricDim() != len(mean) {
		return nil, fmt.Errorf("targets: Gaussian mean of length %d, covariance of size %d", len(mean), cov.SymmetricDim())
	}
	g := &Gaussian{mean: append([]float64(nil), mean...)}
	if !g.chol.Factorize(cov) {
		return nil, fmt.Errorf("targets: Gaussian covariance is not positive definite")
	}
	g.l = mat.NewTriDense(len(mean), mat.Lower, nil)
	g.chol.LTo(g.l)
	return g, nil
}

// Dim implements sampler.Target.
func (g *Gaussian) Dim() int { return len(g.mean) }

// NumExtra implements sampler.Target.
func (g *Gaussian) NumExtra() int { return 1 }

// Mean returns the mean vector.
func (g *Gaussian) Mean() []float64 { return append([]float64(nil), g.mean...) }

// NewEvaluator implements sampler.Target.
func (g *Gaussian) NewEvaluator() sampler.Evaluator {
	return &gaussEval{g: g, y: make([]float64, len(g.mean))}
}

type gaussEval struct {
	g *Gaussian
	y []float64
}

// LogProb solves L y = x - mu by forward substitution; the log density is
// -|y|^2/2.
func (e *gaussEval) LogProb(x, extra []float64) float64 {
	n := len(e.y)
	l := e.g.l.RawTriangular()
	var r2 float64
	for i := range n {
		s := x[i] - e.g.mean[i]
		row := l.Data[i*l.Stride : i*l.Stride+i]
		for j, lij := range row {
			s -= lij * e.y[j]
		}
		s /= l.Data[i*l.Stride+i]
		e.y[i] = s
		r2 += s * s
	}
	extra[0] = r2
	return -0.5 * r2
}

// RandomCovariance returns Q diag(lambda) Q^T with eigenvalues lambda
// log-spaced from 1 to cond (so its condition number is cond) and Q a random
// orthogonal matrix (the Q factor of a matrix of standard normal draws).
func RandomCovariance(dim int, cond float64, rng *rand.Rand) *mat.SymDense {
	a := mat.NewDense(dim, dim, nil)
	for i := range dim {
		for j := range dim {
			a.Set(i, j, rng.NormFloat64())
		}
	}
	var qr mat.QR
	qr.Factorize(a)
	var q mat.Dense
	qr.QTo(&q)
	cov := mat.NewSymDense(dim, nil)
	for i := range dim {
		for j := i; j < dim; j++ {
			var s float64
			for k := range dim {
				lam := 1.0
				if dim > 1 {
					lam = math.Pow(cond, float64(k)/float64(dim-1))
				}
				s += q.At(i, k) * lam * q.At(j, k)
			}
			cov.SetSym(i, j, s)
		}
	}
	return cov
}

// Rosenbrock is the two-dimensional Rosenbrock-type density of Goodman &
// Weare (2010, CAMCoS 5, 65),
//
//	pi(x1, x2) ∝ exp(-(100 (x2 - x1^2)^2 + (1 - x1)^2) / 20).
//
// Integrating out x2 (a Gaussian in x2 of variance 1/10 centred at x1^2)
// leaves x1 ~ N(1, 10) exactly; then E[x2] = E[x1^2] = 10 + 1 = 11 and
// Var(x2) = 1/10 + Var(x1^2) = 1/10 + 2*10^2 + 4*1*10 = 240.1.
type Rosenbrock struct{}

// Dim implements sampler.Target.
func (Rosenbrock) Dim() int { return 2 }

// NumExtra implements sampler.Target.
func (Rosenbrock) NumExtra() int { return 0 }

// NewEvaluator implements sampler.Target.
func (Rosenbrock) NewEvaluator() sampler.Evaluator { return Rosenbrock{} }

// LogProb implements sampler.Evaluator.
func (Rosenbrock) LogProb(x, _ []float64) float64 {
	a := x[1] - x[0]*x[0]
	b := 1 - x[0]
	return -(100*a*a + b*b) / 20
}

// StdNormal is the standard normal in D dimensions, log density -|x|^2/2:
// the cheapest useful target, for measuring the sampler's own cost.
type StdNormal struct{ D int }

// Dim implements sampler.Target.
func (t StdNormal) Dim() int { return t.D }

// NumExtra implements sampler.Target.
func (StdNormal) NumExtra() int { return 0 }

// NewEvaluator implements sampler.Target.
func (t StdNormal) NewEvaluator() sampler.Evaluator { return t }

// LogProb implements sampler.Evaluator.
func (StdNormal) LogProb(x, _ []float64) float64 {
	var s float64
	for _, v := range x {
		s += v * v
	}
	return -0.5 * s
}

var (
	_ sampler.Target = (*Gaussian)(nil)
	_ sampler.Target = Rosenbrock{}
	_ sampler.Target = StdNormal{}
)
