package sampler

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"time"
)

// Settings configures Run. The zero value runs the stretch move on
// GOMAXPROCS workers until ctx is cancelled.
type Settings struct {
	Move    Move // proposal; nil means Stretch{A: 2}
	Workers int  // goroutines evaluating the log density; 0 (or less) means GOMAXPROCS

	// Stopping rules; whichever is met first stops the run.
	MaxSteps    int           // stop once State.Step reaches this total (steps before a resume count); 0 means no limit
	MaxDuration time.Duration // wall-clock budget of this call; 0 means none
	Convergence *Convergence  // convergence rule; nil means off

	// Checkpoint, if set, is called after every step whose State.Step is a
	// multiple of CheckpointEvery, once the recorder has been flushed; the
	// state is valid only during the call (encode it there). An error ends
	// the run.
	CheckpointEvery int
	Checkpoint      func(st *State) error
}

// StopReason says which rule ended a run.
type StopReason int

const (
	StopMaxSteps  StopReason = iota + 1 // State.Step reached Settings.MaxSteps
	StopBudget                          // the wall-clock budget was spent
	StopConverged                       // the convergence rule was met
	StopCanceled                        // the context was cancelled
	StopEvidence                        // nested sampling: the evidence tolerance was met and the run finished
)

func (r StopReason) String() string {
	switch r {
	case StopMaxSteps:
		return "step count reached"
	case StopBudget:
		return "wall-clock budget spent"
	case StopConverged:
		return "converged"
	case StopCanceled:
		return "cancelled"
	case StopEvidence:
		return "evidence converged"
	}
	return fmt.Sprintf("StopReason(%d)", int(r))
}

// Result describes how a run ended.
type Result struct {
	Stop    StopReason    // zero when Run returns an error
	Steps   int           // steps taken by this call
	Elapsed time.Duration // wall-clock time of this call
	// Tau is the integrated autocorrelation time per parameter (in steps)
	// from the last convergence check, nil if there was none.
	Tau []float64
}

// Run advances the ensemble in st (which it modifies and returns) until a
// stopping rule is met, handing every step to rec (which may be nil).
//
// One step updates the ensemble in two halves (Goodman & Weare 2010, CAMCoS
// 5, 65): every walker of the first half gets a proposal from the moves,
// using the second half as the complementary ensemble; the proposals are
// evaluated in parallel on the worker pool (Foreman-Mackey et al. 2013, PASP
// 125, 306); each is accepted with probability min(1, exp(log factor +
// log p(x') - log p(x))); then the second half is updated likewise from the
// new first half. A proposal whose log density is NaN or ±Inf is rejected.
//
// All random numbers are drawn on the calling goroutine in a fixed order
// (for each half: the proposals walker by walker, then one uniform per
// walker for acceptance), so the chain does not depend on Settings.Workers,
// and a run resumed from a checkpoint at any step continues the very same
// chain.
//
// When ctx is cancelled the current step completes and Run returns with
// StopCanceled and a nil error (with no step taken if ctx is already
// cancelled). On every return the recorder is flushed (if
// it is a Flusher). On a recorder or checkpoint error the returned state
// includes the failed step, which the recorder may not hold: resume from
// the last checkpoint instead.
func Run(ctx context.Context, t Target, st *State, s Settings, rec Recorder) (*State, Result, error) {
	begin := time.Now()
	if t.Dim() != st.Dim || t.NumExtra() != st.NumExtra {
		return st, Result{}, fmt.Errorf("sampler: state has %d parameters and %d extra values, target has %d and %d", st.Dim, st.NumExtra, t.Dim(), t.NumExtra())
	}
	if err := st.check(); err != nil {
		return st, Result{}, err
	}
	move := s.Move
	if move == nil {
		move = Stretch{A: 2}
	}
	half := st.Walkers / 2
	if err := move.Check(st.Dim, half); err != nil {
		return st, Result{}, err
	}
	sig := move.String()
	if st.Moves != "" && st.Moves != sig {
		return st, Result{}, fmt.Errorf("sampler: the chain was run with move %s, the settings give %s; a resumed chain must keep its moves", st.Moves, sig)
	}
	if s.MaxSteps < 0 || s.MaxDuration < 0 || s.CheckpointEvery < 0 {
		return st, Result{}, fmt.Errorf("sampler: negative stopping or checkpoint setting (max steps %d, max duration %v, checkpoint every %d)", s.MaxSteps, s.MaxDuration, s.CheckpointEvery)
	}
	if (s.Checkpoint == nil) != (s.CheckpointEvery == 0) {
		return st, Result{}, errors.New("sampler: set both Checkpoint and CheckpointEvery, or neither")
	}
	var conv convergence
	if s.Convergence != nil {
		var err error
		if conv, err = s.Convergence.resolve(st); err != nil {
			return st, Result{}, err
		}
	}
	st.Moves = sig

	e := newEnsemble(t, st, move, workerCount(s.Workers, half))
	defer e.pool.close()
	flush := func() error {
		if f, ok := rec.(Flusher); ok {
			if err := f.Flush(); err != nil {
				return fmt.Errorf("sampler: flushing the recorder at step %d: %w", st.Step, err)
			}
		}
		return nil
	}
	var res Result
	finish := func(stop StopReason, err error) (*State, Result, error) {
		res.Stop = stop
		res.Elapsed = time.Since(begin)
		if ferr := flush(); err == nil {
			err = ferr
		}
		return st, res, err
	}
	if s.MaxSteps > 0 && st.Step >= s.MaxSteps {
		return finish(StopMaxSteps, nil)
	}
	if ctx.Err() != nil {
		return finish(StopCanceled, nil)
	}
	for {
		e.step()
		res.Steps++
		if rec != nil {
			if err := rec.Record(&e.rec); err != nil {
				return finish(0, fmt.Errorf("sampler: recording step %d: %w", st.Step, err))
			}
		}
		converged := false
		if conv.h != nil {
			if err := conv.h.Record(&e.rec); err != nil {
				return finish(0, err)
			}
			if st.Step%conv.every == 0 {
				converged = conv.check(st)
				res.Tau = append(res.Tau[:0], st.Tau...)
			}
		}
		if s.CheckpointEvery > 0 && st.Step%s.CheckpointEvery == 0 {
			if err := flush(); err != nil {
				return finish(0, err)
			}
			if err := s.Checkpoint(st); err != nil {
				return finish(0, fmt.Errorf("sampler: checkpoint at step %d: %w", st.Step, err))
			}
		}
		switch {
		case s.MaxSteps > 0 && st.Step >= s.MaxSteps:
			return finish(StopMaxSteps, nil)
		case converged:
			return finish(StopConverged, nil)
		case s.MaxDuration > 0 && time.Since(begin) >= s.MaxDuration:
			return finish(StopBudget, nil)
		case ctx.Err() != nil:
			return finish(StopCanceled, nil)
		}
	}
}

