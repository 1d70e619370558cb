package sampler_test

import (
	"math"
	"math/rand/v2"
	"testing"

	"chord/sampler"
)

// ar1 returns m independent stationary AR(1) series x_t = phi x_{t-1} + e_t,
// e_t ~ N(0, 1), of length n.
func ar1(m, n int, phi float64, seed uint64) [][]float64 {
	rng := rand.New(rand.NewPCG(seed, 99))
	out := make([][]float64, m)
	for k := range out {
		x := make([]float64, n)
		x[0] = rng.NormFloat64() / math.Sqrt(1-phi*phi)
		for t := 1; t < n; t++ {
			x[t] = phi*x[t-1] + rng.NormFloat64()
		}
		out[k] = x
	}
	return out
}

// TestIntegratedTimeAR1 checks the estimator against the integrated
// autocorrelation time of an AR(1) process, (1 + phi)/(1 - phi) (standard
// result: rho(l) = phi^l, so tau = 1 + 2 sum_{l>=1} phi^l). Tolerance: the
// estimator's relative standard deviation sqrt(2 (2M + 1)/N) for a window
// M and N draws in all (Sokal 1997, from memory), times 4; the window's
// truncation bias 2 phi^(M+1)/(1-phi)/tau is below 1e-3 for M >= 5 tau.
func TestIntegratedTimeAR1(t *testing.T) {
	const m, n = 32, 20000
	for _, phi := range []float64{0, 0.5, 0.9} {
		want := (1 + phi) / (1 - phi)
		got, ok := sampler.IntegratedTime(ar1(m, n, phi, 1), 5)
		if !ok {
			t.Fatalf("phi %v: no window", phi)
		}
		window := math.Ceil(5 * want)
		tol := 4 * math.Sqrt(2*(2*window+1)/(m*n))
		t.Logf("phi %v: tau = %.3f, want %.3f (relative tolerance %.3f)", phi, got, want, tol)
		if math.Abs(got/want-1) > tol {
			t.Errorf("phi %v: tau = %.3f, want %.3f (relative tolerance %.3f)", phi, got, want, tol)
		}
	}
}

func TestIntegratedTimeShortChain(t *testing.T) {
	// A steady drift over the whole chain (a chain far from converged):
	// rho(l) stays near 1 - l/n, so tau(M) grows faster than M/c and no
	// window exists.
	drift := make([][]float64, 4)
	for k := range drift {
		drift[k] = make([]float64, 50)
		for i := range drift[k] {
			drift[k][i] = float64(i + k)
		}
	}
	if _, ok := sampler.IntegratedTime(drift, 5); ok {
		t.Error("drifting chain: ok = true, want false")
	}
	// Constant series carry no information.
	c := [][]float64{{1, 1, 1, 1}, {2, 2, 2, 2}}
	if tau, ok := sampler.IntegratedTime(c, 5); ok || !math.IsInf(tau, 1) {
		t.Errorf("constant series: tau %v ok %v, want +Inf false", tau, ok)
	}
}

// TestBulkESS: for independent draws the bulk ESS is the number of draws;
// for AR(1) chains it is the number of draws over (1+phi)/(1-phi) (the
// normal scores of a Gaussian AR(1) are a monotone transform of it, with
// nearly the same autocorrelation). Tolerance as in TestIntegratedTimeAR1,
// with Geyer's truncation point taken generously as 10 tau.
func TestBulkESS(t *testing.T) {
	const m, n = 8, 5000
	for _, phi := range []float64{0, 0.5} {
		tau := (1 + phi) / (1 - phi)
		want := m * n / tau
		got, err := sampler.BulkESS(ar1(m, n, phi, 3))
		if err != nil {
			t.Fatal(err)
		}
		tol := 4 * math.Sqrt(2*(2*10*tau+1)/(m*n))
		t.Logf("phi %v: ESS = %.0f, want %.0f (relative tolerance %.3f)", phi, got, want, tol)
		if math.Abs(got/want-1) > tol {
			t.Errorf("phi %v: ESS = %.0f, want %.0f (relative tolerance %.3f)", phi, got, want, tol)
		}
	}
}

