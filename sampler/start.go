package sampler

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize"
)

// Start of a chain. Walkers drawn from the whole prior can stay stuck in
// poor local modes (a walker whose proposals come from walkers far away
// rarely moves), so the initial ensemble is a small ball around a good
// point instead, found before the first step:
//
//  1. StartDraws x walkers draws from the prior (valid states only); the
//     one of highest posterior is kept;
//  2. a Nelder-Mead search of at most StartEvaluations x dim evaluations
//     from it;
//  3. walkers drawn from the Laplace approximation there, N(x, H^-1) with H
//     the Hessian of -ln p by finite differences (so that the ensemble
//     starts with about the posterior's spread and correlations, and the
//     burn-in is short), or, where H is not positive definite, from
//     x + N(0, (StartScale w_k)^2), w_k being the prior's central 68%
//     width; each walker redrawn where the posterior is zero (next to a
//     prior edge, say), up to 1000 times.
//
// Everything is drawn from the run's seed (its own PCG stream), so a fit is
// reproducible from its seed; the ensemble then spreads over the posterior
// during the burn-in. Common practice for ensemble samplers. StartBall
// makes such an ensemble.
const (
	StartDraws       = 8
	StartEvaluations = 150
	StartScale       = 0.01
)

// StartBall returns the initial positions (walkers x t.Dim(), walker by
// walker) of a chain with the given seed, found as described above. draw
// fills dst with a prior draw at which the posterior is finite (as for
// InitPrior); width[k] is the central 68% width of parameter k's prior
// (a width that is not positive and finite counts as 1). ctx is checked
// before every evaluation of the posterior: once it is cancelled StartBall
// returns its error within one evaluation (one draw, for draw).
func StartBall(ctx context.Context, t Target, draw func(dst []float64, rng *rand.Rand) error, width []float64, walkers int, seed uint64) ([]float64, error) {
	rng := rand.New(rand.NewPCG(seed, 0x9e3779b97f4a7c15))
	dim := t.Dim()
	eval := t.NewEvaluator()
	extra := make([]float64, t.NumExtra())
	x := make([]float64, dim)
	best, bestLP := make([]float64, dim), math.Inf(-1)
	for range StartDraws * walkers {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		if err := draw(x, rng); err != nil {
			return nil, err
		}
		if lp := eval.LogProb(x, extra); lp > bestLP {
			bestLP = lp
			copy(best, x)
		}
	}
	scale := make([]float64, dim)
	for k, w := range width {
		if !(w > 0) || math.IsInf(w, 0) {
			w = 1
		}
		scale[k] = StartScale * w
	}
	// Once ctx is cancelled the search sees +Inf everywhere, evaluates
	// nothing more and ends (nelderMead stops at its next iteration).
	negLP := func(x []float64) float64 {
		if ctx.Err() != nil {
			return math.Inf(1)
		}
		lp := eval.LogProb(x, extra)
		if math.IsNaN(lp) || math.IsInf(lp, -1) {
			return math.Inf(1)
		}
		return -lp
	}
	nelderMead(ctx, best, negLP, scale, StartEvaluations*dim)
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	u := laplaceFactor(best, negLP, scale)
	pos := make([]float64, walkers*dim)
	z := make([]float64, dim)
	for k := range walkers {
		w := pos[k*dim : (k+1)*dim]
		ok := false
		for try := 0; try < 1000 && !ok; try++ {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
			for i := range z {
				z[i] = rng.NormFloat64()
			}
			if u != nil {
				// w = best + U^-1 z (back substitution): covariance (U^T U)^-1.
				for i := dim - 1; i >= 0; i-- {
					v := z[i]
					for j := i + 1; j < dim; j++ {
						v -= u.At(i, j) * (w[j] - best[j])
					}
					w[i] = best[i] + v/u.At(i, i)
				}
			} else {
				for i := range w {
					w[i] = best[i] + scale[i]*z[i]
				}
			}
			lp := eval.LogProb(w, extra)
			ok = !math.IsNaN(lp) && !math.IsInf(lp, 0)
		}
		if !ok {
			return nil, fmt.Errorf("no valid point in 1000 draws around the best starting point %v", best)
		}
	}
	return pos, nil
}

