package sampler_test

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"strings"
	"sync/atomic"
	"testing"
	"time"

	"chord/sampler"
	"chord/sampler/targets"
)

func sameDead(t *testing.T, label string, got, want []sampler.DeadPoint) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("%s: %d dead points, want %d", label, len(got), len(want))
	}
	for i := range want {
		g, w := got[i], want[i]
		if g.Index != w.Index || g.Final != w.Final || !sameBits(g.X, w.X) || !sameBits(g.Extra, w.Extra) ||
			!sameBits([]float64{g.LogL, g.LogWt}, []float64{w.LogL, w.LogWt}) {
			t.Fatalf("%s: dead point %d differs: %+v vs %+v", label, i, g, w)
		}
	}
}

// nestedCase is a target, prior and settings for the reproducibility tests.
type nestedCase struct {
	name  string
	tg    sampler.Target
	prior []sampler.Quantiler
	live  int
	set   sampler.NestedSettings
}

func nestedCases(t *testing.T) []nestedCase {
	return []nestedCase{
		// A correlated Gaussian with an extra value, bounding ellipsoids.
		{"gaussian", testGaussian(t, 3, 10), uniformBox(3, -20, 20), 50, sampler.NestedSettings{Batch: 7}},
		// 18 modes: cluster searches, refits and placed ellipsoids.
		{"egg-box", targets.EggBox{}, uniformBox(2, 0, targets.EggBoxSide), 200, sampler.NestedSettings{}},
		// A threshold high enough to switch between rejection and slice
		// sampling back and forth.
		{"shells", targets.GaussianShells{D: 2}, uniformBox(2, -6, 6), 60, sampler.NestedSettings{SliceBelow: 0.3, Batch: 5}},
		{"slice", testGaussian(t, 3, 10), uniformBox(3, -20, 20), 40, sampler.NestedSettings{Proposal: sampler.ProposeSlice, Batch: 4, SliceSteps: 6}},
	}
}

// TestNestedResumeAndWorkers: the promises of issue 16 and the design's
// sampler section. A run stopped at iteration k, encoded, decoded and
// continued on another number of workers gives bit for bit the dead points
// (and evidence) of an uninterrupted run on one worker.
func TestNestedResumeAndWorkers(t *testing.T) {
	for _, c := range nestedCases(t) {
		ref := &deadRec{}
		refSt, refRes := nested(t, c.tg, c.prior, c.live, 11, withWorkers(c.set, 1), ref)
		switch c.name {
		case "shells":
			if refRes.SliceEvaluations == 0 || refRes.SliceEvaluations == refRes.Evaluations {
				t.Errorf("%s: %d of %d evaluations by slice sampling; the case must use both", c.name, refRes.SliceEvaluations, refRes.Evaluations)
			}
		case "egg-box":
			if refRes.Ellipsoids < 8 {
				t.Errorf("%s: %d ellipsoids", c.name, refRes.Ellipsoids)
			}
		}
		n := len(ref.pts)
		for _, workers := range []int{2, 3, 7} {
			for _, k := range []int{1, n / 3, n - c.live - 1} {
				label := fmt.Sprintf("%s, %d workers, stop at %d", c.name, workers, k)
				st, err := sampler.InitNested(bg, c.tg, c.prior, sampler.NestedInit{Live: c.live, Seed: 11, Workers: workers})
				if err != nil {
					t.Fatal(label, err)
				}
				rec := &deadRec{}
				s := withWorkers(c.set, workers)
				s.MaxIterations = k
				st, res, err := sampler.RunNested(bg, c.tg, c.prior, st, s, rec)
				if err != nil || res.Stop != sampler.StopMaxSteps || st.Iter != k {
					t.Fatalf("%s: first part ended by %v at %d: %v", label, res.Stop, st.Iter, err)
				}
				b, err := st.MarshalBinary()
				if err != nil {
					t.Fatal(label, err)
				}
				var back sampler.NestedState
				if err := back.UnmarshalBinary(b); err != nil {
					t.Fatal(label, err)
				}
				fin, _, err := sampler.RunNested(bg, c.tg, c.prior, &back, withWorkers(c.set, 1+workers%2), rec)
				if err != nil {
					t.Fatal(label, err)
				}
				sameDead(t, label, rec.pts, ref.pts)
				if !sameBits([]float64{fin.LogZ, fin.H}, []float64{refSt.LogZ, refSt.H}) || fin.Evals != refSt.Evals {
					t.Fatalf("%s: ln Z %v, H %v, %d evaluations; uninterrupted %v, %v, %d", label, fin.LogZ, fin.H, fin.Evals, refSt.LogZ, refSt.H, refSt.Evals)
				}
			}
		}
	}
}

