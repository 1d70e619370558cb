package sampler_test

import (
	"context"
	"errors"
	"math"
	"math/rand/v2"
	"runtime"
	"strings"
	"testing"
	"time"

	"chord/sampler"
	"chord/sampler/targets"
)

// funcTarget is a target from a plain function, with no extras.
type funcTarget struct {
	d int
	f func(x []float64) float64
}

func (t funcTarget) Dim() int                        { return t.d }
func (t funcTarget) NumExtra() int                   { return 0 }
func (t funcTarget) NewEvaluator() sampler.Evaluator { return t }
func (t funcTarget) LogProb(x, _ []float64) float64  { return t.f(x) }

var bg = context.Background()

func TestInitErrors(t *testing.T) {
	normal := targets.StdNormal{D: 3}
	// -Inf wherever x0 > 0: about half the ball around 0 is forbidden.
	halfSpace := funcTarget{3, func(x []float64) float64 {
		if x[0] > 0 {
			return math.Inf(-1)
		}
		return 0
	}}
	nan := funcTarget{3, func(x []float64) float64 { return math.NaN() }}
	one := []float64{1, 1, 1}
	zero := []float64{0, 0, 0}
	set := sampler.InitSettings{Walkers: 8, Seed: 1}
	cases := []struct {
		name string
		err  func() error
		want string
	}{
		{"-Inf walker", func() error { _, err := sampler.InitBall(bg, halfSpace, zero, one, set); return err }, "log density is -Inf"},
		{"NaN walker", func() error { _, err := sampler.InitBall(bg, nan, zero, one, set); return err }, "log density is NaN"},
		{"odd walkers", func() error {
			_, err := sampler.InitBall(bg, normal, zero, one, sampler.InitSettings{Walkers: 9})
			return err
		}, "even number of at least 8"},
		{"too few walkers", func() error {
			_, err := sampler.InitBall(bg, normal, zero, one, sampler.InitSettings{Walkers: 6})
			return err
		}, "even number of at least 8"},
		{"zero scale", func() error { _, err := sampler.InitBall(bg, normal, zero, []float64{1, 0, 1}, set); return err }, "scale of parameter 1"},
		{"short centre", func() error { _, err := sampler.InitBall(bg, normal, zero[:2], one, set); return err }, "3-parameter"},
		{"constant parameter", func() error {
			_, err := sampler.InitPrior(bg, normal, func(dst []float64, rng *rand.Rand) error {
				dst[0], dst[1], dst[2] = rng.NormFloat64(), 5, rng.NormFloat64()
				return nil
			}, set)
			return err
		}, "same value 5 of parameter 1"},
		{"walkers on a plane", func() error {
			_, err := sampler.InitPrior(bg, normal, func(dst []float64, rng *rand.Rand) error {
				dst[0], dst[1] = rng.NormFloat64(), rng.NormFloat64()
				dst[2] = 2*dst[0] - dst[1]
				return nil
			}, set)
			return err
		}, "2-dimensional subspace"},
		{"draw fails", func() error {
			_, err := sampler.InitPrior(bg, normal, func([]float64, *rand.Rand) error { return errors.New("no prior") }, set)
			return err
		}, "walker 0: no prior"},
		{"wrong position count", func() error { _, err := sampler.InitPositions(bg, normal, make([]float64, 5), set); return err }, "5 initial coordinates"},
	}
	for _, c := range cases {
		err := c.err()
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want one containing %q", c.name, err, c.want)
		}
	}
}

func TestMoveErrors(t *testing.T) {
	tg := targets.StdNormal{D: 2}
	st := ball(t, tg, 6, 1) // halves of 3
	for _, m := range []sampler.Move{
		sampler.Stretch{A: 0.5},
		sampler.Stretch{A: math.Inf(1)},
		sampler.Walk{Subset: 1},
		sampler.Walk{Subset: 4},
		sampler.DiffEvolution{Gamma: -1},
		sampler.DiffEvolution{JumpProb: 2},
		sampler.Mixture{},
		sampler.Mixture{Moves: []sampler.Move{sampler.Stretch{}}, Weights: []float64{0}},
		sampler.Mixture{Moves: []sampler.Move{sampler.Stretch{}, sampler.Walk{Subset: 9}}, Weights: []float64{1, 1}},
	} {
		if _, _, err := sampler.Run(bg, tg, st.Clone(), sampler.Settings{Move: m, MaxSteps: 2}, nil); err == nil {
			t.Errorf("move %v: no error", m)
		}
	}
	if _, _, err := sampler.Run(bg, targets.StdNormal{D: 3}, st.Clone(), sampler.Settings{MaxSteps: 2}, nil); err == nil {
		t.Error("target of another dimension: no error")
	}
	if _, _, err := sampler.Run(bg, tg, st.Clone(), sampler.Settings{MaxSteps: 2, CheckpointEvery: 1}, nil); err == nil {
		t.Error("CheckpointEvery without Checkpoint: no error")
	}
}

