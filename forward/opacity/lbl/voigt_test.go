package lbl

import (
	"math"
	"math/cmplx"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
)

// humlicekTol is the accuracy Humlicek (1982, JQSRT 27, 437) states for
// his w4 algorithm: relative error below about 1e-4 (of |w|).
const humlicekTol = 1e-4

// faddeevaQuad evaluates w(x + i y), y > 0, from its defining integral
// w(z) = (i/pi) int exp(-t^2)/(z - t) dt (Abramowitz & Stegun 1964, 7.1.4),
// i.e. Re w = (y/pi) int exp(-t^2)/((x-t)^2+y^2) dt and
// Im w = (1/pi) int (x-t) exp(-t^2)/((x-t)^2+y^2) dt, by composite
// Gauss-Legendre quadrature (gonum v0.17.0 integrate/quad.Fixed) over
// [-12, 12] (the rest is below exp(-144)) in pieces no wider than y/2, so
// the peak at t = x is resolved.
func faddeevaQuad(x, y float64) complex128 {
	h := min(y/2, 0.25)
	var re, im float64
	for a := -12.0; a < 12; a += h {
		b := min(a+h, 12)
		re += quad.Fixed(func(t float64) float64 { return math.Exp(-t*t) / ((x-t)*(x-t) + y*y) }, a, b, 10, quad.Legendre{}, 0)
		im += quad.Fixed(func(t float64) float64 { return (x - t) * math.Exp(-t*t) / ((x-t)*(x-t) + y*y) }, a, b, 10, quad.Legendre{}, 0)
	}
	return complex(y*re/math.Pi, im/math.Pi)
}

func TestFaddeevaPublished(t *testing.T) {
	for i, c := range []struct {
		z    complex128
		want complex128
		src  string
	}{
		// w(0) = 1 (A&S 1964, 7.1.3 at z = 0).
		{0, 1, "A&S 7.1.3"},
		// Real axis: w(x) = exp(-x^2) + (2i/sqrt(pi)) D(x), D Dawson's
		// integral, D(1) = 0.5380795069, D(2) = 0.3013403889 (A&S 1964,
		// table 7.5, from memory).
		{1, complex(math.Exp(-1), 2/math.Sqrt(math.Pi)*0.5380795069), "A&S table 7.5"},
		{2, complex(math.Exp(-4), 2/math.Sqrt(math.Pi)*0.3013403889), "A&S table 7.5"},
		// w(1+i) = 0.3047442 + 0.2082189i (A&S 1964, table 7.9, from memory).
		{complex(1, 1), complex(0.3047442, 0.2082189), "A&S table 7.9"},
		// Imaginary axis: w(iy) = exp(y^2) erfc(y) (A&S 7.1.3), erfc from
		// the Go 1.26 standard library math.Erfc.
		{complex(0, 0.1), complex(math.Exp(0.01)*math.Erfc(0.1), 0), "math.Erfc"},
		{complex(0, 1), complex(math.Exp(1)*math.Erfc(1), 0), "math.Erfc"},
		{complex(0, 3), complex(math.Exp(9)*math.Erfc(3), 0), "math.Erfc"},
		{complex(0, 6), complex(math.Exp(36)*math.Erfc(6), 0), "math.Erfc"},
		{complex(0, 20), complex(math.Exp(400)*math.Erfc(20), 0), "math.Erfc"},
		// Symmetry w(-x + iy) = conj(w(x + iy)) (A&S 7.1.12) with the
		// table value above.
		{complex(-1, 1), complex(0.3047442, -0.2082189), "A&S 7.1.12, table 7.9"},
	} {
		got := Faddeeva(c.z)
		if cmplx.Abs(got-c.want) > humlicekTol*cmplx.Abs(c.want) {
			t.Errorf("case %d (%s): w(%v) = %v, want %v", i, c.src, c.z, got, c.want)
		}
	}
	// Far from the origin w(z) ~ i/(sqrt(pi) z) (A&S 7.1.23), also where
	// z^2 overflows.
	for _, z := range []complex128{complex(1e200, 1), complex(-3e160, 1e-3), complex(1e3, 1e200)} {
		want := 1i / (complex(math.SqrtPi, 0) * z)
		if got := Faddeeva(z); cmplx.Abs(got-want) > humlicekTol*cmplx.Abs(want) {
			t.Errorf("w(%v) = %v, want %v", z, got, want)
		}
	}
	if got := Voigt(1e200, 1, 1); !(got >= 0 && got < 1e-300) {
		t.Errorf("Voigt far wing %g, want ~0", got)
	}
	if !cmplx.IsNaN(Faddeeva(cmplx.NaN())) {
		t.Errorf("w(NaN) = %v, want NaN", Faddeeva(cmplx.NaN()))
	}
}