// ensemble is Run's workspace: everything one step needs, allocated once.
type ensemble struct {
	st   *State
	move Move
	rng  *rand.Rand
	pool *pool
	comp [2]*Complement // comp[h] proposes for half h from the other half

	prop, propLogP, propExtra, logFactor []float64 // one half's proposals
	accepted                             []bool
	rec                                  Step
}

func newEnsemble(t Target, st *State, move Move, workers int) *ensemble {
	half, d, ne := st.Walkers/2, st.Dim, st.NumExtra
	e := &ensemble{
		st: st, move: move, rng: rand.New(st.pcg), pool: newPool(t, workers),
		prop:      make([]float64, half*d),
		propLogP:  make([]float64, half),
		propExtra: make([]float64, half*ne),
		logFactor: make([]float64, half),
		accepted:  make([]bool, st.Walkers),
	}
	for h := range 2 {
		e.comp[h] = newComplement(half, d)
		other := 1 - h
		e.comp[h].pos = st.Pos[other*half*d : (other+1)*half*d]
	}
	e.rec = Step{Walkers: st.Walkers, Dim: d, NumExtra: ne, Pos: st.Pos, LogP: st.LogP, Extra: st.Extra, Accepted: e.accepted}
	return e
}

func (e *ensemble) step() {
	st := e.st
	half, d, ne := st.Walkers/2, st.Dim, st.NumExtra
	for h := range 2 {
		off := h * half
		for i := range half {
			k := off + i
			e.logFactor[i] = e.move.Propose(e.prop[i*d:(i+1)*d], st.Pos[k*d:(k+1)*d], e.comp[h], e.rng)
		}
		e.pool.evaluate(e.propLogP, e.propExtra, e.prop, half)
		for i := range half {
			k := off + i
			u := e.rng.Float64()
			lp := e.propLogP[i]
			ok := !math.IsNaN(lp) && !math.IsInf(lp, 0) && math.Log(u) < e.logFactor[i]+lp-st.LogP[k]
			e.accepted[k] = ok
			if ok {
				copy(st.Pos[k*d:(k+1)*d], e.prop[i*d:(i+1)*d])
				copy(st.Extra[k*ne:(k+1)*ne], e.propExtra[i*ne:(i+1)*ne])
				st.LogP[k] = lp
				st.Accepted[k]++
			}
		}
	}
	st.Step++
	e.rec.Index = st.Step
}