// TestRejectsNaNAndInf: proposals into regions where the log density is
// NaN, -Inf or +Inf are rejected; no walker ever enters them.
func TestRejectsNaNAndInf(t *testing.T) {
	tg := funcTarget{2, func(x []float64) float64 {
		switch {
		case x[0] > 1:
			return math.NaN()
		case x[0] < -1:
			return math.Inf(-1)
		case x[1] > 1:
			return math.Inf(1)
		}
		return -0.5 * (x[0]*x[0] + x[1]*x[1])
	}}
	st := ball(t, tg, 8, 3)
	moves := sampler.Mixture{Moves: []sampler.Move{sampler.Stretch{}, sampler.Walk{}, sampler.DiffEvolution{}}, Weights: []float64{1, 1, 1}}
	inside := recorderFunc(func(s *sampler.Step) error {
		for k := range s.Walkers {
			x := s.Pos[2*k : 2*k+2]
			if x[0] > 1 || x[0] < -1 || x[1] > 1 || math.IsNaN(s.LogP[k]) || math.IsInf(s.LogP[k], 0) {
				t.Fatalf("step %d: walker %d at %v with log density %v", s.Index, k, x, s.LogP[k])
			}
		}
		return nil
	})
	if _, _, err := sampler.Run(bg, tg, st, sampler.Settings{Move: moves, MaxSteps: 2000, Workers: 2}, inside); err != nil {
		t.Fatal(err)
	}
}

// TestExtrasTravel: the Gaussian target's extra value is the squared
// Mahalanobis distance, -2 log p, exactly; it must arrive with its sample.
func TestExtrasTravel(t *testing.T) {
	tg := testGaussian(t, 3, 10)
	rec := recorderFunc(func(s *sampler.Step) error {
		for k := range s.Walkers {
			if s.Extra[k] != -2*s.LogP[k] {
				t.Fatalf("step %d walker %d: extra %v, log p %v", s.Index, k, s.Extra[k], s.LogP[k])
			}
		}
		return nil
	})
	if _, _, err := sampler.Run(bg, tg, ball(t, tg, 8, 1), sampler.Settings{MaxSteps: 200, Workers: 3}, rec); err != nil {
		t.Fatal(err)
	}
}

// cancelAt cancels its context when step `at` is recorded.
type cancelAt struct {
	memRec
	at     int
	cancel context.CancelFunc
}

func (c *cancelAt) Record(s *sampler.Step) error {
	if s.Index == c.at {
		c.cancel()
	}
	return c.memRec.Record(s)
}

func TestCancel(t *testing.T) {
	tg := targets.StdNormal{D: 3}
	ctx, cancel := context.WithCancel(bg)
	defer cancel()
	rec := &cancelAt{at: 5, cancel: cancel}
	st, res, err := sampler.Run(ctx, tg, ball(t, tg, 8, 1), sampler.Settings{Workers: 2}, rec)
	if err != nil {
		t.Fatal(err)
	}
	if res.Stop != sampler.StopCanceled || res.Steps != 5 || st.Step != 5 || len(rec.steps) != 5 || rec.flushes != 1 {
		t.Errorf("stop %v after %d steps (state %d, %d recorded, %d flushes), want cancelled after 5 with 1 flush", res.Stop, res.Steps, st.Step, len(rec.steps), rec.flushes)
	}
}

func TestCancelledBeforeStart(t *testing.T) {
	tg := targets.StdNormal{D: 3}
	ctx, cancel := context.WithCancel(bg)
	cancel()
	rec := &memRec{}
	st, res, err := sampler.Run(ctx, tg, ball(t, tg, 8, 1), sampler.Settings{}, rec)
	if err != nil || res.Stop != sampler.StopCanceled || res.Steps != 0 || st.Step != 0 || rec.flushes != 1 {
		t.Errorf("cancelled context: %v after %d steps, flushes %d, err %v", res.Stop, res.Steps, rec.flushes, err)
	}
}

