package sampler

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"time"
)

// Quantiler is the inverse cumulative distribution function of a
// one-dimensional prior: Quantile(p) is the x with P(X <= x) = p. Nested
// sampling maps the unit cube onto the prior with one Quantiler per
// parameter (independent priors). It is called on the worker goroutines, so
// it must be safe for concurrent use; it is only ever asked for 0 < p < 1.
// chord's priors.Prior and gonum's distuv distributions implement it.
type Quantiler interface {
	Quantile(p float64) float64
}

// DeadPoint is one point of a nested-sampling run in the order the run
// produced it: a discarded live point, or at the end one of the final live
// points. Its slices are valid only during RecordDead.
type DeadPoint struct {
	Index int       // 1 for the first point
	X     []float64 // parameters (Dim); not finite where a prior quantile was not
	Extra []float64 // the Target's extra values (NumExtra)
	LogL  float64   // log-likelihood; -Inf where the likelihood was rejected
	// LogWt is ln(w L), w the prior mass assigned to the point: the
	// unnormalised log posterior weight. The posterior weight is
	// exp(LogWt - LogZ) with the run's final LogZ.
	LogWt float64
	Final bool // one of the live points added when the run finished
}

// DeadRecorder receives the dead points of a nested-sampling run, in
// order. An error from RecordDead ends the run. A DeadRecorder that is also
// a Flusher is flushed as Run flushes a Recorder.
type DeadRecorder interface {
	RecordDead(p *DeadPoint) error
}

// Proposal chooses how nested sampling draws a new point from the prior
// above the current likelihood threshold.
type Proposal int

const (
	// ProposeAuto draws from bounding ellipsoids and switches to slice
	// sampling while rejection is inefficient.
	ProposeAuto Proposal = iota
	// ProposeBound always draws from the bounding ellipsoids.
	ProposeBound
	// ProposeSlice always uses slice sampling.
	ProposeSlice
)

func (p Proposal) String() string {
	switch p {
	case ProposeAuto:
		return "auto"
	case ProposeBound:
		return "bound"
	case ProposeSlice:
		return "slice"
	}
	return fmt.Sprintf("Proposal(%d)", int(p))
}

// NestedSettings configures RunNested. The zero value runs to an evidence
// tolerance of 0.1 in ln Z with bounding ellipsoids and the slice fallback
// on GOMAXPROCS workers.
//
// Batch, Enlarge, UpdateEvery, Proposal, SliceBelow and SliceSteps shape
// the sequence of points; they are stored in the state (NestedState.Method)
// and a resumed run must keep them. Workers and the stopping and checkpoint
// settings may change between calls.
type NestedSettings struct {
	Workers int // goroutines evaluating the likelihood; 0 (or less) means GOMAXPROCS

	// Batch is the number of candidate points drawn from the bound, or of
	// slice-sampling chains, evaluated together on the workers: the unit
	// of parallelism. The run depends on it (never on Workers); 0 means
	// 16. At most Live.
	Batch int
	// Enlarge is the factor by which each bounding ellipsoid's volume is
	// multiplied beyond the one that holds each of its live points when
	// fitted to the others (which a new point escapes about once in N+1
	// draws); 0 means 1.5. At least 1.
	Enlarge float64
	// UpdateEvery is the number of iterations between refits of the
	// bounding ellipsoids (and decisions between rejection and slice
	// sampling); 0 means Live/10 (at least 1).
	UpdateEvery int
	Proposal    Proposal // ProposeAuto (the zero value), ProposeBound or ProposeSlice
	// SliceBelow is the fraction of evaluated bound draws that must be
	// usable for rejection sampling to continue under ProposeAuto; below
	// it, the next Live iterations use slice sampling and rejection is then
	// tried again. In (0, 1); 0 means 1/(5 SliceSteps), the cost of a slice
	// point at about 5 evaluations per update (4.3 to 4.6 measured on the
	// test Gaussians).
	SliceBelow float64
	// SliceSteps is the number of slice-sampling updates from a live point
	// to a new one, each along a random direction scaled by the bounding
	// ellipsoid; 0 means 5*Dim. Too few leave the new point correlated with
	// the live point it started from and bias ln Z upwards: on the 20-d test
	// Gaussian with 200 live points, 23 updates gave +1.1 (2.3 reported
	// errors), 43 gave +0.1.
	SliceSteps int

	// Stopping rules; whichever is met first stops the run.
	// EvidenceTol ends the run (adding the final live points) once the
	// live points can raise ln Z by less than this: ln(Z + L_max X) - ln Z
	// < EvidenceTol, with X the prior volume left. 0 means 0.1.
	EvidenceTol   float64
	MaxIterations int           // stop once NestedState.Iter reaches this total; 0 means no limit
	MaxDuration   time.Duration // wall-clock budget of this call; 0 means none

	// Checkpoint, if set, is called after every iteration whose
	// NestedState.Iter is a multiple of CheckpointEvery, once the recorder
	// has been flushed; the state is valid only during the call. An error
	// ends the run.
	CheckpointEvery int
	Checkpoint      func(st *NestedState) error
}

