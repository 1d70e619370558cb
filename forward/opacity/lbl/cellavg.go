package lbl

import "math"

// cellPointFraction is where cell averaging hands over to point values:
// a cell narrower than cellPointFraction times the line's Voigt half-width
// (Olivero & Longbothum 1977) takes the exact Humlicek value at its grid
// point instead of the cell integral of cellProfile. There the midpoint
// rule errs by at most w^2 |V”|/(24 V) = (2/24) cellPointFraction^2 =
// 0.5 % of the peak at a Lorentz centre (0.36 % at a Gauss centre), the
// same order as the pseudo-Voigt core's own error: the switch moves a
// value by about 0.5 % of the line's peak (measured in
// TestCellAverageConvergence: cell means within 0.45 % of the peak of the
// quadrature means just above the switch, point values within 0.44 %
// just below).
const cellPointFraction = 0.25

// cellCoreSigmas sets the edge X of cellProfile's core: X^2 + gamma^2 =
// (cellCoreSigmas sigma)^2. Beyond it the two-term wing expansion errs by
// 3 sigma^4/(x^2 + gamma^2)^2 <= 3/13^4 = 1.05e-4 of the profile, the
// accuracy of the Humlicek (1982) point values.
const cellCoreSigmas = 13

// cellProfile is the cumulative distribution of one Voigt line about its
// centre, for cell integrals: G(x) = int_0^x V, odd in x, G(inf) = 1/2.
//
//   - Wings, x^2 + gamma^2 >= (13 sigma)^2 (sigma^2 = alphaD^2/(2 ln 2), the
//     Doppler variance): the Voigt profile is the Lorentzian L convolved
//     with a Gaussian, E[L(x - t)] = L + sigma^2/2 L” + sigma^4/8 L”” ...
//     (Taylor series in the Gaussian's moments; the same series as the
//     asymptotic expansion of the Faddeeva function, Abramowitz & Stegun
//     1964, 7.1.23). Two terms integrate in closed form:
//     int_x^inf V = atan(gamma/x)/pi + sigma^2 gamma x / (pi (x^2 + gamma^2)^2).
//   - Core, |x| < X: the pseudo-Voigt of Thompson, Cox & Hastings (1987,
//     J. Appl. Cryst. 20, 79), eta L(x; f/2) + (1 - eta) G(x; f/2) with
//     f^5 = fG^5 + 2.69269 fG^4 fL + 2.42843 fG^3 fL^2 + 4.47163 fG^2 fL^3 +
//     0.07842 fG fL^4 + fL^5 and eta = 1.36603 q - 0.47719 q^2 + 0.11116 q^3,
//     q = fL/f (fG, fL the Gauss and Lorentz full widths), whose CDF is
//     eta atan(x/g)/pi + (1 - eta) erf(sqrt(ln2) x/g)/2 (g = f/2), scaled so
//     that G is continuous at X. The pseudo-Voigt is good to about 1 % of
//     the peak (from memory of the literature; TestCellProfile measures
//     0.5 % of peak x cell width at worst); its Lorentz wing eta g differs from
//     gamma by up to 37 % (Doppler limit), which is why it is used only in
//     the core, where the Gaussian dominates or the core is empty.
//
// When gamma >= 13 sigma there is no core. The total is exactly 1, so cell
// integrals that tile a line's cut-off window sum to the Voigt's integral
// over the window (to 1e-4 of the cut-off loss).
type cellProfile struct {
	gamma, s2 float64 // Lorentz HWHM; Doppler variance sigma^2
	x         float64 // core half-width X (0: no core)
	eta, g    float64 // pseudo-Voigt mixing and half-width f/2
	ug        float64 // sqrt(ln2)/g
	scale     float64 // core scale, (1/2 - tail(X)) / pV CDF(X)

	memoX, memoH [2]float64 // the last two edges of tailDiff and their terms
}

