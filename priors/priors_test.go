package priors

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/integrate/quad"
	"gonum.org/v1/gonum/stat/distuv"
)

// dist is a one-dimensional prior with the methods of its own that the
// tests check beside Prior's.
type dist interface {
	Prior
	Support() (lo, hi float64)
	Mean() float64
	Variance() float64
}

// must returns p, panicking on a constructor error (test definitions are
// all valid).
func must[T any](p T, err error) T {
	if err != nil {
		panic(err)
	}
	return p
}

// TestAgainstGonum compares log densities, quantiles, means and variances
// with gonum v0.17.0 stat/distuv (a general-purpose reference library).
// Both evaluate the same closed forms in float64, so agreement to 1e-12
// relative is expected.
func TestAgainstGonum(t *testing.T) {
	type ref interface {
		LogProb(float64) float64
		Quantile(float64) float64
		Mean() float64
		Variance() float64
	}
	cases := []struct {
		p  dist
		r  ref
		xs []float64
	}{
		{must(NewUniform(-12, -1)), distuv.Uniform{Min: -12, Max: -1}, []float64{-12, -11.5, -3, -1}},
		{must(NewUniform(300, 2500)), distuv.Uniform{Min: 300, Max: 2500}, []float64{300, 1000, 2499}},
		{must(NewNormal(1.2, 0.05)), distuv.Normal{Mu: 1.2, Sigma: 0.05}, []float64{1, 1.2, 1.31, 2}},
		{must(NewNormal(-3, 2)), distuv.Normal{Mu: -3, Sigma: 2}, []float64{-20, -3, 0, 5}},
	}
	for i, c := range cases {
		for _, x := range c.xs {
			if got, want := c.p.LogProb(x), c.r.LogProb(x); !scalar.EqualWithinAbsOrRel(got, want, 1e-12, 1e-12) {
				t.Errorf("case %d %v: LogProb(%g) = %g, gonum %g", i, c.p, x, got, want)
			}
		}
		for _, q := range []float64{1e-6, 0.025, 0.16, 0.5, 0.84, 0.975, 1 - 1e-6} {
			if got, want := c.p.Quantile(q), c.r.Quantile(q); !scalar.EqualWithinAbsOrRel(got, want, 1e-12, 1e-12) {
				t.Errorf("case %d %v: Quantile(%g) = %g, gonum %g", i, c.p, q, got, want)
			}
		}
		if got, want := c.p.Mean(), c.r.Mean(); !scalar.EqualWithinAbsOrRel(got, want, 1e-12, 1e-12) {
			t.Errorf("case %d: mean %g, gonum %g", i, got, want)
		}
		if got, want := c.p.Variance(), c.r.Variance(); !scalar.EqualWithinAbsOrRel(got, want, 1e-12, 1e-12) {
			t.Errorf("case %d: variance %g, gonum %g", i, got, want)
		}
	}
}

// TestTruncatedNormalAgainstGonum: the truncated normal's log density is the
// normal's minus ln(Phi(beta)-Phi(alpha)), both from gonum v0.17.0
// stat/distuv.Normal (reference library). Tolerance 1e-9 relative: gonum
// forms Phi(beta)-Phi(alpha) by subtraction, which loses digits for
// intervals in a tail; our value uses the far tail.
func TestTruncatedNormalAgainstGonum(t *testing.T) {
	for i, c := range []struct{ mu, sigma, lo, hi float64 }{
		{0, 1, -1, 2},
		{5, 2, 0, math.Inf(1)},
		{0, 1, math.Inf(-1), -0.5},
		{0, 1, 2, 4}, // both ends in the upper tail
		{-1, 0.3, -3, -2},
	} {
		p := must(NewTruncatedNormal(c.mu, c.sigma, c.lo, c.hi))
		n := distuv.Normal{Mu: c.mu, Sigma: c.sigma}
		lnZ := math.Log(n.CDF(c.hi) - n.CDF(c.lo))
		for _, q := range []float64{0.01, 0.3, 0.5, 0.9, 0.999} {
			x := p.Quantile(q)
			if got, want := p.LogProb(x), n.LogProb(x)-lnZ; !scalar.EqualWithinAbsOrRel(got, want, 1e-9, 1e-9) {
				t.Errorf("case %d: LogProb(%g) = %g, from gonum %g", i, x, got, want)
			}
			// The CDF at the quantile, through gonum's normal CDF.
			if got := (n.CDF(x) - n.CDF(c.lo)) / (n.CDF(c.hi) - n.CDF(c.lo)); !scalar.EqualWithinAbsOrRel(got, q, 1e-8, 1e-8) {
				t.Errorf("case %d: CDF(Quantile(%g)) = %g from gonum", i, q, got)
			}
		}
	}
}

