package sampler_test

import (
	"context"
	"errors"
	"math/rand/v2"
	"sync/atomic"
	"testing"

	"chord/sampler"
)

// countingTarget is a 3-D standard normal that counts its evaluations and
// cancels a context at the cancelAt-th one (0: never).
type countingTarget struct {
	n        *atomic.Int64
	cancelAt int64
	cancel   func()
}

func (countingTarget) Dim() int                          { return 3 }
func (countingTarget) NumExtra() int                     { return 0 }
func (c countingTarget) NewEvaluator() sampler.Evaluator { return c }
func (c countingTarget) LogProb(x, _ []float64) float64 {
	if c.n.Add(1) == c.cancelAt {
		c.cancel()
	}
	return -0.5 * (x[0]*x[0] + x[1]*x[1] + x[2]*x[2])
}

func drawBox(dst []float64, rng *rand.Rand) error {
	for i := range dst {
		dst[i] = 4*rng.Float64() - 2
	}
	return nil
}

// The search for a starting point evaluates nothing after a cancellation
// (one search at a time: Workers 1), whichever of its phases it is in
// (prior draws, the Nelder-Mead searches, the test between their end
// points, the Laplace approximation, the walkers' draws), and returns the
// context's error.
func TestStartBallCancel(t *testing.T) {
	const walkers = 40
	var n atomic.Int64
	width := []float64{1, 1, 1}
	set := sampler.StartSettings{Walkers: walkers, Seed: 3, Workers: 1}
	if _, _, err := sampler.StartBall(bg, countingTarget{n: &n}, drawBox, width, set); err != nil {
		t.Fatal(err)
	}
	total := n.Load()
	if total <= sampler.StartDraws*walkers+walkers {
		t.Fatalf("%d evaluations: fewer than the prior draws, a search and the walkers take", total)
	}
	for k := int64(1); k < 10; k++ {
		at := k * total / 10
		ctx, cancel := context.WithCancel(bg)
		var m atomic.Int64
		_, _, err := sampler.StartBall(ctx, countingTarget{n: &m, cancelAt: at, cancel: cancel}, drawBox, width, set)
		cancel()
		if !errors.Is(err, context.Canceled) {
			t.Errorf("cancelled at evaluation %d of %d: error %v, want context.Canceled", at, total, err)
		}
		if m.Load() > at {
			t.Errorf("cancelled at evaluation %d of %d: %d evaluations in all", at, total, m.Load())
		}
	}
}

// Making a large ensemble stops soon after a cancellation: at most a batch
// of a few walkers per worker is evaluated after it.
func TestInitCancel(t *testing.T) {
	const walkers, workers = 2000, 2
	pos := make([]float64, walkers*3)
	rng := rand.New(rand.NewPCG(1, 2))
	drawBox(pos, rng)
	ctx, cancel := context.WithCancel(bg)
	defer cancel()
	var n atomic.Int64
	_, err := sampler.InitPositions(ctx, countingTarget{n: &n, cancelAt: 100, cancel: cancel}, pos, sampler.InitSettings{Walkers: walkers, Seed: 1, Workers: workers})
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("error %v, want context.Canceled", err)
	}
	if n.Load() > 100+8*workers {
		t.Errorf("%d of %d walkers evaluated after a cancellation at the 100th", n.Load(), walkers)
	}
}