func withWorkers(s sampler.NestedSettings, w int) sampler.NestedSettings {
	s.Workers = w
	return s
}

// sparse is the unit square where the likelihood is NaN except in the
// corner [0, 0.2]^2 (4 % of the prior), with a call counter that cancels a
// context at a chosen call.
type sparse struct {
	calls    *atomic.Int64
	cancelAt int64
	cancel   context.CancelFunc
}

func (s sparse) Dim() int                        { return 2 }
func (s sparse) NumExtra() int                   { return 0 }
func (s sparse) NewEvaluator() sampler.Evaluator { return s }
func (s sparse) LogProb(x, _ []float64) float64 {
	if s.calls.Add(1) == s.cancelAt {
		s.cancel()
	}
	if x[0] > 0.2 || x[1] > 0.2 {
		return math.NaN()
	}
	return -(x[0] + x[1]) * 10
}

// TestNestedCancelMidBatch: cancellation between two batches of one
// iteration (most candidates are rejected here, so an iteration needs
// several batches) leaves a state that resumes to the uninterrupted run.
func TestNestedCancelMidBatch(t *testing.T) {
	prior := uniformBox(2, 0, 1)
	run := func(ctx context.Context, tg sparse, st *sampler.NestedState, workers int, rec *deadRec) (*sampler.NestedState, sampler.NestedResult) {
		st, res, err := sampler.RunNested(ctx, tg, prior, st, sampler.NestedSettings{Workers: workers, Proposal: sampler.ProposeBound, MaxIterations: 300}, rec)
		if err != nil {
			t.Fatal(err)
		}
		return st, res
	}
	init := func(tg sparse) *sampler.NestedState {
		st, err := sampler.InitNested(bg, tg, prior, sampler.NestedInit{Live: 30, Seed: 5, Workers: 1})
		if err != nil {
			t.Fatal(err)
		}
		return st
	}
	ref := &deadRec{}
	plain := sparse{calls: new(atomic.Int64)}
	run(bg, plain, init(plain), 1, ref)
	for _, at := range []int64{100, 517, 1000} {
		ctx, cancel := context.WithCancel(bg)
		tg := sparse{calls: new(atomic.Int64), cancelAt: at, cancel: cancel}
		rec := &deadRec{}
		st, res := run(ctx, tg, init(tg), 1, rec)
		cancel()
		if res.Stop != sampler.StopCanceled || rec.flushes != 1 {
			t.Fatalf("cancel at call %d: stop %v, %d flushes", at, res.Stop, rec.flushes)
		}
		b, _ := st.MarshalBinary()
		var back sampler.NestedState
		if err := back.UnmarshalBinary(b); err != nil {
			t.Fatal(err)
		}
		run(bg, plain, &back, 2, rec)
		sameDead(t, fmt.Sprintf("cancelled at call %d", at), rec.pts, ref.pts)
	}
}