// integrate returns the integral of f over [lo, hi] by Gauss-Legendre
// quadrature (gonum v0.17.0 integrate/quad.Fixed), split into pieces so that
// peaked integrands are resolved; 100-point rules on smooth pieces are
// accurate to near machine precision.
func integrate(f func(float64) float64, lo, hi float64, pieces int, logSpaced bool) float64 {
	s := 0.0
	for k := range pieces {
		a := lo + (hi-lo)*float64(k)/float64(pieces)
		b := lo + (hi-lo)*float64(k+1)/float64(pieces)
		if logSpaced {
			r := math.Log(hi / lo)
			a = lo * math.Exp(r*float64(k)/float64(pieces))
			b = lo * math.Exp(r*float64(k+1)/float64(pieces))
		}
		s += quad.Fixed(f, a, b, 100, nil, 0)
	}
	return s
}

// TestNormalisationAndMoments integrates each density, x p(x) and x^2 p(x)
// numerically (gonum quad) and compares with 1 and the closed-form mean and
// variance (the closed forms are the ones documented on each type). The
// quadrature is accurate to ~1e-12 on these smooth pieces; the tolerance
// 1e-9 leaves room for the truncation of the normal at 14 sigma (mass
// below 1e-40).
func TestNormalisationAndMoments(t *testing.T) {
	for i, c := range []struct {
		p         dist
		logSpaced bool
	}{
		{must(NewUniform(-12, -1)), false},
		{must(NewLogUniform(1e-3, 1e3)), true},
		{must(NewLogUniform(0.5, 2)), true},
		{must(NewNormal(3, 0.7)), false},
		{must(NewTruncatedNormal(0, 1, -0.5, 3)), false},
		{must(NewTruncatedNormal(2, 0.5, 2.5, math.Inf(1))), false},
		{must(NewTruncatedNormal(0, 1, 3, 5)), false},
	} {
		lo, hi := c.p.Support()
		m, v := c.p.Mean(), c.p.Variance()
		sd := math.Sqrt(v)
		if math.IsInf(lo, -1) {
			lo = m - 14*sd
		}
		if math.IsInf(hi, 1) {
			hi = m + 14*sd
		}
		dens := func(x float64) float64 { return math.Exp(c.p.LogProb(x)) }
		norm := integrate(dens, lo, hi, 40, c.logSpaced)
		mean := integrate(func(x float64) float64 { return x * dens(x) }, lo, hi, 40, c.logSpaced)
		m2 := integrate(func(x float64) float64 { return (x - m) * (x - m) * dens(x) }, lo, hi, 40, c.logSpaced)
		if !scalar.EqualWithinAbsOrRel(norm, 1, 1e-9, 1e-9) {
			t.Errorf("case %d %v: integral of density %.12g, want 1", i, c.p, norm)
		}
		if !scalar.EqualWithinAbsOrRel(mean, m, 1e-9, 1e-9) {
			t.Errorf("case %d %v: integrated mean %.12g, closed form %.12g", i, c.p, mean, m)
		}
		if !scalar.EqualWithinAbsOrRel(m2, v, 1e-9, 1e-9) {
			t.Errorf("case %d %v: integrated variance %.12g, closed form %.12g", i, c.p, m2, v)
		}
		// Quantile inverts the integrated CDF.
		for _, q := range []float64{0.05, 0.5, 0.95} {
			x := c.p.Quantile(q)
			got := integrate(dens, lo, x, 40, c.logSpaced)
			if !scalar.EqualWithinAbsOrRel(got, q, 1e-9, 1e-9) {
				t.Errorf("case %d %v: integral to Quantile(%g) = %.12g", i, c.p, q, got)
			}
		}
	}
}