// nestedConfig is NestedSettings with its defaults resolved.
type nestedConfig struct {
	workers, batch, update, sliceSteps int
	enlarge, sliceBelow, tol           float64
	proposal                           Proposal
}

func (s *NestedSettings) resolve(live, dim int) (nestedConfig, error) {
	c := nestedConfig{
		workers: s.Workers, batch: s.Batch, update: s.UpdateEvery, sliceSteps: s.SliceSteps,
		enlarge: s.Enlarge, sliceBelow: s.SliceBelow, tol: s.EvidenceTol, proposal: s.Proposal,
	}
	if c.batch == 0 {
		c.batch = min(16, live)
	}
	if c.enlarge == 0 {
		c.enlarge = 1.5
	}
	if c.update == 0 {
		c.update = max(1, live/10)
	}
	if c.sliceSteps == 0 {
		c.sliceSteps = 5 * dim
	}
	if c.sliceBelow == 0 && c.sliceSteps > 0 {
		c.sliceBelow = 1 / (5 * float64(c.sliceSteps))
	}
	if c.tol == 0 {
		c.tol = 0.1
	}
	var bad []string
	if c.batch < 1 || c.batch > live {
		bad = append(bad, fmt.Sprintf("batch %d (want 1 to the %d live points)", s.Batch, live))
	}
	if !(c.enlarge >= 1) || math.IsInf(c.enlarge, 0) {
		bad = append(bad, fmt.Sprintf("enlargement %v (want a finite factor >= 1)", s.Enlarge))
	}
	if c.update < 1 {
		bad = append(bad, fmt.Sprintf("update interval %d (want >= 1)", s.UpdateEvery))
	}
	if c.proposal < ProposeAuto || c.proposal > ProposeSlice {
		bad = append(bad, fmt.Sprintf("proposal %v", c.proposal))
	}
	if !(c.sliceBelow > 0 && c.sliceBelow < 1) {
		bad = append(bad, fmt.Sprintf("slice threshold %v (want a fraction in (0, 1))", s.SliceBelow))
	}
	if c.sliceSteps < 1 {
		bad = append(bad, fmt.Sprintf("slice steps %d (want >= 1)", s.SliceSteps))
	}
	if !(c.tol > 0) || math.IsInf(c.tol, 0) {
		bad = append(bad, fmt.Sprintf("evidence tolerance %v (want a finite value > 0)", s.EvidenceTol))
	}
	if s.MaxIterations < 0 || s.MaxDuration < 0 || s.CheckpointEvery < 0 {
		bad = append(bad, fmt.Sprintf("negative stopping or checkpoint setting (max iterations %d, max duration %v, checkpoint every %d)", s.MaxIterations, s.MaxDuration, s.CheckpointEvery))
	}
	if (s.Checkpoint == nil) != (s.CheckpointEvery == 0) {
		bad = append(bad, "set both Checkpoint and CheckpointEvery, or neither")
	}
	if bad != nil {
		return c, errors.New("sampler: nested sampling settings: " + strings.Join(bad, "; "))
	}
	return c, nil
}

// method is the exact description of the settings that shape the run.
func (c nestedConfig) method() string {
	return fmt.Sprintf("nested(proposal=%v,batch=%d,enlarge=%s,update=%d,slice-below=%s,slice-steps=%d)",
		c.proposal, c.batch, ftoa(c.enlarge), c.update, ftoa(c.sliceBelow), c.sliceSteps)
}

