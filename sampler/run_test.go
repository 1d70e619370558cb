package sampler_test

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"chord/sampler"
	"chord/sampler/targets"
)

// memRec keeps a copy of every recorded step.
type memRec struct {
	steps   []sampler.Step
	flushes int
}

func (m *memRec) Record(s *sampler.Step) error {
	c := *s
	c.Pos = append([]float64(nil), s.Pos...)
	c.LogP = append([]float64(nil), s.LogP...)
	c.Extra = append([]float64(nil), s.Extra...)
	c.Accepted = append([]bool(nil), s.Accepted...)
	m.steps = append(m.steps, c)
	return nil
}

func (m *memRec) Flush() error { m.flushes++; return nil }

func sameBits(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Float64bits(a[i]) != math.Float64bits(b[i]) {
			return false
		}
	}
	return true
}

func sameSteps(t *testing.T, label string, got, want []sampler.Step) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("%s: %d steps, want %d", label, len(got), len(want))
	}
	for i := range want {
		g, w := got[i], want[i]
		if g.Index != w.Index || !sameBits(g.Pos, w.Pos) || !sameBits(g.LogP, w.LogP) || !sameBits(g.Extra, w.Extra) {
			t.Fatalf("%s: step %d (index %d vs %d) differs", label, i, g.Index, w.Index)
		}
		for k := range w.Accepted {
			if g.Accepted[k] != w.Accepted[k] {
				t.Fatalf("%s: step %d walker %d acceptance differs", label, i, k)
			}
		}
	}
}

// testGaussian is a correlated 4-d Gaussian with one extra value.
func testGaussian(t *testing.T, dim int, cond float64) *targets.Gaussian {
	t.Helper()
	cov := targets.RandomCovariance(dim, cond, rand.New(rand.NewPCG(3, 4)))
	g, err := targets.NewGaussian(make([]float64, dim), cov)
	if err != nil {
		t.Fatal(err)
	}
	return g
}

func ball(t *testing.T, tg sampler.Target, walkers int, seed uint64) *sampler.State {
	t.Helper()
	d := tg.Dim()
	center, scale := make([]float64, d), make([]float64, d)
	for i := range scale {
		scale[i] = 0.1
	}
	st, err := sampler.InitBall(context.Background(), tg, center, scale, sampler.InitSettings{Walkers: walkers, Seed: seed, Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	return st
}

var testMoves = []sampler.Move{
	sampler.Stretch{},
	sampler.Mixture{
		Moves:   []sampler.Move{sampler.Stretch{A: 2.5}, sampler.Walk{Subset: 3}, sampler.DiffEvolution{JumpProb: 0.1}},
		Weights: []float64{0.6, 0.2, 0.2},
	},
}

// TestResumeAndWorkers checks the two reproducibility promises of the
// design: a run stopped at step k and resumed from its encoded checkpoint
// gives bit for bit the samples of an uninterrupted run, and the worker
// count never changes the chain.
func TestResumeAndWorkers(t *testing.T) {
	tg := testGaussian(t, 4, 30)
	const total = 40
	for mi, mv := range testMoves {
		ref := &memRec{}
		st0 := ball(t, tg, 12, 7)
		if _, res, err := sampler.Run(context.Background(), tg, st0.Clone(), sampler.Settings{Move: mv, Workers: 1, MaxSteps: total}, ref); err != nil || res.Stop != sampler.StopMaxSteps {
			t.Fatalf("move %d: reference run: %v %v", mi, res.Stop, err)
		}
		for _, workers := range []int{1, 2, 3, 6} {
			for _, k := range []int{1, 7, 20, 39} {
				label := fmt.Sprintf("move %d, workers %d, stop at %d", mi, workers, k)
				rec := &memRec{}
				st, _, err := sampler.Run(context.Background(), tg, st0.Clone(), sampler.Settings{Move: mv, Workers: workers, MaxSteps: k}, rec)
				if err != nil {
					t.Fatal(label, err)
				}
				b, err := st.MarshalBinary()
				if err != nil {
					t.Fatal(label, err)
				}
				var back sampler.State
				if err := back.UnmarshalBinary(b); err != nil {
					t.Fatal(label, err)
				}
				if _, _, err := sampler.Run(context.Background(), tg, &back, sampler.Settings{Move: mv, Workers: workers, MaxSteps: total}, rec); err != nil {
					t.Fatal(label, err)
				}
				sameSteps(t, label, rec.steps, ref.steps)
			}
		}
	}
}

func TestMoveChangeOnResumeIsError(t *testing.T) {
	tg := testGaussian(t, 2, 10)
	st := ball(t, tg, 8, 1)
	st, _, err := sampler.Run(context.Background(), tg, st, sampler.Settings{MaxSteps: 3, Workers: 1}, nil)
	if err != nil {
		t.Fatal(err)
	}
	_, _, err = sampler.Run(context.Background(), tg, st, sampler.Settings{Move: sampler.Stretch{A: 3}, MaxSteps: 6, Workers: 1}, nil)
	if err == nil {
		t.Fatal("resuming with another move: no error")
	}
}

func TestCorruptStateIsError(t *testing.T) {
	tg := testGaussian(t, 3, 10)
	st := ball(t, tg, 8, 1)
	b, err := st.MarshalBinary()
	if err != nil {
		t.Fatal(err)
	}
	checkCorruption(t, b, func(c []byte) error { var s sampler.State; return s.UnmarshalBinary(c) })
}

// checkCorruption checks that decode refuses every single flipped bit
// pattern and every truncation of the encoding b with ErrCorruptState.
func checkCorruption(t *testing.T, b []byte, decode func([]byte) error) {
	t.Helper()
	for i := range b {
		c := append([]byte(nil), b...)
		c[i] ^= 0x10
		if err := decode(c); !errors.Is(err, sampler.ErrCorruptState) {
			t.Fatalf("byte %d flipped: error %v, want ErrCorruptState", i, err)
		}
	}
	for _, n := range []int{0, 3, 12, len(b) - 1} {
		if err := decode(b[:n]); !errors.Is(err, sampler.ErrCorruptState) {
			t.Fatalf("truncated to %d bytes: error %v, want ErrCorruptState", n, err)
		}
	}
}