// TestNestedRejectsNaNAndInf: a log-likelihood that is NaN, +Inf or -Inf,
// or a prior quantile that is NaN, counts as zero likelihood; the run
// neither crashes nor accepts such points, and the evidence is that of the
// remaining region. The likelihood is the normal N((0.5, 0.5), 0.1^2 I) on
// the unit square, rejected where x0 > 0.5 (NaN), x1 > 0.95 (+Inf) or
// x1 < 0.1 (-Inf), and where the quantile of the second axis returns NaN
// (u1 > 0.98, inside the +Inf region anyway). So Z is the normal mass of
// [0, 0.5] x [0.1, 0.95]: (Phi(0) - Phi(-5)) (Phi(4.5) - Phi(-4)), with
// Phi from gonum's distuv.UnitNormal.CDF.
func TestNestedRejectsNaNAndInf(t *testing.T) {
	tg := funcTarget{2, func(x []float64) float64 {
		switch {
		case x[0] > 0.5:
			return math.NaN()
		case x[1] > 0.95:
			return math.Inf(1)
		case x[1] < 0.1:
			return math.Inf(-1)
		}
		dx, dy := (x[0]-0.5)/0.1, (x[1]-0.5)/0.1
		return -0.5*(dx*dx+dy*dy) - math.Log(2*math.Pi*0.01)
	}}
	prior := []sampler.Quantiler{uniformBox(1, 0, 1)[0], nanAbove{0.98}}
	phi := func(z float64) float64 { return 0.5 * math.Erfc(-z/math.Sqrt2) }
	truth := math.Log((phi(0) - phi(-5)) * (phi(4.5) - phi(-4)))
	rec := &deadRec{}
	_, res := nested(t, tg, prior, 100, 3, sampler.NestedSettings{Workers: 2}, rec)
	t.Logf("ln Z %.3f +- %.3f, truth %.3f", res.LogZ, res.LogZErr, truth)
	if math.Abs(res.LogZ-truth) > 3*res.LogZErr {
		t.Errorf("ln Z %.3f +- %.3f, truth %.3f", res.LogZ, res.LogZErr, truth)
	}
	var rejected int
	for _, p := range rec.pts {
		finite := !math.IsInf(p.LogL, 0) && !math.IsNaN(p.LogL)
		inside := p.X[0] <= 0.5 && p.X[1] <= 0.95 && p.X[1] >= 0.1
		switch {
		case math.IsNaN(p.LogL) || math.IsInf(p.LogL, 1) || math.IsNaN(p.LogWt):
			t.Fatalf("dead point %d has log-likelihood %v and log weight %v", p.Index, p.LogL, p.LogWt)
		case finite != inside:
			t.Fatalf("dead point %d at %v has log-likelihood %v", p.Index, p.X, p.LogL)
		case !finite:
			rejected++
			if !math.IsInf(p.LogWt, -1) || p.Index > 100 {
				t.Fatalf("rejected point %d with log weight %v", p.Index, p.LogWt)
			}
		}
	}
	if rejected == 0 {
		t.Error("no initial point fell where the likelihood is rejected")
	}
}

// nanAbove is the uniform quantile on [0, 1] that returns NaN above p.
type nanAbove struct{ p float64 }

func (q nanAbove) Quantile(p float64) float64 {
	if p > q.p {
		return math.NaN()
	}
	return p
}

// TestNestedConstantLikelihood: with L = 1 everywhere the live points all
// share one log-likelihood, the run finishes at once, and Z = 1 exactly
// (each point has prior mass 1/Live), H = 0.
func TestNestedConstantLikelihood(t *testing.T) {
	tg := funcTarget{3, func([]float64) float64 { return 0 }}
	rec := &deadRec{}
	st, res := nested(t, tg, uniformBox(3, 0, 1), 50, 1, sampler.NestedSettings{}, rec)
	if math.Abs(res.LogZ) > 1e-14 || res.H > 1e-14 || len(rec.pts) != 50 || st.Evals != 50 || !rec.pts[49].Final {
		t.Errorf("constant likelihood: ln Z %v, H %v, %d points, %d evaluations", res.LogZ, res.H, len(rec.pts), st.Evals)
	}
}

// TestNestedFinishedState: a finished run does nothing more; Evidence and
// the result agree with the recorded points.
func TestNestedFinishedState(t *testing.T) {
	tg := targets.StdNormal{D: 2}
	prior := uniformBox(2, -5, 5)
	rec := &deadRec{}
	st, res := nested(t, tg, prior, 50, 2, sampler.NestedSettings{}, rec)
	lnZ, lnZErr, h := st.Evidence()
	if lnZ != res.LogZ || lnZErr != res.LogZErr || h != res.H || math.Abs(lnZErr-math.Sqrt(h/50)) > 1e-15 {
		t.Errorf("Evidence() = %v, %v, %v; result %v, %v, %v", lnZ, lnZErr, h, res.LogZ, res.LogZErr, res.H)
	}
	// ln Z from the recorded weights, summed independently.
	var z float64
	for _, p := range rec.pts {
		z += math.Exp(p.LogWt)
	}
	if math.Abs(math.Log(z)-lnZ) > 1e-12 {
		t.Errorf("recorded weights sum to ln Z %v, state says %v", math.Log(z), lnZ)
	}
	iter := st.Iter
	_, res2, err := sampler.RunNested(bg, tg, prior, st, sampler.NestedSettings{}, rec)
	if err != nil || res2.Stop != sampler.StopEvidence || res2.Iterations != 0 || st.Iter != iter || len(rec.pts) != iter {
		t.Errorf("rerun of a finished state: %v, %d iterations, err %v", res2.Stop, res2.Iterations, err)
	}
}

