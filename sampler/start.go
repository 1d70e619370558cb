package sampler

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"sync"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize"
)

// Start of a chain. Walkers drawn from the whole prior can stay stuck in
// poor local modes (a walker whose proposals come from walkers far away
// rarely moves), so the initial ensemble is a small ball around a good
// point instead, found before the first step:
//
//  1. StartDraws x walkers draws from the prior (valid states only);
//  2. StartOptima starting points among them, spread over the prior: the
//     draw of highest posterior, then, in order of posterior, draws at
//     least StartSpread prior widths (per coordinate, the largest
//     difference over the parameters, in units of each prior's central
//     68% width) from every point already chosen (the spread halved while
//     too few are found);
//  3. from each, a Nelder-Mead search of at most StartEvaluations x dim
//     evaluations (the searches run in parallel, each on its own
//     evaluator; each is deterministic, so the result does not depend on
//     the number of workers); the end points are grouped into distinct
//     optima by the hill-valley test (Ursem 1999, Proc. CEC, 1633): two
//     end points belong to one optimum when the log posterior at 1/4, 1/2
//     and 3/4 of the way between them never falls more than
//     SameOptimumLogP below the lower of the two (no valley separates
//     them); the optima are reported in a StartResult, and the best is
//     kept;
//  4. walkers drawn from the Laplace approximation there, N(x, H^-1) with H
//     the Hessian of -ln p by finite differences (so that the ensemble
//     starts with about the posterior's spread and correlations, and the
//     burn-in is short), or, where H is not positive definite, from
//     x + N(0, (StartScale w_k)^2), w_k being the prior's central 68%
//     width; each walker redrawn where the posterior is zero (next to a
//     prior edge, say), up to 1000 times.
//
// Several searches from spread points find the highest of separated modes
// that a single search from the best draw misses when a lower mode is
// broader (more of the prior's draws land in it, and the best of them may
// too). Everything is drawn from the run's seed (its own PCG stream), so a
// fit is reproducible from its seed; the ensemble then spreads over the
// posterior during the burn-in. Common practice for ensemble samplers.
// StartBall makes such an ensemble.
const (
	StartDraws       = 8
	StartOptima      = 8
	StartSpread      = 0.5
	StartEvaluations = 150
	StartScale       = 0.01
	SameOptimumLogP  = 1.0
)

// StartSettings configure StartBall.
type StartSettings struct {
	Walkers int
	Seed    uint64
	// Workers is the number of searches run at once; 0 means GOMAXPROCS.
	Workers int
	// Optima is the number of searches; 0 means StartOptima.
	Optima int
}

// Optimum is a distinct end point of the start's searches.
type Optimum struct {
	X     []float64
	LogP  float64
	Count int // searches that ended there
}

// StartResult reports the start's searches: the distinct optima found,
// best first, and the number of searches.
type StartResult struct {
	Optima   []Optimum
	Searches int
}

// String says how many distinct optima the searches found and their log
// posteriors, for a run's log.
func (r *StartResult) String() string {
	var b strings.Builder
	fmt.Fprintf(&b, "%d Nelder-Mead searches from spread prior draws found %d distinct optim", r.Searches, len(r.Optima))
	if len(r.Optima) == 1 {
		b.WriteString("um")
	} else {
		b.WriteString("a")
	}
	b.WriteString(", log posterior ")
	for i, o := range r.Optima {
		if i > 0 {
			b.WriteString(", ")
		}
		fmt.Fprintf(&b, "%.2f (%d of %d)", o.LogP, o.Count, r.Searches)
	}
	b.WriteString("; the walkers start at the best")
	if len(r.Optima) > 1 && r.Optima[1].LogP > r.Optima[0].LogP-10 {
		b.WriteString(" (another lies within 10 in log posterior: the posterior may be multimodal)")
	}
	return b.String()
}