func TestBudget(t *testing.T) {
	tg := targets.StdNormal{D: 3}
	const budget = 30 * time.Millisecond
	st, res, err := sampler.Run(bg, tg, ball(t, tg, 8, 1), sampler.Settings{MaxDuration: budget, MaxSteps: 1 << 40}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if res.Stop != sampler.StopBudget || res.Elapsed < budget || st.Step != res.Steps || res.Steps == 0 {
		t.Errorf("stop %v after %v and %d steps, want the budget of %v", res.Stop, res.Elapsed, res.Steps, budget)
	}
}

func TestMaxStepsAlreadyReached(t *testing.T) {
	tg := targets.StdNormal{D: 3}
	st, _, err := sampler.Run(bg, tg, ball(t, tg, 8, 1), sampler.Settings{MaxSteps: 10}, nil)
	if err != nil {
		t.Fatal(err)
	}
	_, res, err := sampler.Run(bg, tg, st, sampler.Settings{MaxSteps: 10}, nil)
	if err != nil || res.Stop != sampler.StopMaxSteps || res.Steps != 0 || st.Step != 10 {
		t.Errorf("run at its step limit: %v, %d steps, step %d, err %v", res.Stop, res.Steps, st.Step, err)
	}
}

type failRec struct{ at int }

func (f failRec) Record(s *sampler.Step) error {
	if s.Index == f.at {
		return errors.New("disk full")
	}
	return nil
}

func TestRecorderAndCheckpointErrors(t *testing.T) {
	tg := targets.StdNormal{D: 3}
	_, _, err := sampler.Run(bg, tg, ball(t, tg, 8, 1), sampler.Settings{MaxSteps: 10}, failRec{at: 4})
	if err == nil || !strings.Contains(err.Error(), "recording step 4: disk full") {
		t.Errorf("recorder error: %v", err)
	}
	fail := func(st *sampler.State) error { return errors.New("no space") }
	_, _, err = sampler.Run(bg, tg, ball(t, tg, 8, 1), sampler.Settings{MaxSteps: 10, CheckpointEvery: 3, Checkpoint: fail}, nil)
	if err == nil || !strings.Contains(err.Error(), "checkpoint at step 3: no space") {
		t.Errorf("checkpoint error: %v", err)
	}
}

// TestCheckpointHook: the hook runs at multiples of CheckpointEvery, after
// the recorder was flushed, and its state resumes to the same chain.
func TestCheckpointHook(t *testing.T) {
	tg := testGaussian(t, 3, 10)
	st0 := ball(t, tg, 8, 2)
	ref := &memRec{}
	if _, _, err := sampler.Run(bg, tg, st0.Clone(), sampler.Settings{MaxSteps: 30}, ref); err != nil {
		t.Fatal(err)
	}
	rec := &memRec{}
	var saved [][]byte
	hook := func(st *sampler.State) error {
		if rec.flushes != len(saved)+1 || len(rec.steps) != st.Step {
			t.Errorf("checkpoint at step %d after %d flushes and %d recorded steps", st.Step, rec.flushes, len(rec.steps))
		}
		b, err := st.MarshalBinary()
		saved = append(saved, b)
		return err
	}
	if _, _, err := sampler.Run(bg, tg, st0.Clone(), sampler.Settings{MaxSteps: 30, CheckpointEvery: 7, Checkpoint: hook}, rec); err != nil {
		t.Fatal(err)
	}
	if len(saved) != 4 { // steps 7, 14, 21, 28
		t.Fatalf("%d checkpoints, want 4", len(saved))
	}
	var st sampler.State
	if err := st.UnmarshalBinary(saved[2]); err != nil || st.Step != 21 {
		t.Fatalf("checkpoint 3: step %d, %v", st.Step, err)
	}
	resumed := &memRec{steps: append([]sampler.Step(nil), rec.steps[:21]...)}
	if _, _, err := sampler.Run(bg, tg, &st, sampler.Settings{MaxSteps: 30}, resumed); err != nil {
		t.Fatal(err)
	}
	sameSteps(t, "resumed from the step-21 checkpoint", resumed.steps, ref.steps)
}

// TestConvergence: the rule stops a Gaussian run once the chain is longer
// than 50 tau with tau stable, and a run resumed below that point (its
// History rebuilt by replaying the stored steps) stops at the very same
// step.
func TestConvergence(t *testing.T) {
	tg := testGaussian(t, 3, 10)
	st0 := ball(t, tg, 16, 9)
	ref := &memRec{}
	conv := &sampler.Convergence{Every: 100, RelChange: 0.05}
	st, res, err := sampler.Run(bg, tg, st0.Clone(), sampler.Settings{MaxSteps: 100000, Convergence: conv}, ref)
	if err != nil {
		t.Fatal(err)
	}
	if res.Stop != sampler.StopConverged {
		t.Fatalf("stopped by %v at step %d, want converged", res.Stop, st.Step)
	}
	for p, tau := range res.Tau {
		if !(float64(st.Step) > 50*tau) {
			t.Errorf("converged at step %d with tau[%d] = %v", st.Step, p, tau)
		}
	}
	t.Logf("converged at step %d, tau %.1f", st.Step, res.Tau)

	k := st.Step - 250
	part, _, err := sampler.Run(bg, tg, st0.Clone(), sampler.Settings{MaxSteps: k, Convergence: &sampler.Convergence{Every: 100, RelChange: 0.05}}, nil)
	if err != nil {
		t.Fatal(err)
	}
	b, _ := part.MarshalBinary()
	var back sampler.State
	if err := back.UnmarshalBinary(b); err != nil {
		t.Fatal(err)
	}
	h, _ := sampler.NewHistory(16, 3, 0)
	for i := range k {
		if err := h.Record(&ref.steps[i]); err != nil {
			t.Fatal(err)
		}
	}
	st2, res2, err := sampler.Run(bg, tg, &back, sampler.Settings{MaxSteps: 100000, Convergence: &sampler.Convergence{Every: 100, RelChange: 0.05, History: h}}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if res2.Stop != sampler.StopConverged || st2.Step != st.Step || !sameBits(res2.Tau, res.Tau) {
		t.Errorf("resumed: %v at step %d tau %v, want converged at %d tau %v", res2.Stop, st2.Step, res2.Tau, st.Step, res.Tau)
	}
	// A history that does not end at the state's step is refused.
	stale, _ := sampler.NewHistory(16, 3, 0)
	for i := range 10 {
		if err := stale.Record(&ref.steps[i]); err != nil {
			t.Fatal(err)
		}
	}
	if _, _, err := sampler.Run(bg, tg, st2, sampler.Settings{MaxSteps: 100000, Convergence: &sampler.Convergence{History: stale}}, nil); err == nil {
		t.Error("stale history: no error")
	}
}

// TestStretchAcceptance: on a d-dimensional Gaussian the stretch move with
// a = 2 accepts a fraction of proposals in the 0.2-0.5 range that
// Foreman-Mackey et al. (2013, PASP 125, 306, sec. 4; from memory) give as
// the rule of thumb for a healthy ensemble, for moderate dimensions (here
// 8-20; in 2-5 dimensions the stretch move accepts more, about 0.55-0.7).
// The Gaussian's covariance does not matter (the move is affine
// invariant); thousands of steps of 32-80 walkers pin the fraction to about
// +-0.01.
func TestStretchAcceptance(t *testing.T) {
	for _, d := range []int{8, 12, 20} {
		tg := targets.StdNormal{D: d}
		st := ball(t, tg, 4*d, 1)
		steps := 10000
		if testing.Short() {
			steps = 2000
		}
		st, _, err := sampler.Run(bg, tg, st, sampler.Settings{MaxSteps: steps}, nil)
		if err != nil {
			t.Fatal(err)
		}
		a := st.Acceptance()
		t.Logf("d = %d: mean acceptance %.3f", d, a.Mean)
		if a.Mean < 0.2 || a.Mean > 0.5 {
			t.Errorf("d = %d: mean acceptance %.3f, want 0.2-0.5", d, a.Mean)
		}
		if len(a.Stuck) != 0 {
			t.Errorf("d = %d: stuck walkers %v on a Gaussian", d, a.Stuck)
		}
	}
}

// TestStepAllocs: once Run has set up, steps allocate nothing: the heap
// allocation count (all goroutines) does not change from step 1000 to step
// 3000. (The first steps with two workers may see one allocation by the
// runtime's channel machinery warming up.)
func TestStepAllocs(t *testing.T) {
	tg := targets.StdNormal{D: 12}
	st0 := ball(t, tg, 32, 1)
	moves := sampler.Mixture{Moves: []sampler.Move{sampler.Stretch{}, sampler.Walk{Subset: 4}, sampler.DiffEvolution{JumpProb: 0.1}}, Weights: []float64{1, 1, 1}}
	for _, workers := range []int{1, 2} {
		var ms runtime.MemStats
		var before uint64
		probe := recorderFunc(func(s *sampler.Step) error {
			switch s.Index {
			case 1000:
				runtime.ReadMemStats(&ms)
				before = ms.Mallocs
			case 3000:
				runtime.ReadMemStats(&ms)
				// Mallocs counts the whole process: under heavy load the
				// runtime itself (timers, scheduler) allocates a few
				// times. An allocation per step would show as 2000 or
				// more; a handful is not the sampler's.
				if n := ms.Mallocs - before; n >= 50 {
					t.Errorf("workers %d: %d allocations in 2000 steps", workers, n)
				}
			}
			return nil
		})
		if _, _, err := sampler.Run(bg, tg, st0.Clone(), sampler.Settings{Move: moves, Workers: workers, MaxSteps: 3000}, probe); err != nil {
			t.Fatal(err)
		}
	}
}
