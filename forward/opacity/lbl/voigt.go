package lbl

import (
	"math"
	"math/cmplx"
)

// Faddeeva returns the Faddeeva (complex probability) function
// w(z) = exp(-z^2) erfc(-i z) by the w4 algorithm of Humlicek (1982,
// JQSRT 27, 437), whose four rational approximations (regions split by
// s = |x| + y) have a stated relative accuracy of about 1e-4 in both the
// real and imaginary parts for Im z >= 0. For Im z < 0 the reflection
// w(z) = 2 exp(-z^2) - w(-z) is used (Abramowitz & Stegun 1964, 7.1.11).
//
// Special cases: w(0) = 1; NaN in gives NaN out.
func Faddeeva(z complex128) complex128 {
	x, y := real(z), imag(z)
	if y < 0 {
		return 2*cmplx.Exp(-z*z) - Faddeeva(-z)
	}
	t := complex(y, -x) // t = -i z
	s := math.Abs(x) + y
	switch {
	case s >= 15: // region I: t c/(0.5 + t^2), written so t^2 cannot overflow
		return 0.5641896 / (t + 0.5/t)
	case s >= 5.5: // region II
		u := t * t
		return t * (1.410474 + u*0.5641896) / (0.75 + u*(3+u))
	case y >= 0.195*math.Abs(x)-0.176: // region III
		return (16.4955 + t*(20.20933+t*(11.96482+t*(3.778987+t*0.5642236)))) /
			(16.4955 + t*(38.82363+t*(39.27121+t*(21.69274+t*(6.699398+t)))))
	}
	// region IV
	u := t * t
	return cmplx.Exp(u) - t*(36183.31-u*(3321.9905-u*(1540.787-u*(219.0313-u*(35.76683-u*(1.320522-u*0.56419))))))/
		(32066.6-u*(24322.84-u*(9022.228-u*(2186.181-u*(364.2191-u*(61.57037-u*(1.841439-u)))))))
}

// voigtRe returns Re w(x + i y) for y >= 0, the Voigt function K(x, y),
// as Faddeeva does, with every region written out in real arithmetic for
// speed (the same rational functions; TestVoigtReFaddeeva).
func voigtRe(x, y float64) float64 {
	ax := math.Abs(x)
	s := ax + y
	switch {
	case ax > 1e150: // x^2 would overflow: the asymptote y/(sqrt(pi) x^2)
		return 0.5641896 * y / ax / ax
	case s >= 15:
		return 0.5641896 * y * wingRe(x, 0.5+y*y, y*y)
	case s >= 5.5:
		ur := y*y - x*x
		ui := -2 * x * y
		// a = 1.410474 + 0.5641896 u; n = t a; d = 0.75 + u (3 + u).
		ar, ai := 1.410474+0.5641896*ur, 0.5641896*ui
		nr, ni := y*ar+x*ai, y*ai-x*ar
		br, bi := 3+ur, ui
		dr := 0.75 + ur*br - ui*bi
		di := ur*bi + ui*br
		return (nr*dr + ni*di) / (dr*dr + di*di)
	case y >= 0.195*ax-0.176: // region III: a rational function of t = y - i x
		// Numerator and denominator by Horner's rule in real arithmetic:
		// p <- c + t p with t = (y, -x).
		nr, ni := 0.5642236, 0.0
		for _, c := range [...]float64{3.778987, 11.96482, 20.20933, 16.4955} {
			nr, ni = c+y*nr+x*ni, y*ni-x*nr
		}
		dr, di := 1.0, 0.0
		for _, c := range [...]float64{6.699398, 21.69274, 39.27121, 38.82363, 16.4955} {
			dr, di = c+y*dr+x*di, y*di-x*dr
		}
		return (nr*dr + ni*di) / (dr*dr + di*di)
	}
	// Region IV: exp(u) - t N(u)/D(u), u = t^2 = (y^2 - x^2, -2 x y); the
	// polynomials by Horner's rule p <- c - u p in real arithmetic, and
	// only the real part of the exponential.
	ur, ui := y*y-x*x, -2*x*y
	// The two polynomials advance together (independent chains).
	nr, ni := 1.320522-0.56419*ur, -0.56419*ui
	dr, di := 1.841439-ur, -ui
	nr, ni = 35.76683-(ur*nr-ui*ni), -(ur*ni + ui*nr)
	dr, di = 61.57037-(ur*dr-ui*di), -(ur*di + ui*dr)
	nr, ni = 219.0313-(ur*nr-ui*ni), -(ur*ni + ui*nr)
	dr, di = 364.2191-(ur*dr-ui*di), -(ur*di + ui*dr)
	nr, ni = 1540.787-(ur*nr-ui*ni), -(ur*ni + ui*nr)
	dr, di = 2186.181-(ur*dr-ui*di), -(ur*di + ui*dr)
	nr, ni = 3321.9905-(ur*nr-ui*ni), -(ur*ni + ui*nr)
	dr, di = 9022.228-(ur*dr-ui*di), -(ur*di + ui*dr)
	nr, ni = 36183.31-(ur*nr-ui*ni), -(ur*ni + ui*nr)
	dr, di = 24322.84-(ur*dr-ui*di), -(ur*di + ui*dr)
	dr, di = 32066.6-(ur*dr-ui*di), -(ur*di + ui*dr)
	// t N = (y nr + x ni, y ni - x nr).
	tr, ti := y*nr+x*ni, y*ni-x*nr
	// cos(ui) by its series where ui is small (y small, as at low
	// pressure): the first omitted term, ui^6/720, is below 1e-21.
	var c float64
	if a := math.Abs(ui); a < 1e-3 {
		u2 := ui * ui
		c = 1 - u2*(0.5-u2/24)
	} else {
		c = math.Cos(ui)
	}
	return math.Exp(ur)*c - (tr*dr+ti*di)/(dr*dr+di*di)
}

// wingRe is Re w(x + i y) / (0.5641896 y) in Humlicek's region I, with
// q = 0.5 + y^2 and y2 = y^2: Re[t c/(0.5 + t^2)], t = y - i x, is
// c y (x^2 + q) / ((q - x^2)^2 + 4 x^2 y^2).
func wingRe(x, q, y2 float64) float64 {
	x2 := x * x
	d := q - x2
	return (x2 + q) / (d*d + 4*x2*y2)
}

// sqrtLn2 and sqrtLn2OverPi are the Voigt-profile normalisation constants.
var (
	sqrtLn2       = math.Sqrt(math.Ln2)
	sqrtLn2OverPi = math.Sqrt(math.Ln2 / math.Pi)
)

// Voigt returns the area-normalised Voigt profile at offset dnu from the
// line centre, for Doppler (Gaussian) half-width at half maximum alphaD
// and Lorentz half-width gammaL (same unit as dnu; the result is in the
// inverse unit):
//
//	V = sqrt(ln2/pi)/alphaD * Re w(x + i y),  x = sqrt(ln2) dnu/alphaD,  y = sqrt(ln2) gammaL/alphaD
//
// (e.g. Armstrong 1967, JQSRT 7, 61). alphaD must be positive; gammaL = 0
// gives the Gaussian.
func Voigt(dnu, alphaD, gammaL float64) float64 {
	r := sqrtLn2 / alphaD
	return sqrtLn2OverPi / alphaD * voigtRe(dnu*r, gammaL*r)
}