// laplaceFactor returns the upper Cholesky factor U of the Hessian H = U^T U
// of f (the negative log posterior) at its minimum x, from central finite
// differences with steps 0.1 step[k], or nil when H is not positive
// definite or its implied standard deviations exceed 100 step[k] (then the
// plain ball is used). N(x, H^-1) is the Laplace approximation of the
// posterior (a normal with the curvature at the mode; standard result).
func laplaceFactor(x []float64, f func([]float64) float64, step []float64) *mat.TriDense {
	n := len(x)
	f0 := f(x)
	if math.IsInf(f0, 0) || math.IsNaN(f0) {
		return nil
	}
	y := slices.Clone(x)
	at := func(i int, di float64, j int, dj float64) float64 {
		copy(y, x)
		y[i] += di
		y[j] += dj
		return f(y)
	}
	h := mat.NewSymDense(n, nil)
	for i := range n {
		hi := 0.1 * step[i]
		h.SetSym(i, i, (at(i, hi, i, 0)-2*f0+at(i, -hi, i, 0))/(hi*hi))
		for j := i + 1; j < n; j++ {
			hj := 0.1 * step[j]
			h.SetSym(i, j, (at(i, hi, j, hj)-at(i, hi, j, -hj)-at(i, -hi, j, hj)+at(i, -hi, j, -hj))/(4*hi*hj))
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(h) {
		return nil
	}
	var cov mat.SymDense
	if err := ch.InverseTo(&cov); err != nil {
		return nil
	}
	for i := range n {
		if sd := math.Sqrt(cov.At(i, i)); !(sd > 0) || sd > 100*step[i] {
			return nil
		}
	}
	u := mat.NewTriDense(n, mat.Upper, nil)
	ch.UTo(u)
	return u
}

// nelderMead minimises f from x (overwritten with the best point found)
// with gonum's Nelder-Mead simplex method (gonum v0.17.0 optimize; Nelder &
// Mead 1965, Comput. J. 7, 308), the initial simplex stepping 10 step[k]
// along each axis, for at most maxEval evaluations. A search that ends
// early or fails keeps the best point it saw; x is only a start for the
// walkers, so no convergence is needed.
func nelderMead(ctx context.Context, x []float64, f func([]float64) float64, step []float64, maxEval int) {
	n := len(x)
	verts := make([][]float64, n+1)
	vals := make([]float64, n+1)
	for i := range verts {
		verts[i] = slices.Clone(x)
		if i > 0 {
			verts[i][i-1] += 10 * step[i-1]
		}
		vals[i] = f(verts[i])
	}
	method := &optimize.NelderMead{InitialVertices: verts, InitialValues: vals}
	settings := &optimize.Settings{
		FuncEvaluations: maxEval,
		Converger:       &optimize.FunctionConverge{Absolute: 1e-6, Iterations: 20 * n},
		Recorder:        ctxRecorder{ctx},
	}
	// The search is a heuristic start: an error (evaluation limit, a
	// failed step) still leaves the best point seen in res.
	res, _ := optimize.Minimize(optimize.Problem{Func: f}, x, settings, method)
	if res != nil && !math.IsNaN(res.F) && res.F <= vals[0] {
		copy(x, res.X)
		return
	}
	b := 0
	for i := range vals {
		if vals[i] < vals[b] {
			b = i
		}
	}
	copy(x, verts[b])
}

// ctxRecorder ends an optimize.Minimize (its Record error stops it) once
// ctx is cancelled.
type ctxRecorder struct{ ctx context.Context }

func (ctxRecorder) Init() error { return nil }
func (r ctxRecorder) Record(*optimize.Location, optimize.Operation, *optimize.Stats) error {
	return r.ctx.Err()
}
