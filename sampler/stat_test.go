package sampler_test

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"chord/sampler"
	"chord/sampler/targets"
)

// moments accumulates the sample mean and covariance of the positions after
// a burn-in, and keeps a History of the same steps for tau.
type moments struct {
	burn int
	n    float64
	sum  []float64
	sum2 []float64 // d*d
	hist *sampler.History
}

func newMoments(t *testing.T, walkers, d, burn int) *moments {
	h, err := sampler.NewHistory(walkers, d, 4096)
	if err != nil {
		t.Fatal(err)
	}
	return &moments{burn: burn, sum: make([]float64, d), sum2: make([]float64, d*d), hist: h}
}

func (m *moments) Record(s *sampler.Step) error {
	if s.Index <= m.burn {
		return nil
	}
	d := s.Dim
	for k := range s.Walkers {
		x := s.Pos[k*d : (k+1)*d]
		for i, xi := range x {
			m.sum[i] += xi
			for j, xj := range x {
				m.sum2[i*d+j] += xi * xj
			}
		}
		m.n++
	}
	return m.hist.Record(s)
}

func (m *moments) mean(i int) float64 { return m.sum[i] / m.n }

func (m *moments) cov(i, j int) float64 {
	d := len(m.sum)
	return m.sum2[i*d+j]/m.n - m.mean(i)*m.mean(j)
}

// TestGaussianMoments samples a correlated 10-d Gaussian whose covariance
// has condition number 100 and checks the sample mean and covariance
// against the exact values (exact by construction), for every move.
//
// Error model: with N = walkers*steps draws and integrated autocorrelation
// time tau (estimated by the sampler's own History), the Monte Carlo
// standard error of a mean is sigma_i sqrt(tau_i/N); for a covariance
// element it is sqrt((C_ii C_jj + C_ij^2) tau/N), the variance of a
// Gaussian sample covariance (Anderson, An Introduction to Multivariate
// Statistical Analysis, 3rd ed., Wishart moments; from memory) inflated by
// the largest tau. The walkers are not independent, so the effective
// sample size is approximate; with 10 + 55 checks we allow 5 standard
// errors (a false failure below about 1e-5 for a fixed seed).
func TestGaussianMoments(t *testing.T) {
	if testing.Short() {
		t.Skip("long statistical test")
	}
	const d, walkers, steps, burn = 10, 40, 12000, 1000
	tg := testGaussian(t, d, 100)
	cov := targets.RandomCovariance(d, 100, rand.New(rand.NewPCG(3, 4)))
	for _, mv := range []sampler.Move{
		sampler.Stretch{},
		sampler.Walk{},
		sampler.DiffEvolution{JumpProb: 0.1},
		sampler.Mixture{Moves: []sampler.Move{sampler.Stretch{}, sampler.Walk{Subset: 4}, sampler.DiffEvolution{}}, Weights: []float64{2, 1, 1}},
	} {
		m := newMoments(t, walkers, d, burn)
		st := ball(t, tg, walkers, 11)
		st, _, err := sampler.Run(context.Background(), tg, st, sampler.Settings{Move: mv, MaxSteps: steps}, m)
		if err != nil {
			t.Fatal(err)
		}
		tau, ok := m.hist.Tau(nil, 5)
		if !ok {
			t.Fatalf("%v: tau %v has no reliable window", mv, tau)
		}
		tmax := 0.0
		for _, v := range tau {
			tmax = max(tmax, v)
		}
		t.Logf("%v: tau %.1f, acceptance %.3f", mv, tau, st.Acceptance().Mean)
		for i := range d {
			se := math.Sqrt(cov.At(i, i) * tau[i] / m.n)
			if got := m.mean(i); math.Abs(got) > 5*se {
				t.Errorf("%v: mean[%d] = %.4f, want 0 +- %.4f (5 se)", mv, i, got, 5*se)
			}
		}
		for i := range d {
			for j := i; j < d; j++ {
				want := cov.At(i, j)
				se := math.Sqrt((cov.At(i, i)*cov.At(j, j) + want*want) * tmax / m.n)
				if got := m.cov(i, j); math.Abs(got-want) > 5*se {
					t.Errorf("%v: cov[%d,%d] = %.4f, want %.4f +- %.4f (5 se)", mv, i, j, got, want, 5*se)
				}
			}
		}
	}
}