// NestedResult describes how a nested-sampling run ended.
type NestedResult struct {
	Stop StopReason // StopEvidence when the run is finished; zero when RunNested returns an error
	// Iterations and Evaluations count the dead points recorded (final
	// live points included) and the likelihood evaluations of this call.
	Iterations, Evaluations int
	// SliceEvaluations counts the evaluations of this call spent on slice
	// sampling.
	SliceEvaluations int
	Elapsed          time.Duration
	// LogZ +- LogZErr is the log evidence and H the information (in nats)
	// so far, the live points' share included (NestedState.Evidence).
	LogZ, LogZErr, H float64
	Ellipsoids       int // bounding ellipsoids at the end
}

// RunNested advances the nested-sampling run st (which it modifies and
// returns) until a stopping rule is met, handing every dead point to rec
// (which may be nil).
//
// Nested sampling (Skilling 2004, AIP Conf. Proc. 735, 395, from memory;
// Skilling 2006, Bayesian Analysis 1, 833) keeps Live points drawn from
// the prior. Each
// iteration i discards the point of lowest likelihood L_i, which is
// assigned the prior mass w_i = X_{i-1} - X_i with X_i = exp(-i/Live), and
// replaces it by a draw from the prior restricted to L > L_i. The evidence
// is Z = sum_i w_i L_i, the information H = sum_i (w_i L_i / Z) ln(L_i / Z),
// and the statistical error of ln Z is sqrt(H/Live) (Skilling 2006, sect.
// 9). When the evidence tolerance is met, the live points are added with
// mass X/Live each and the state is Finished.
//
// Prior draws are made in the unit cube and mapped through prior's
// quantile functions, so the Target's LogProb is the log-likelihood. A
// log-likelihood of NaN or ±Inf (or a quantile that is not finite) counts
// as L = 0: such a point is never accepted as a replacement, and an initial
// live point there is discarded first with zero weight. If all live points
// share one finite log-likelihood, no further compression is possible and
// the run finishes.
//
// Replacements come from a union of bounding ellipsoids (see the fitter in
// ellipsoid.go), refitted every UpdateEvery iterations, by rejection: Batch
// draws at a time are evaluated in parallel and queued, and each iteration
// takes the first queued candidate above its threshold (a uniform draw from
// the bound restricted to L > L_i, since the queued draws are independent).
// While fewer than SliceBelow of the evaluated draws are usable, Batch
// slice-sampling chains (Neal 2003, Ann. Statist. 31, 705: stepping out and
// shrinkage, along random directions scaled by the ellipsoid holding the
// chain's start) start from random live points and run in lock step, one
// evaluation per chain per round, SliceSteps updates each; their end points
// are queued likewise.
//
// All random numbers are drawn on the calling goroutine in a fixed order,
// so the run does not depend on Workers, and a run resumed from a
// checkpoint continues the very same sequence. Cancellation is honoured
// between batches (an iteration may need several), the budget between
// iterations; either way the state is consistent and resumes to the same
// run. On a recorder or checkpoint error the returned state includes the
// failed iteration, which the recorder may not hold: resume from the last
// checkpoint instead.
func RunNested(ctx context.Context, t Target, prior []Quantiler, st *NestedState, s NestedSettings, rec DeadRecorder) (*NestedState, NestedResult, error) {
	begin := time.Now()
	if t.Dim() != st.Dim || t.NumExtra() != st.NumExtra {
		return st, NestedResult{}, fmt.Errorf("sampler: nested state has %d parameters and %d extra values, target has %d and %d", st.Dim, st.NumExtra, t.Dim(), t.NumExtra())
	}
	if err := checkPrior(prior, st.Dim); err != nil {
		return st, NestedResult{}, err
	}
	if err := st.check(); err != nil {
		return st, NestedResult{}, err
	}
	cfg, err := s.resolve(st.Live, st.Dim)
	if err != nil {
		return st, NestedResult{}, err
	}
	m := cfg.method()
	if st.Method != "" && st.Method != m {
		return st, NestedResult{}, fmt.Errorf("sampler: the run was made with %s, the settings give %s; a resumed run must keep its settings", st.Method, m)
	}
	st.Method = m

	var res NestedResult
	flush := func() error {
		if f, ok := rec.(Flusher); ok {
			if err := f.Flush(); err != nil {
				return fmt.Errorf("sampler: flushing the recorder at iteration %d: %w", st.Iter, err)
			}
		}
		return nil
	}
	finish := func(stop StopReason, err error) (*NestedState, NestedResult, error) {
		res.Stop = stop
		res.Elapsed = time.Since(begin)
		res.LogZ, res.LogZErr, res.H = st.Evidence()
		res.Ellipsoids = st.bound.n
		if ferr := flush(); err == nil {
			err = ferr
		}
		return st, res, err
	}
	if st.Finished {
		return finish(StopEvidence, nil)
	}
	if s.MaxIterations > 0 && st.Iter >= s.MaxIterations {
		return finish(StopMaxSteps, nil)
	}
	if ctx.Err() != nil {
		return finish(StopCanceled, nil)
	}
	r := newNestedRun(t, prior, st, cfg, &res)
	defer r.pool.close()
	for {
		w, lmin, lmax := st.extremes()
		if lmin == lmax || st.remaining(lmax) < cfg.tol {
			if err := r.finish(rec); err != nil {
				return finish(0, err)
			}
			return finish(StopEvidence, nil)
		}
		slot, ok := r.replacement(ctx, lmin)
		if !ok {
			return finish(StopCanceled, nil)
		}
		var rerr error
		lnw := st.logWidth()
		if rec != nil {
			rerr = r.record(rec, w, lnw, false)
		}
		st.LogZ, st.H = addEvidence(st.LogZ, st.H, lnw, lmin)
		r.replace(w, slot)
		st.Iter++
		res.Iterations++
		if st.Iter%cfg.update == 0 {
			r.refit()
		}
		if rerr != nil {
			return finish(0, fmt.Errorf("sampler: recording dead point %d: %w", st.Iter, rerr))
		}
		if s.CheckpointEvery > 0 && st.Iter%s.CheckpointEvery == 0 {
			if err := flush(); err != nil {
				return finish(0, err)
			}
			if err := s.Checkpoint(st); err != nil {
				return finish(0, fmt.Errorf("sampler: checkpoint at iteration %d: %w", st.Iter, err))
			}
		}
		switch {
		case s.MaxIterations > 0 && st.Iter >= s.MaxIterations:
			return finish(StopMaxSteps, nil)
		case s.MaxDuration > 0 && time.Since(begin) >= s.MaxDuration:
			return finish(StopBudget, nil)
		case ctx.Err() != nil:
			return finish(StopCanceled, nil)
		}
	}
}

