package priors

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
)

func TestFillGas(t *testing.T) {
	u := must(NewUniform(-12, -0.1))
	c, err := NewFillGas("H2+He", []string{"H2O", "CH4"}, []Prior{u, u})
	if err != nil {
		t.Fatal(err)
	}
	// Two gases at 10^-0.2 = 0.63 each sum above 1: invalid, never clamped.
	if lp := c.LogProb([]float64{-0.2, -0.2}); !math.IsInf(lp, -1) {
		t.Errorf("trace gases summing to 1.26 have log prior %g, want -Inf", lp)
	}
	// A valid point has the sum of the independent log priors.
	if lp, want := c.LogProb([]float64{-3, -5}), 2*u.LogProb(-3); lp != want {
		t.Errorf("log prior %g, want %g", lp, want)
	}
	// Draws are valid and, on the part of the box far from the constraint,
	// uniform: P(x_0 < -6.05) = (−6.05+12)/(11.9) / P(valid). P(valid) is
	// computed here by integrating the probability that the second gas fits,
	// P(valid) = int p(x0) P(10^x1 <= 1-10^x0) dx0 (gonum quad, 1e-10).
	rng := rand.New(rand.NewPCG(3, 4))
	x := make([]float64, 2)
	const n = 100000
	below := 0
	for range n {
		if err := c.Rand(x, rng); err != nil {
			t.Fatal(err)
		}
		if c.FillFraction(x) < 0 {
			t.Fatalf("draw %v is invalid", x)
		}
		if x[0] < -6.05 {
			below++
		}
	}
	pFits := func(x0 float64) float64 {
		r := 1 - math.Pow(10, x0)
		if r <= 0 {
			return 0
		}
		return math.Max(0, math.Min(1, (math.Log10(r)+12)/11.9))
	}
	pValid := 0.0
	for k := range 119 { // 0.1-wide pieces of [-12, -0.1]
		a := -12 + 0.1*float64(k)
		pValid += quad.Fixed(func(x0 float64) float64 { return pFits(x0) / 11.9 }, a, a+0.1, 50, nil, 0)
	}
	want := (-6.05 + 12) / 11.9 / pValid
	got := float64(below) / n
	if se := math.Sqrt(want * (1 - want) / n); math.Abs(got-want) > 5*se {
		t.Errorf("P(x0 < -6.05) = %g, want %g ± %g (P(valid) = %g)", got, want, se, pValid)
	}
}

func TestFillGasErrors(t *testing.T) {
	u := must(NewUniform(-1, -0.1))
	for i, f := range []func() error{
		func() error { _, err := NewFillGas("N2", []string{"H2O", "H2O"}, []Prior{u, u}); return err },
		func() error { _, err := NewFillGas("N2", []string{"N2"}, []Prior{u}); return err },
		func() error { _, err := NewFillGas("N2", []string{"a"}, []Prior{u, u}); return err },
		func() error { _, err := NewFillGas("N2", []string{"a"}, []Prior{nil}); return err },
		func() error {
			_, err := NewFillGas("N2", []string{"a"}, []Prior{must(NewUniform(0.5, 1))})
			return err
		},
		// Lower ends 0.1 x 11 gases > 1: no valid composition.
		func() error {
			g := make([]string, 11)
			p := make([]Prior, 11)
			for i := range g {
				g[i], p[i] = fmt.Sprint("g", i), u
			}
			_, err := NewFillGas("N2", g, p)
			return err
		},
	} {
		if f() == nil {
			t.Errorf("case %d: no error", i)
		}
	}
}

func gasNames(n int) []string {
	g := make([]string, n)
	for i := range g {
		g[i] = fmt.Sprint("gas", i)
	}
	return g
}

// TestCLRTransform: VMR and CLRCoords are inverse (definition of the clr,
// Aitchison 1986, as used by Benneke & Seager 2012, eq. for xi_i).
func TestCLRTransform(t *testing.T) {
	c, err := NewCLR(gasNames(4), 1e-10)
	if err != nil {
		t.Fatal(err)
	}
	x := []float64{0.7, 0.2, 0.0999, 0.0001}
	xi := make([]float64, 3)
	CLRCoords(xi, x)
	back := make([]float64, 4)
	if !c.VMR(back, xi) {
		t.Fatal("valid composition rejected")
	}
	for i := range x {
		if math.Abs(back[i]-x[i]) > 1e-15 {
			t.Errorf("gas %d: %g -> clr -> %g", i, x[i], back[i])
		}
	}
}