// TestFaddeevaQuadrature checks w over all four Humlicek regions against
// the defining integral (faddeevaQuad), and the real-arithmetic fast path
// voigtRe against Faddeeva.
func TestFaddeevaQuadrature(t *testing.T) {
	var worst float64
	for _, x := range []float64{0, 0.3, 1, 2, 3.5, 5, 7, 10, 16, 40} {
		for _, y := range []float64{0.01, 0.1, 0.5, 1, 2, 5, 12, 30} {
			want := faddeevaQuad(x, y)
			got := Faddeeva(complex(x, y))
			e := cmplx.Abs(got-want) / cmplx.Abs(want)
			worst = max(worst, e)
			if e > humlicekTol {
				t.Errorf("w(%g + %gi) = %v, quadrature %v (rel %.2g)", x, y, got, want, e)
			}
			// Re w alone, as the Voigt profile uses it.
			if d := math.Abs(real(got)-real(want)) / real(want); d > humlicekTol {
				t.Errorf("Re w(%g + %gi) = %g, quadrature %g (rel %.2g)", x, y, real(got), real(want), d)
			}
			if r := voigtRe(x, y); math.Abs(r-real(got)) > 1e-14*math.Abs(real(got)) {
				t.Errorf("voigtRe(%g, %g) = %g, Faddeeva %g", x, y, r, real(got))
			}
		}
	}
	t.Logf("worst relative error against quadrature: %.2g", worst)
	// Lower half plane by reflection: w(conj z) = 2 exp(-conj z^2) - w(-conj z)... check
	// against A&S 7.1.11: w(-z) = 2 exp(-z^2) - w(z).
	z := complex(1.5, 0.7)
	if got, want := Faddeeva(-z), 2*cmplx.Exp(-z*z)-Faddeeva(z); cmplx.Abs(got-want) > 1e-12*cmplx.Abs(want) {
		t.Errorf("w(-z) = %v, want 2exp(-z^2) - w(z) = %v", got, want)
	}
}

func TestVoigtLimits(t *testing.T) {
	const alphaD = 0.01
	// Pure Gaussian (gammaL = 0): sqrt(ln2/pi)/alphaD exp(-ln2 (dnu/alphaD)^2),
	// the Doppler profile (textbook, e.g. Armstrong 1967, JQSRT 7, 61).
	for _, d := range []float64{0, 0.002, 0.005, 0.01, 0.02, 0.03} {
		want := math.Sqrt(math.Ln2/math.Pi) / alphaD * math.Exp(-math.Ln2*d*d/(alphaD*alphaD))
		if got := Voigt(d, alphaD, 0); math.Abs(got-want) > humlicekTol*want {
			t.Errorf("Gaussian limit at %g: %g, want %g", d, got, want)
		}
	}
	// Pure Lorentzian (alphaD << gammaL): gamma/pi / (dnu^2 + gamma^2); the
	// relative size of the Doppler correction is ~ (alphaD/gammaL)^2 = 1e-6.
	const gammaL = 10.0
	for _, d := range []float64{0, 3, 10, 25, 100} {
		want := gammaL / math.Pi / (d*d + gammaL*gammaL)
		if got := Voigt(d, alphaD, gammaL); math.Abs(got-want) > humlicekTol*want {
			t.Errorf("Lorentz limit at %g: %g, want %g", d, got, want)
		}
	}
}

// TestVoigtNormalisation integrates the profile over +-L (trapezoid rule
// on a step of alphaD/20, whose error is far below 1e-6 for this smooth
// integrand) and adds the Lorentzian tail beyond L, 2 gammaL/(pi L) to
// first order (L >> widths): the total must be 1 to the stated accuracy
// of the Faddeeva algorithm, 1e-4.
func TestVoigtNormalisation(t *testing.T) {
	for _, c := range []struct{ alphaD, gammaL float64 }{{1, 0.01}, {1, 1}, {1, 5}, {0.3, 0.05}} {
		L := 500 * (c.alphaD + c.gammaL)
		h := min(c.alphaD, c.gammaL+c.alphaD) / 20
		n := int(2 * L / h)
		h = 2 * L / float64(n)
		s := 0.5 * (Voigt(-L, c.alphaD, c.gammaL) + Voigt(L, c.alphaD, c.gammaL))
		for i := 1; i < n; i++ {
			s += Voigt(-L+float64(i)*h, c.alphaD, c.gammaL)
		}
		total := s*h + 2*c.gammaL/(math.Pi*L)
		if math.Abs(total-1) > humlicekTol {
			t.Errorf("alphaD %g gammaL %g: integral %.7f, want 1", c.alphaD, c.gammaL, total)
		}
	}
}

func TestVoigtAllocs(t *testing.T) {
	var sink float64
	if n := testing.AllocsPerRun(100, func() { sink += Voigt(0.3, 0.1, 0.05) + Voigt(30, 0.1, 0.05) }); n != 0 {
		t.Errorf("Voigt allocates %g times per call", n)
	}
	_ = sink
}

// TestVoigtReFaddeeva: voigtRe writes Humlicek's rational functions out in
// real arithmetic; over all four regions (s = |x| + y from 0 to 30, y from
// 1e-8 to 20) it must equal the real part of Faddeeva's complex
// arithmetic to rounding (1e-12 relative; the two differ only in the
// order of operations, so this is a check of the transcription).
func TestVoigtReFaddeeva(t *testing.T) {
	worst := 0.0
	for _, y := range []float64{1e-8, 1e-4, 0.01, 0.1, 0.3, 1, 3, 7, 14, 20} {
		for i := range 3001 {
			x := -30 + 0.02*float64(i)
			got, want := voigtRe(x, y), real(Faddeeva(complex(x, y)))
			rel := math.Abs(got-want) / math.Abs(want)
			worst = max(worst, rel)
			if rel > 1e-12 {
				t.Fatalf("voigtRe(%g, %g) = %.16g, Faddeeva %.16g (rel %.2g)", x, y, got, want, rel)
			}
		}
	}
	t.Logf("worst relative difference %.2g", worst)
}