func checkPrior(prior []Quantiler, dim int) error {
	if len(prior) != dim {
		return fmt.Errorf("sampler: %d prior quantile functions for %d parameters", len(prior), dim)
	}
	for i, q := range prior {
		if q == nil {
			return fmt.Errorf("sampler: prior quantile function of parameter %d is nil", i)
		}
	}
	return nil
}

// addEvidence adds a point of log prior mass lnw and log-likelihood lnL to
// the evidence lnZ and information h, by Skilling's (2006, Bayesian
// Analysis 1, 833, sect. 9) update
//
//	Z' = Z + w L,  H' = (w L / Z') ln L + (Z / Z') (H + ln Z) - ln Z'.
func addEvidence(lnZ, h, lnw, lnL float64) (float64, float64) {
	if math.IsInf(lnL, -1) {
		return lnZ, h
	}
	lnwL := lnw + lnL
	z := logAddExp(lnZ, lnwL)
	if math.IsInf(lnZ, -1) {
		return z, lnL - z
	}
	return z, math.Exp(lnwL-z)*lnL + math.Exp(lnZ-z)*(h+lnZ) - z
}

// nestedRun is RunNested's workspace, allocated once.
type nestedRun struct {
	st   *NestedState
	cfg  nestedConfig
	rng  *rand.Rand
	pool *pool
	res  *NestedResult

	fitter *boundFitter
	z, y   []float64 // scratch of length Dim

	// Slice sampling: one chain per batch slot and the batch of their
	// proposals.
	chains  []sliceChain
	pu, pxe []float64
	plogl   []float64
	owner   []int
	lstar   float64 // threshold of the current slice batch
	dead    DeadPoint
}