// TestSplitRhat: Vehtari et al. (2021, Bayesian Analysis 16, 667) recommend
// R-hat < 1.01; chains drawn from one distribution must pass, chains with
// different locations must fail (bulk R-hat), and chains with equal
// location but different scales must fail through the folded R-hat (their
// sec. 4.2 motivation). Expected size of the failure, for the location case
// of 16 split chains of which half are shifted by one standard deviation:
// between-chain variance of the means 0.25*16/15, so R-hat about
// sqrt(1 + 0.267) = 1.13 before rank normalisation.
func TestSplitRhat(t *testing.T) {
	same := ar1(8, 2000, 0, 4)
	r, err := sampler.SplitRhat(same)
	if err != nil {
		t.Fatal(err)
	}
	if r > 1.01 {
		t.Errorf("same distribution: R-hat %.4f, want < 1.01", r)
	}
	shifted := ar1(8, 2000, 0, 5)
	for _, c := range shifted[:4] {
		for i := range c {
			c[i]++
		}
	}
	if r, _ := sampler.SplitRhat(shifted); r < 1.05 {
		t.Errorf("shifted chains: R-hat %.4f, want > 1.05", r)
	}
	scaled := ar1(8, 2000, 0, 6)
	for _, c := range scaled[:4] {
		for i := range c {
			c[i] *= 3
		}
	}
	if r, _ := sampler.SplitRhat(scaled); r < 1.05 {
		t.Errorf("chains of different scale: R-hat %.4f, want > 1.05", r)
	}
	for _, bad := range [][][]float64{
		{{1, 2, 3, 4}},
		{{1, 2, 3}, {1, 2, 3}},
		{{1, 2, 3, 4}, {1, 2, 3}},
		{{1, 2, 3, 4}, {1, math.NaN(), 3, 4}},
	} {
		if _, err := sampler.SplitRhat(bad); err == nil {
			t.Errorf("chains %v: no error", bad)
		}
		if _, err := sampler.BulkESS(bad); err == nil {
			t.Errorf("chains %v: no error from BulkESS", bad)
		}
	}
}

func TestStuckWalker(t *testing.T) {
	tg := testGaussian(t, 2, 10)
	st := ball(t, tg, 10, 1)
	st.Step = 1000
	for k := range st.Accepted {
		st.Accepted[k] = 400
	}
	st.Accepted[3] = 2
	// 4.5 binomial sd below the median count, but above half the median
	// fraction: unlucky or slightly worse placed, not stuck.
	st.Accepted[7] = 330
	a := st.Acceptance()
	if len(a.Stuck) != 1 || a.Stuck[0] != 3 {
		t.Errorf("stuck walkers %v, want [3]", a.Stuck)
	}
	if a.Median != 0.4 {
		t.Errorf("median acceptance %v, want 0.4", a.Median)
	}
}

// TestHistoryThinning feeds a History far more steps than it holds. The
// kept samples, every s-th step of an AR(1) series with coefficient phi, are
// themselves AR(1) with coefficient phi^s, whose integrated time is
// (1 + phi^s)/(1 - phi^s) thinned steps (standard result), so the History
// must report s (1 + phi^s)/(1 - phi^s) steps. Tolerance: 4 times Sokal's
// relative standard deviation sqrt(2 (2M+1)/N) of the thinned estimate.
func TestHistoryThinning(t *testing.T) {
	const walkers, steps, capacity, phi = 64, 50000, 1024, 0.99
	h, err := sampler.NewHistory(walkers, 1, capacity)
	if err != nil {
		t.Fatal(err)
	}
	series := ar1(walkers, steps, phi, 8)
	pos := make([]float64, walkers)
	for i := range steps {
		for k := range pos {
			pos[k] = series[k][i]
		}
		if err := h.Record(&sampler.Step{Index: i + 1, Walkers: walkers, Dim: 1, Pos: pos}); err != nil {
			t.Fatal(err)
		}
	}
	if h.Span() != steps || h.Last() != steps {
		t.Fatalf("span %d, last %d, want %d", h.Span(), h.Last(), steps)
	}
	// 50000 steps into 1024 slots: the stride doubles until 50000/s <= 1024,
	// so s = 64 (782 samples held).
	const s = 64
	ps := math.Pow(phi, s)
	thin := (1 + ps) / (1 - ps)
	want := s * thin
	tau, ok := h.Tau(nil, 5)
	if !ok {
		t.Fatalf("tau %v: no window", tau)
	}
	held := float64((steps + s - 1) / s)
	tol := 4 * math.Sqrt(2*(2*math.Ceil(5*thin)+1)/(walkers*held))
	t.Logf("tau = %.1f steps, want %.1f (relative tolerance %.3f; unthinned tau %.0f)", tau[0], want, tol, (1+phi)/(1-phi))
	if math.Abs(tau[0]/want-1) > tol {
		t.Errorf("tau = %.1f steps, want %.1f (relative tolerance %.3f)", tau[0], want, tol)
	}
	if err := h.Record(&sampler.Step{Index: steps + 2, Walkers: walkers, Dim: 1, Pos: pos}); err == nil {
		t.Error("gap in steps: no error")
	}
}