// TestRandMoments draws 2e5 values with a fixed seed and checks the sample
// mean and variance against the closed forms within 5 standard errors
// (common practice for seeded statistical tests; the standard error of the
// variance uses the sample fourth moment).
func TestRandMoments(t *testing.T) {
	const n = 200000
	rng := rand.New(rand.NewPCG(7, 11))
	for _, p := range []dist{
		must(NewUniform(-12, -1)),
		must(NewLogUniform(1e-2, 1e2)),
		must(NewNormal(1.1, 0.2)),
		must(NewTruncatedNormal(0, 1, 1, 4)),
	} {
		var s, s2, s4 float64
		xs := make([]float64, n)
		lo, hi := p.Support()
		for i := range xs {
			xs[i] = p.Rand(rng)
			if xs[i] < lo || xs[i] > hi {
				t.Fatalf("%v: draw %g outside support", p, xs[i])
			}
			s += xs[i]
		}
		mean := s / n
		for _, x := range xs {
			d := x - mean
			s2 += d * d
			s4 += d * d * d * d
		}
		v := s2 / (n - 1)
		if se := math.Sqrt(p.Variance() / n); math.Abs(mean-p.Mean()) > 5*se {
			t.Errorf("%v: sample mean %g, want %g ± %g", p, mean, p.Mean(), se)
		}
		if se := math.Sqrt((s4/n - v*v) / n); math.Abs(v-p.Variance()) > 5*se {
			t.Errorf("%v: sample variance %g, want %g ± %g", p, v, p.Variance(), se)
		}
	}
}

func TestFixed(t *testing.T) {
	f := must(NewFixed(2.5))
	rng := rand.New(rand.NewPCG(1, 1))
	if f.LogProb(2.5) != 0 || !math.IsInf(f.LogProb(2.4), -1) || f.Rand(rng) != 2.5 || f.Quantile(0.3) != 2.5 || f.Variance() != 0 {
		t.Errorf("fixed prior misbehaves: %v", f)
	}
}

// TestSpecialValues: NaN and values outside the support have -Inf log prior.
func TestSpecialValues(t *testing.T) {
	for _, p := range []Prior{
		must(NewUniform(0, 1)),
		must(NewLogUniform(1, 2)),
		must(NewTruncatedNormal(0, 1, 0, 1)),
	} {
		for _, x := range []float64{math.NaN(), math.Inf(1), math.Inf(-1), -0.1, 2.1} {
			if lp := p.LogProb(x); !math.IsInf(lp, -1) {
				t.Errorf("%v: LogProb(%g) = %g, want -Inf", p, x, lp)
			}
		}
	}
	if lp := (Normal{0, 1}).LogProb(math.NaN()); !math.IsNaN(lp) && !math.IsInf(lp, -1) {
		t.Errorf("normal LogProb(NaN) = %g", lp)
	}
}

// TestConstructorErrors: every invalid definition is an error naming the
// kind of prior (the configuration adds the parameter and its key).
func TestConstructorErrors(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	for i, c := range []struct {
		kind string
		f    func() error
	}{
		{"uniform", func() error { _, err := NewUniform(2, 1); return err }},
		{"uniform", func() error { _, err := NewUniform(1, 1); return err }},
		{"uniform", func() error { _, err := NewUniform(nan, 1); return err }},
		{"uniform", func() error { _, err := NewUniform(0, inf); return err }},
		{"log-uniform", func() error { _, err := NewLogUniform(0, 1); return err }},
		{"log-uniform", func() error { _, err := NewLogUniform(-1, 1); return err }},
		{"log-uniform", func() error { _, err := NewLogUniform(2, 1); return err }},
		{"log-uniform", func() error { _, err := NewLogUniform(1, nan); return err }},
		{"normal", func() error { _, err := NewNormal(0, 0); return err }},
		{"normal", func() error { _, err := NewNormal(0, -1); return err }},
		{"normal", func() error { _, err := NewNormal(nan, 1); return err }},
		{"normal", func() error { _, err := NewNormal(0, inf); return err }},
		{"truncated-normal", func() error { _, err := NewTruncatedNormal(0, -1, 0, 1); return err }},
		{"truncated-normal", func() error { _, err := NewTruncatedNormal(0, 1, 1, 0); return err }},
		{"truncated-normal", func() error { _, err := NewTruncatedNormal(0, 1, nan, 0); return err }},
		{"truncated-normal", func() error { _, err := NewTruncatedNormal(0, 1, 50, 60); return err }},
		{"fixed", func() error { _, err := NewFixed(nan); return err }},
	} {
		err := c.f()
		if err == nil {
			t.Errorf("case %d: no error", i)
			continue
		}
		if !strings.HasPrefix(err.Error(), c.kind+" ") {
			t.Errorf("case %d: error %q does not name the %s prior", i, err, c.kind)
		}
	}
}