// TestRosenbrock samples the Rosenbrock-type density of Goodman & Weare
// (2010, CAMCoS 5, 65),
//
//	pi(x1, x2) ∝ exp(-(100 (x2 - x1^2)^2 + (1 - x1)^2) / 20).
//
// For fixed x1 the exponent is -5 (x2 - x1^2)^2 - (1 - x1)^2/20, a normal
// in x2 with mean x1^2 and variance 1/10 whose integral sqrt(pi/5) does not
// depend on x1; so the x1-marginal is ∝ exp(-(x1 - 1)^2 / 20), exactly
// N(1, 10). Then E[x2] = E[E[x2|x1]] = E[x1^2] = Var x1 + (E x1)^2 = 11, and
// Var x2 = E[1/10] + Var(x1^2) = 0.1 + 2*10^2 + 4*1^2*10 = 240.1 (moments of
// a normal). Tolerance: 5 Monte Carlo standard errors sigma sqrt(tau/N) with
// tau from the chain itself.
func TestRosenbrock(t *testing.T) {
	if testing.Short() {
		t.Skip("long statistical test")
	}
	const walkers, steps, burn = 200, 40000, 1000
	tg := targets.Rosenbrock{}
	m := newMoments(t, walkers, 2, burn)
	// Fractions of x1 below 1 - sqrt(10), 1 and 1 + 2 sqrt(10): the N(1, 10)
	// CDF there is Phi(-1), 1/2, Phi(2).
	cuts := []float64{1 - math.Sqrt(10), 1, 1 + 2*math.Sqrt(10)}
	probs := []float64{0.15865525393145707, 0.5, 0.9772498680518208} // gonum v0.17.0 distuv.UnitNormal.CDF(-1), (0), (2)
	below := make([]float64, len(cuts))
	rec := recorderFunc(func(s *sampler.Step) error {
		if s.Index > burn {
			for k := range s.Walkers {
				for c, x := range cuts {
					if s.Pos[2*k] < x {
						below[c]++
					}
				}
			}
		}
		return m.Record(s)
	})
	// Start from exact draws (x1 ~ N(1, 10), x2 | x1 ~ N(x1^2, 1/10)), so
	// that the slow spread of an ensemble into the long tails (tau is in the
	// thousands of steps here) does not bias the check; a short burn-in is
	// still dropped.
	exact := func(dst []float64, rng *rand.Rand) error {
		dst[0] = 1 + math.Sqrt(10)*rng.NormFloat64()
		dst[1] = dst[0]*dst[0] + math.Sqrt(0.1)*rng.NormFloat64()
		return nil
	}
	st, err := sampler.InitPrior(context.Background(), tg, exact, sampler.InitSettings{Walkers: walkers, Seed: 5})
	if err != nil {
		t.Fatal(err)
	}
	if _, _, err = sampler.Run(context.Background(), tg, st, sampler.Settings{MaxSteps: steps}, rec); err != nil {
		t.Fatal(err)
	}
	tau, ok := m.hist.Tau(nil, 5)
	if !ok {
		t.Fatalf("tau %v has no reliable window", tau)
	}
	t.Logf("tau %.1f", tau)
	checks := []struct {
		name      string
		got, want float64
		sd, tau   float64
	}{
		{"E[x1]", m.mean(0), 1, math.Sqrt(10), tau[0]},
		{"Var x1", m.cov(0, 0), 10, 10 * math.Sqrt2, tau[0]}, // sd of a normal's squared deviation: sqrt(2) sigma^2
		{"E[x2]", m.mean(1), 11, math.Sqrt(240.1), tau[1]},
	}
	// An indicator's standard error is sqrt(p(1-p) tau/N); its tau is taken
	// as x1's (approximate).
	for c, p := range probs {
		checks = append(checks, struct {
			name      string
			got, want float64
			sd, tau   float64
		}{fmt.Sprintf("P(x1 < %.3f)", cuts[c]), below[c] / m.n, p, math.Sqrt(p * (1 - p)), tau[0]})
	}
	for _, c := range checks {
		se := c.sd * math.Sqrt(c.tau/m.n)
		if math.Abs(c.got-c.want) > 5*se {
			t.Errorf("%s = %.3f, want %.3f +- %.3f (5 se)", c.name, c.got, c.want, 5*se)
		} else {
			t.Logf("%s = %.3f, want %.3f +- %.3f (5 se)", c.name, c.got, c.want, 5*se)
		}
	}
}

type recorderFunc func(s *sampler.Step) error

func (f recorderFunc) Record(s *sampler.Step) error { return f(s) }