// set prepares the profile of a line with Doppler half-width alphaD > 0
// and Lorentz half-width gammaL >= 0.
func (p *cellProfile) set(alphaD, gammaL float64) {
	p.gamma = gammaL
	p.s2 = alphaD * alphaD / (2 * math.Ln2)
	p.memoX = [2]float64{math.NaN(), math.NaN()} // matches no edge
	p.x = math.Sqrt(max(0, cellCoreSigmas*cellCoreSigmas*p.s2-gammaL*gammaL))
	if p.x == 0 {
		return
	}
	fG, fL := 2*alphaD, 2*gammaL
	g2, l2 := fG*fG, fL*fL
	f5 := g2*g2*fG + 2.69269*g2*g2*fL + 2.42843*g2*fG*l2 + 4.47163*g2*l2*fL + 0.07842*fG*l2*l2 + l2*l2*fL
	f := math.Pow(f5, 0.2)
	q := fL / f
	p.eta = q * (1.36603 - q*(0.47719-q*0.11116))
	p.g = f / 2
	p.ug = sqrtLn2 / p.g
	p.scale = (0.5 - p.tail(p.x)) / p.pv(p.x)
}

// tail is int_x^inf V for x >= X.
func (p *cellProfile) tail(x float64) float64 {
	d := x*x + p.gamma*p.gamma
	return math.Atan(p.gamma/x)/math.Pi + p.s2*p.gamma*x/(math.Pi*d*d)
}

// pv is the pseudo-Voigt's int_0^x, x >= 0.
func (p *cellProfile) pv(x float64) float64 {
	return p.eta/math.Pi*math.Atan(x/p.g) + (1-p.eta)/2*math.Erf(p.ug*x)
}

// cdf is G(x) = int_0^x V.
func (p *cellProfile) cdf(x float64) float64 {
	ax := math.Abs(x)
	var v float64
	if ax >= p.x {
		v = 0.5 - p.tail(ax)
	} else {
		v = p.scale * p.pv(ax)
	}
	return math.Copysign(v, x)
}

// integral is int_a^b V for a <= b (offsets from the line centre). Both
// ends in one wing are differenced in closed form, so far-wing cells keep
// their relative precision.
func (p *cellProfile) integral(a, b float64) float64 {
	switch {
	case a >= p.x:
		return p.tailDiff(a, b)
	case b <= -p.x:
		return p.tailDiff(-b, -a)
	}
	return p.cdf(b) - p.cdf(a)
}

// tailDiff is tail(a) - tail(b) for X <= a <= b, with
// atan(gamma/a) - atan(gamma/b) = atan(gamma (b - a)/(a b + gamma^2)).
// Neighbouring cells share an edge, so the last edge term is kept.
func (p *cellProfile) tailDiff(a, b float64) float64 {
	g := p.gamma
	if g == 0 {
		return 0 // pure Gaussian beyond 13 sigma: below 1e-36
	}
	return (atanSmall(g*(b-a)/(a*b+g*g)) + p.s2*g*(p.edge(a)-p.edge(b))) * (1 / math.Pi)
}

// edge is x/(x^2 + gamma^2)^2, remembered for the last two x.
func (p *cellProfile) edge(x float64) float64 {
	switch x {
	case p.memoX[0]:
		return p.memoH[0]
	case p.memoX[1]:
		return p.memoH[1]
	}
	d := x*x + p.gamma*p.gamma
	h := x / (d * d)
	p.memoX[1], p.memoH[1] = p.memoX[0], p.memoH[0]
	p.memoX[0], p.memoH[0] = x, h
	return h
}

// atanSmall is atan(u) for u >= 0, by its Taylor series u - u^3/3 + u^5/5
// below 0.05 (truncation error below u^7/7 < 1.2e-10 relative; fact of
// calculus), which covers most far-wing cells at a fraction of the cost.
func atanSmall(u float64) float64 {
	if u < 0.05 {
		u2 := u * u
		return u * (1 - u2*(1.0/3-u2/5))
	}
	return math.Atan(u)
}