func TestNestedInitErrors(t *testing.T) {
	tg := targets.StdNormal{D: 3}
	prior := uniformBox(3, -1, 1)
	nan := funcTarget{3, func([]float64) float64 { return math.NaN() }}
	cases := []struct {
		name  string
		tg    sampler.Target
		prior []sampler.Quantiler
		live  int
		want  string
	}{
		{"few live points", tg, prior, 7, "7 live points for 3 parameters: want at least 8"},
		{"short prior", tg, prior[:2], 50, "2 prior quantile functions for 3 parameters"},
		{"nil quantile", tg, []sampler.Quantiler{prior[0], nil, prior[2]}, 50, "quantile function of parameter 1 is nil"},
		{"NaN likelihood", nan, prior, 50, "NaN or infinite at all 50 initial prior draws"},
	}
	for _, c := range cases {
		_, err := sampler.InitNested(bg, c.tg, c.prior, sampler.NestedInit{Live: c.live, Seed: 1})
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want %q", c.name, err, c.want)
		}
	}
}

func TestNestedSettingsErrors(t *testing.T) {
	tg := targets.StdNormal{D: 2}
	prior := uniformBox(2, -5, 5)
	st, err := sampler.InitNested(bg, tg, prior, sampler.NestedInit{Live: 20, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	ck := func(*sampler.NestedState) error { return nil }
	cases := []struct {
		s    sampler.NestedSettings
		want string
	}{
		{sampler.NestedSettings{Batch: 21}, "batch 21 (want 1 to the 20 live points)"},
		{sampler.NestedSettings{Enlarge: 0.5}, "enlargement 0.5"},
		{sampler.NestedSettings{UpdateEvery: -1}, "update interval -1"},
		{sampler.NestedSettings{Proposal: 7}, "proposal Proposal(7)"},
		{sampler.NestedSettings{SliceBelow: 1}, "slice threshold 1"},
		{sampler.NestedSettings{SliceSteps: -2}, "slice steps -2"},
		{sampler.NestedSettings{EvidenceTol: math.Inf(1)}, "evidence tolerance +Inf"},
		{sampler.NestedSettings{MaxIterations: -1}, "max iterations -1"},
		{sampler.NestedSettings{CheckpointEvery: 5}, "set both Checkpoint and CheckpointEvery"},
		{sampler.NestedSettings{Checkpoint: ck}, "set both Checkpoint and CheckpointEvery"},
	}
	for _, c := range cases {
		_, _, err := sampler.RunNested(bg, tg, prior, st.Clone(), c.s, nil)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("settings %+v: error %v, want %q", c.s, err, c.want)
		}
	}
	if _, _, err := sampler.RunNested(bg, targets.StdNormal{D: 3}, uniformBox(3, 0, 1), st.Clone(), sampler.NestedSettings{}, nil); err == nil {
		t.Error("state of 2 parameters run with a 3-parameter target: no error")
	}
	if _, _, err := sampler.RunNested(bg, tg, prior[:1], st.Clone(), sampler.NestedSettings{}, nil); err == nil {
		t.Error("short prior: no error")
	}
	part, _, err := sampler.RunNested(bg, tg, prior, st.Clone(), sampler.NestedSettings{MaxIterations: 5}, nil)
	if err != nil {
		t.Fatal(err)
	}
	_, _, err = sampler.RunNested(bg, tg, prior, part, sampler.NestedSettings{Batch: 3}, nil)
	if err == nil || !strings.Contains(err.Error(), "a resumed run must keep its settings") {
		t.Errorf("resume with another batch size: error %v", err)
	}
	var empty sampler.NestedState
	if _, _, err := sampler.RunNested(bg, tg, prior, &empty, sampler.NestedSettings{}, nil); err == nil {
		t.Error("zero state: no error")
	}
}

func TestNestedCorruptState(t *testing.T) {
	tg := testGaussian(t, 2, 10)
	prior := uniformBox(2, -10, 10)
	st, err := sampler.InitNested(bg, tg, prior, sampler.NestedInit{Live: 10, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	st, _, err = sampler.RunNested(bg, tg, prior, st, sampler.NestedSettings{Batch: 3, MaxIterations: 4}, nil)
	if err != nil {
		t.Fatal(err)
	}
	b, err := st.MarshalBinary()
	if err != nil {
		t.Fatal(err)
	}
	checkCorruption(t, b, func(c []byte) error { var s sampler.NestedState; return s.UnmarshalBinary(c) })
	var ens sampler.State
	if err := ens.UnmarshalBinary(b); !errors.Is(err, sampler.ErrCorruptState) {
		t.Errorf("nested state decoded as an ensemble state: error %v", err)
	}
}

// failDead fails at dead point at, or at the first final point if at is 0.
type failDead struct{ at int }

func (f failDead) RecordDead(p *sampler.DeadPoint) error {
	if p.Index == f.at || f.at == 0 && p.Final {
		return errors.New("disk full")
	}
	return nil
}

func TestNestedRecorderAndCheckpoint(t *testing.T) {
	tg := targets.StdNormal{D: 2}
	prior := uniformBox(2, -5, 5)
	init := func() *sampler.NestedState {
		st, err := sampler.InitNested(bg, tg, prior, sampler.NestedInit{Live: 20, Seed: 1})
		if err != nil {
			t.Fatal(err)
		}
		return st
	}
	_, _, err := sampler.RunNested(bg, tg, prior, init(), sampler.NestedSettings{}, failDead{at: 7})
	if err == nil || !strings.Contains(err.Error(), "recording dead point 7: disk full") {
		t.Errorf("recorder error: %v", err)
	}
	_, _, err = sampler.RunNested(bg, tg, prior, init(), sampler.NestedSettings{}, failDead{})
	if err == nil || !strings.Contains(err.Error(), "recording final point") || !strings.Contains(err.Error(), "disk full") {
		t.Errorf("recorder error on a final point: %v", err)
	}
	fail := func(*sampler.NestedState) error { return errors.New("no space") }
	_, _, err = sampler.RunNested(bg, tg, prior, init(), sampler.NestedSettings{CheckpointEvery: 30, Checkpoint: fail}, nil)
	if err == nil || !strings.Contains(err.Error(), "checkpoint at iteration 30: no space") {
		t.Errorf("checkpoint error: %v", err)
	}
	// The hook runs at multiples of CheckpointEvery after a flush, and its
	// encoded state resumes to the uninterrupted run.
	ref := &deadRec{}
	if _, _, err := sampler.RunNested(bg, tg, prior, init(), sampler.NestedSettings{}, ref); err != nil {
		t.Fatal(err)
	}
	rec := &deadRec{}
	var saved [][]byte
	hook := func(st *sampler.NestedState) error {
		if rec.flushes != len(saved)+1 || len(rec.pts) != st.Iter || st.Iter != 25*(len(saved)+1) {
			t.Errorf("checkpoint at iteration %d after %d flushes and %d recorded points", st.Iter, rec.flushes, len(rec.pts))
		}
		b, err := st.MarshalBinary()
		saved = append(saved, b)
		return err
	}
	if _, _, err := sampler.RunNested(bg, tg, prior, init(), sampler.NestedSettings{CheckpointEvery: 25, Checkpoint: hook}, rec); err != nil {
		t.Fatal(err)
	}
	sameDead(t, "with checkpoints", rec.pts, ref.pts)
	if len(saved) < 3 {
		t.Fatalf("%d checkpoints", len(saved))
	}
	var back sampler.NestedState
	if err := back.UnmarshalBinary(saved[2]); err != nil {
		t.Fatal(err)
	}
	tail := &deadRec{pts: append([]sampler.DeadPoint(nil), ref.pts[:75]...)}
	if _, _, err := sampler.RunNested(bg, tg, prior, &back, sampler.NestedSettings{}, tail); err != nil {
		t.Fatal(err)
	}
	sameDead(t, "resumed from the third checkpoint", tail.pts, ref.pts)
}

func TestNestedBudget(t *testing.T) {
	tg := funcTarget{2, func(x []float64) float64 { time.Sleep(50 * time.Microsecond); return -x[0] * x[0] * 1e4 }}
	prior := uniformBox(2, -1, 1)
	st, err := sampler.InitNested(bg, tg, prior, sampler.NestedInit{Live: 20, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	const budget = 20 * time.Millisecond
	st, res, err := sampler.RunNested(bg, tg, prior, st, sampler.NestedSettings{MaxDuration: budget}, nil)
	if err != nil || res.Stop != sampler.StopBudget || res.Elapsed < budget || res.Iterations == 0 || st.Finished {
		t.Errorf("stop %v after %v, %d iterations (finished %v), err %v; want the budget of %v", res.Stop, res.Elapsed, res.Iterations, st.Finished, err, budget)
	}
}

// TestNestedAllocs: once RunNested has set up, iterations allocate nothing
// (refits of the bound and slice batches included): on one worker the heap
// allocation count does not change from dead point 1000 to 3000. On two
// workers the runtime may start an OS thread when a worker blocks (about 6
// allocations each time, seen intermittently, in the ensemble's
// TestStepAllocs too), so there fewer than 20 allocations in the 2000
// iterations are allowed: far too few for any per-iteration allocation.
func TestNestedAllocs(t *testing.T) {
	tg := targets.StdNormal{D: 12}
	prior := uniformBox(12, -10, 10)
	for _, prop := range []sampler.Proposal{sampler.ProposeBound, sampler.ProposeSlice} {
		for _, workers := range []int{1, 2} {
			st, err := sampler.InitNested(bg, tg, prior, sampler.NestedInit{Live: 200, Seed: 1, Workers: workers})
			if err != nil {
				t.Fatal(err)
			}
			set := sampler.NestedSettings{Workers: workers, Proposal: prop, SliceSteps: 3, MaxIterations: 3000}
			allowed := uint64(0)
			if workers > 1 {
				allowed = 19
			}
			var ms runtime.MemStats
			var before uint64
			probed := false
			probe := deadFunc(func(p *sampler.DeadPoint) error {
				switch p.Index {
				case 1000:
					runtime.ReadMemStats(&ms)
					before = ms.Mallocs
				case 3000:
					runtime.ReadMemStats(&ms)
					probed = true
					if n := ms.Mallocs - before; n > allowed {
						t.Errorf("%v, %d workers: %d allocations in 2000 iterations", prop, workers, n)
					}
				}
				return nil
			})
			if _, _, err := sampler.RunNested(bg, tg, prior, st, set, probe); err != nil || !probed {
				t.Fatalf("%v, %d workers: run ended before iteration 3000 (%v)", prop, workers, err)
			}
		}
	}
}

type deadFunc func(p *sampler.DeadPoint) error

func (f deadFunc) RecordDead(p *sampler.DeadPoint) error { return f(p) }

// TestEqualWeight: systematic resampling gives each point floor or ceil of
// n times its weight fraction (Kitagawa 1996), here exactly, and never a
// point of zero or NaN weight.
func TestEqualWeight(t *testing.T) {
	nan := math.NaN()
	inf := math.Inf(-1)
	lw := []float64{inf, math.Log(1), nan, math.Log(2), math.Log(3), inf, math.Log(4), inf}
	rng := rand.New(rand.NewPCG(1, 1))
	for range 100 {
		idx := sampler.EqualWeight(make([]int, 20), lw, rng)
		count := map[int]int{}
		for _, i := range idx {
			count[i]++
		}
		if count[1] != 2 || count[3] != 4 || count[4] != 6 || count[6] != 8 {
			t.Fatalf("counts %v, want 2, 4, 6, 8 at 1, 3, 4, 6", count)
		}
	}
	// Kish's effective size of weights 1, 2, 3, 4: 100/30.
	if ess := sampler.EffectiveSize(lw); math.Abs(ess-10.0/3) > 1e-12 {
		t.Errorf("effective size %v, want 10/3", ess)
	}
	if n := len(sampler.EqualWeight(nil, lw, rng)); n != 3 {
		t.Errorf("nil destination: %d samples, want round(10/3) = 3", n)
	}
	defer func() {
		if recover() == nil {
			t.Error("no positive weight: no panic")
		}
	}()
	sampler.EqualWeight(make([]int, 3), []float64{inf, nan}, rng)
}