// TestCLRSamples checks the centred-log-ratio prior of Benneke & Seager
// (2012, ApJ 753, 100, sect. 3.2) for 2, 3 and 5 gases with lowest mixing
// ratio 1e-12. What Benneke & Seager describe (from memory): the prior is
// the same for every gas, whichever is dropped as the dependent one, so each
// gas is equally likely a priori to dominate; each gas's marginal is flat in
// log mixing ratio over most of the range and rises towards 1, where that
// gas dominates. Checked here:
//
//  1. every draw sums to 1 (to 1e-14) with every gas >= MinVMR;
//  2. each gas dominates with probability 1/n (within 5 binomial standard
//     errors) — the symmetry, including the dependent gas n;
//  3. the marginal of log10 X_1 is flat over [-12, -3] (chi-square over nine
//     decades below the 99.9th percentile of chi2(8), 27.9, from memory of
//     the chi-square table);
//  4. the fraction of draws in the top decade, X_1 > 0.1, matches the exact
//     marginal. The exact density follows from a change of variables: the
//     Jacobian of (ln X_1..ln X_{n-1}) -> (xi_1..xi_{n-1}) is 1/(n X_n), so
//     a prior uniform in xi is p(X) ∝ 1/(X_1 X_2 ... X_n) on the simplex
//     (Lebesgue measure in X_1..X_{n-1}). For n = 2 the marginal is
//     ∝ 1/(x(1-x)); for n = 3 it is ∝ 2 ln((1-x-m)/m) / (x(1-x)), m =
//     MinVMR (integrated with gonum v0.17.0 integrate/quad); n = 5 gets
//     checks 1-3.
func TestCLRSamples(t *testing.T) {
	const m = 1e-12
	for _, n := range []int{2, 3, 5} {
		c, err := NewCLR(gasNames(n), m)
		if err != nil {
			t.Fatal(err)
		}
		rng := rand.New(rand.NewPCG(uint64(n), 99))
		xi := make([]float64, n-1)
		x := make([]float64, n)
		const draws = 200000
		dominant := make([]int, n)
		var decade [9]int
		top := 0
		for range draws {
			if err := c.Rand(xi, x, rng); err != nil {
				t.Fatal(err)
			}
			s, imax := 0.0, 0
			for i, v := range x {
				s += v
				if v < m {
					t.Fatalf("n=%d: gas %d has %g < MinVMR", n, i, v)
				}
				if v > x[imax] {
					imax = i
				}
			}
			if math.Abs(s-1) > 1e-14 {
				t.Fatalf("n=%d: draw sums to %.17g", n, s)
			}
			if math.IsInf(c.LogProb(xi, x), -1) {
				t.Fatalf("n=%d: draw %v has -Inf log prior", n, xi)
			}
			dominant[imax]++
			l := math.Log10(x[0])
			if l >= -12 && l < -3 {
				decade[int(l+12)]++
			}
			if x[0] > 0.1 {
				top++
			}
		}
		p := 1 / float64(n)
		se := math.Sqrt(p * (1 - p) / draws)
		for i, d := range dominant {
			if f := float64(d) / draws; math.Abs(f-p) > 5*se {
				t.Errorf("n=%d: gas %d dominates in %.4f of draws, want %.4f ± %.4f", n, i, f, p, se)
			}
		}
		tot := 0
		for _, d := range decade {
			tot += d
		}
		chi2 := 0.0
		for _, d := range decade {
			e := float64(tot) / 9
			chi2 += (float64(d) - e) * (float64(d) - e) / e
		}
		if chi2 > 27.9 {
			t.Errorf("n=%d: log10 X_1 over [-12,-3] not flat: decades %v, chi2 %.1f", n, decade, chi2)
		}
		// Exact top-decade fraction from the marginal density q(x).
		var q func(x float64) float64
		switch n {
		case 2:
			q = func(x float64) float64 { return 1 / (x * (1 - x)) }
		case 3:
			q = func(x float64) float64 { return 2 * math.Log((1-x-m)/m) / (x * (1 - x)) }
		default:
			continue // no closed form; checks 1-3 only
		}
		hi := 1 - float64(n-1)*m
		// Integrate in u = logit(x), dx = x(1-x) du, which resolves both
		// ends of the range.
		logit := func(x float64) float64 { return math.Log(x / (1 - x)) }
		qu := func(u float64) float64 { x := 1 / (1 + math.Exp(-u)); return x * (1 - x) * q(x) }
		num := quadPieces(qu, logit(0.1), logit(hi), 100)
		den := quadPieces(qu, logit(m), logit(hi), 200)
		want := num / den
		got := float64(top) / draws
		if se := math.Sqrt(want * (1 - want) / draws); math.Abs(got-want) > 5*se {
			t.Errorf("n=%d: P(X_1 > 0.1) = %.4f, exact marginal gives %.4f ± %.4f", n, got, want, se)
		}
	}
}

func quadPieces(f func(float64) float64, a, b float64, pieces int) float64 {
	s := 0.0
	for k := range pieces {
		lo := a + (b-a)*float64(k)/float64(pieces)
		hi := a + (b-a)*float64(k+1)/float64(pieces)
		s += quad.Fixed(f, lo, hi, 20, nil, 0)
	}
	return s
}

func TestCLRErrors(t *testing.T) {
	for i, f := range []func() error{
		func() error { _, err := NewCLR([]string{"N2"}, 1e-12); return err },
		func() error { _, err := NewCLR([]string{"N2", "N2"}, 1e-12); return err },
		func() error { _, err := NewCLR([]string{"N2", "CO2"}, 0); return err },
		func() error { _, err := NewCLR([]string{"N2", "CO2"}, 0.5); return err },
		func() error { _, err := NewCLR([]string{"N2", "CO2"}, math.NaN()); return err },
	} {
		if f() == nil {
			t.Errorf("case %d: no error", i)
		}
	}
}