func newNestedRun(t Target, prior []Quantiler, st *NestedState, cfg nestedConfig, res *NestedResult) *nestedRun {
	d, k, ne := st.Dim, cfg.batch, st.Dim+st.NumExtra
	r := &nestedRun{
		st: st, cfg: cfg, rng: rand.New(st.pcg), res: res,
		pool:   newPool(nestedTarget{t, prior}, workerCount(cfg.workers, k)),
		fitter: newBoundFitter(d, st.Live, minCluster(d), cfg.enlarge),
		z:      make([]float64, d), y: make([]float64, d),
		chains: make([]sliceChain, k),
		pu:     make([]float64, k*d), pxe: make([]float64, k*ne), plogl: make([]float64, k),
		owner: make([]int, k),
	}
	for i := range r.chains {
		r.chains[i] = sliceChain{u: make([]float64, d), dir: make([]float64, d), xe: make([]float64, ne)}
	}
	st.queue.reserve(k, d, ne)
	if m := maxEllipsoids(st.Live, minCluster(d)); len(st.bound.ells) < m {
		nb := newBound(d, m)
		for i := range st.bound.n {
			nb.ells[i].copyFrom(&st.bound.ells[i])
		}
		nb.n = st.bound.n
		nb.update()
		st.bound = nb
	}
	if st.bound.n == 0 {
		r.fitter.partition(&st.bound, st.U, st.logX())
		st.overshoot = st.bound.logVol - st.logX()
	}
	switch cfg.proposal {
	case ProposeBound:
		st.useSlice = false
	case ProposeSlice:
		st.useSlice = true
	}
	return r
}

// minCluster is the fewest live points an ellipsoid may be fitted to: two
// more than the dimension, so that the covariance of the points left after
// removing any one can still be full rank (the leave-one-out scaling).
// Smaller clusters get a copy of a neighbour's ellipsoid
// (boundFitter.place).
func minCluster(d int) int { return d + 2 }

// nestedTarget evaluates a Target at the image of a unit-cube point under
// the prior's quantile functions. Its extra values are the parameters x
// followed by the Target's extras.
type nestedTarget struct {
	t     Target
	prior []Quantiler
}

func (n nestedTarget) Dim() int      { return n.t.Dim() }
func (n nestedTarget) NumExtra() int { return n.t.Dim() + n.t.NumExtra() }
func (n nestedTarget) NewEvaluator() Evaluator {
	return &nestedEval{e: n.t.NewEvaluator(), prior: n.prior}
}

type nestedEval struct {
	e     Evaluator
	prior []Quantiler
}

func (e *nestedEval) LogProb(u, xe []float64) float64 {
	d := len(u)
	x, extra := xe[:d], xe[d:]
	ok := true
	for i, q := range e.prior {
		v := q.Quantile(u[i])
		x[i] = v
		ok = ok && !math.IsNaN(v) && !math.IsInf(v, 0)
	}
	if !ok {
		for i := range extra {
			extra[i] = math.NaN()
		}
		return math.Inf(-1)
	}
	lp := e.e.LogProb(x, extra)
	if math.IsNaN(lp) || math.IsInf(lp, 0) {
		return math.Inf(-1)
	}
	return lp
}

// replacement returns the queue slot of the next candidate above lstar,
// refilling the queue as needed; ok is false if ctx was cancelled first.
func (r *nestedRun) replacement(ctx context.Context, lstar float64) (slot int, ok bool) {
	q := &r.st.queue
	for {
		for q.next < q.n {
			j := q.next
			q.next++
			if q.logl[j] > lstar {
				if !q.slice {
					r.st.rejUsed++
				}
				return j, true
			}
		}
		if ctx.Err() != nil {
			return -1, false
		}
		if r.st.useSlice {
			r.sliceBatch(lstar)
		} else {
			r.boundBatch()
		}
	}
}