// StartBall returns the initial positions (walkers x t.Dim(), walker by
// walker) of a chain, found as described above, and what the searches
// found. draw fills dst with a prior draw at which the posterior is finite
// (as for InitPrior); width[k] is the central 68% width of parameter k's
// prior (a width that is not positive and finite counts as 1). ctx is
// checked before every evaluation of the posterior: once it is cancelled
// StartBall evaluates nothing more and returns its error.
func StartBall(ctx context.Context, t Target, draw func(dst []float64, rng *rand.Rand) error, width []float64, set StartSettings) ([]float64, *StartResult, error) {
	rng := rand.New(rand.NewPCG(set.Seed, 0x9e3779b97f4a7c15))
	dim := t.Dim()
	eval := t.NewEvaluator()
	extra := make([]float64, t.NumExtra())
	n := StartDraws * set.Walkers
	draws := make([]float64, n*dim)
	lps := make([]float64, n)
	for i := range n {
		x := draws[i*dim : (i+1)*dim]
		if err := ctx.Err(); err != nil {
			return nil, nil, err
		}
		if err := draw(x, rng); err != nil {
			return nil, nil, err
		}
		lps[i] = eval.LogProb(x, extra)
	}
	scale := make([]float64, dim)
	for k, w := range width {
		if !(w > 0) || math.IsInf(w, 0) {
			w = 1
		}
		scale[k] = w
	}
	nOpt := set.Optima
	if nOpt <= 0 {
		nOpt = StartOptima
	}
	starts := spreadStarts(draws, lps, dim, scale, nOpt)
	ends := make([][]float64, len(starts))
	endLP := make([]float64, len(starts))
	var wg sync.WaitGroup
	next := make(chan int)
	for range workerCount(set.Workers, len(starts)) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			ev := t.NewEvaluator()
			ex := make([]float64, t.NumExtra())
			negLP := func(x []float64) float64 {
				if ctx.Err() != nil {
					return math.Inf(1)
				}
				lp := ev.LogProb(x, ex)
				if math.IsNaN(lp) || math.IsInf(lp, -1) {
					return math.Inf(1)
				}
				return -lp
			}
			step := make([]float64, dim)
			for k := range step {
				step[k] = StartScale * scale[k]
			}
			for i := range next {
				x := slices.Clone(draws[starts[i]*dim : (starts[i]+1)*dim])
				nelderMead(x, negLP, step, StartEvaluations*dim)
				ends[i], endLP[i] = x, -negLP(x)
			}
		}()
	}
	for i := range starts {
		next <- i
	}
	close(next)
	wg.Wait()
	if err := ctx.Err(); err != nil {
		return nil, nil, err
	}
	res := &StartResult{Optima: distinctOptima(ends, endLP, func(x []float64) float64 {
		if ctx.Err() != nil {
			return math.Inf(-1)
		}
		return eval.LogProb(x, extra)
	}), Searches: len(starts)}
	if err := ctx.Err(); err != nil {
		return nil, nil, err
	}
	best := res.Optima[0].X
	step := make([]float64, dim)
	for k := range step {
		step[k] = StartScale * scale[k]
	}
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
	u := laplaceFactor(best, negLP, step)
	pos := make([]float64, set.Walkers*dim)
	z := make([]float64, dim)
	for k := range set.Walkers {
		w := pos[k*dim : (k+1)*dim]
		ok := false
		for try := 0; try < 1000 && !ok; try++ {
			if err := ctx.Err(); err != nil {
				return nil, nil, err
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
					w[i] = best[i] + step[i]*z[i]
				}
			}
			lp := eval.LogProb(w, extra)
			ok = !math.IsNaN(lp) && !math.IsInf(lp, 0)
		}
		if !ok {
			return nil, nil, fmt.Errorf("no valid point in 1000 draws around the best start %v", best)
		}
	}
	return pos, res, nil
}

// spreadStarts returns the indices of nOpt draws (rows of draws, log
// posteriors lps) to start searches from: the best, then, by decreasing
// log posterior, draws at least StartSpread prior widths (scale) from
// every one chosen, the spread halved while too few are found.
func spreadStarts(draws, lps []float64, dim int, scale []float64, nOpt int) []int {
	order := make([]int, len(lps))
	for i := range order {
		order[i] = i
	}
	// Highest first; -Inf and NaN last; ties by draw order (stable).
	key := func(i int) float64 {
		if math.IsNaN(lps[i]) {
			return math.Inf(-1)
		}
		return lps[i]
	}
	slices.SortStableFunc(order, func(a, b int) int {
		switch ka, kb := key(a), key(b); {
		case ka > kb:
			return -1
		case ka < kb:
			return 1
		}
		return 0
	})
	nOpt = min(nOpt, len(order))
	chosen := []int{order[0]}
	taken := map[int]bool{order[0]: true}
	for spread := StartSpread; len(chosen) < nOpt; spread /= 2 {
		for _, i := range order {
			if len(chosen) == nOpt {
				break
			}
			if taken[i] {
				continue
			}
			far := true
			for _, j := range chosen {
				if distance(draws[i*dim:(i+1)*dim], draws[j*dim:(j+1)*dim], scale) < spread {
					far = false
					break
				}
			}
			if far || spread < 1e-6 {
				chosen = append(chosen, i)
				taken[i] = true
			}
		}
	}
	return chosen
}

// distance is the largest coordinate difference of x and y in units of
// scale.
func distance(x, y, scale []float64) float64 {
	d := 0.0
	for k := range x {
		d = math.Max(d, math.Abs(x[k]-y[k])/scale[k])
	}
	return d
}

// distinctOptima groups the searches' end points (ends, log posteriors
// lps) into distinct optima, best first, by the hill-valley test on the
// log posterior logP.
func distinctOptima(ends [][]float64, lps []float64, logP func([]float64) float64) []Optimum {
	y := make([]float64, len(ends[0]))
	valley := func(a, b []float64, lpa, lpb float64) bool {
		floor := math.Min(lpa, lpb) - SameOptimumLogP
		for _, f := range []float64{0.25, 0.5, 0.75} {
			for k := range y {
				y[k] = a[k] + f*(b[k]-a[k])
			}
			if lp := logP(y); !(lp >= floor) {
				return true
			}
		}
		return false
	}
	idx := make([]int, len(ends))
	for i := range idx {
		idx[i] = i
	}
	slices.SortStableFunc(idx, func(a, b int) int {
		switch {
		case lps[a] > lps[b] || math.IsNaN(lps[b]) && !math.IsNaN(lps[a]):
			return -1
		case lps[a] < lps[b] || math.IsNaN(lps[a]) && !math.IsNaN(lps[b]):
			return 1
		}
		return 0
	})
	var out []Optimum
	for _, i := range idx {
		found := false
		for k := range out {
			if !valley(out[k].X, ends[i], out[k].LogP, lps[i]) {
				out[k].Count++
				found = true
				break
			}
		}
		if !found {
			out = append(out, Optimum{X: ends[i], LogP: lps[i], Count: 1})
		}
	}
	return out
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
func nelderMead(x []float64, f func([]float64) float64, step []float64, maxEval int) {
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