// boundBatch fills the queue with Batch draws from the bound, evaluated.
func (r *nestedRun) boundBatch() {
	st, q, d := r.st, &r.st.queue, r.st.Dim
	k := r.cfg.batch
	for i := range k {
		st.bound.draw(q.u[i*d:(i+1)*d], r.z, r.y, r.rng)
	}
	r.pool.evaluate(q.logl, q.xe, q.u, k)
	q.n, q.next, q.slice = k, 0, false
	st.Evals += k
	st.rejEvals += k
	r.res.Evaluations += k
}

// replace copies queue slot j into live point w.
func (r *nestedRun) replace(w, j int) {
	st, q := r.st, &r.st.queue
	d, ne := st.Dim, st.NumExtra
	copy(st.U[w*d:(w+1)*d], q.u[j*d:(j+1)*d])
	xe := q.xe[j*(d+ne) : (j+1)*(d+ne)]
	copy(st.X[w*d:(w+1)*d], xe[:d])
	copy(st.Extra[w*ne:(w+1)*ne], xe[d:])
	st.LogL[w] = q.logl[j]
}

func (r *nestedRun) record(rec DeadRecorder, w int, lnw float64, final bool) error {
	st := r.st
	d, ne := st.Dim, st.NumExtra
	r.dead = DeadPoint{
		Index: st.Iter + 1, X: st.X[w*d : (w+1)*d], Extra: st.Extra[w*ne : (w+1)*ne],
		LogL: st.LogL[w], LogWt: lnw + st.LogL[w], Final: final,
	}
	return rec.RecordDead(&r.dead)
}

// refit refits the bound to the live points and, under ProposeAuto, decides
// between rejection and slice sampling from the usable fraction of the bound
// draws evaluated since the last decision (once there are at least two
// batches' worth).
//
// Between searches for clusters, each ellipsoid is refitted to its nearest
// points (boundFitter.refit). The clusters are searched for anew when a
// cluster has become too small (a mode dying out) and when the bound's
// volume relative to the expected volume X has more than doubled since the
// last search (modes separating inside one ellipsoid). On a single
// Gaussian this ratio stays put, and the search, by far the costliest part
// of a refit, is not repeated.
func (r *nestedRun) refit() {
	st := r.st
	lnX := st.logX()
	if !r.fitter.refit(&st.bound, st.U, lnX) || st.bound.logVol-lnX > st.overshoot+math.Ln2 {
		r.fitter.partition(&st.bound, st.U, lnX)
		st.overshoot = st.bound.logVol - lnX
	}
	if r.cfg.proposal != ProposeAuto {
		return
	}
	if st.useSlice {
		st.sliceLeft -= r.cfg.update
		if st.sliceLeft <= 0 {
			st.useSlice, st.rejEvals, st.rejUsed = false, 0, 0
		}
		return
	}
	if st.rejEvals < 2*r.cfg.batch {
		return
	}
	if float64(st.rejUsed) < r.cfg.sliceBelow*float64(st.rejEvals) {
		st.useSlice, st.sliceLeft = true, st.Live
	}
	st.rejEvals, st.rejUsed = 0, 0
}

// finish adds the live points, in increasing order of likelihood, each
// with prior mass X/Live, and marks the run finished.
func (r *nestedRun) finish(rec DeadRecorder) error {
	st := r.st
	lnw := st.logX() - math.Log(float64(st.Live))
	order := st.liveOrder()
	var err error
	for _, w := range order {
		if rec != nil && err == nil {
			if err = r.record(rec, w, lnw, true); err != nil {
				err = fmt.Errorf("sampler: recording final point %d: %w", st.Iter+1, err)
			}
		}
		st.LogZ, st.H = addEvidence(st.LogZ, st.H, lnw, st.LogL[w])
		st.Iter++
		r.res.Iterations++
	}
	st.Finished = true
	return err
}

// liveOrder returns the live indices sorted by increasing log-likelihood
// (ties by index).
func (st *NestedState) liveOrder() []int {
	order := make([]int, st.Live)
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(a, b int) int {
		switch la, lb := st.LogL[a], st.LogL[b]; {
		case la < lb:
			return -1
		case la > lb:
			return 1
		}
		return 0
	})
	return order
}
