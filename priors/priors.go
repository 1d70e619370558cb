package priors

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// LogProber is a normalised log density (-Inf outside the support; Fixed,
// a point mass, is the exception and says so).
type LogProber interface {
	LogProb(x float64) float64
}

// Rander draws from a distribution with the random source it is given;
// priors never use a global generator.
type Rander interface {
	Rand(rng *rand.Rand) float64
}

// Quantiler is the inverse of a cumulative distribution: Quantile returns
// x with P(X <= x) = p, for p in [0, 1] (Quantile(0) and Quantile(1) are
// the ends of the support, possibly infinite). It panics for p outside
// [0, 1] (a programmer error).
type Quantiler interface {
	Quantile(p float64) float64
}

// Prior is what a retrieval needs of a one-dimensional prior: its log
// density (the posterior), draws (initial walkers), quantiles (the start
// of a chain, range checks) and its description in the notation of the
// configuration file, e.g. "uniform(-12, -1)". The one-dimensional
// priors also have Support, Mean and Variance, as methods of their own.
type Prior interface {
	LogProber
	Rander
	Quantiler
	fmt.Stringer
}

var (
	_ Prior = Uniform{}
	_ Prior = LogUniform{}
	_ Prior = Normal{}
	_ Prior = TruncatedNormal{}
	_ Prior = Fixed{}
)

const badProb = "priors: probability outside [0, 1]"

func checkProb(p float64) {
	if !(p >= 0 && p <= 1) {
		panic(badProb)
	}
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// Uniform is the uniform distribution on [Low, High]:
//
//	p(x) = 1/(High-Low) for Low <= x <= High.
type Uniform struct{ Low, High float64 }

// NewUniform returns the uniform prior on [low, high]; both bounds must be
// finite and low < high.
func NewUniform(low, high float64) (Uniform, error) {
	if !finite(low) || !finite(high) {
		return Uniform{}, fmt.Errorf("uniform bounds must be finite numbers (got low=%g, high=%g)", low, high)
	}
	if !(low < high) {
		return Uniform{}, fmt.Errorf("uniform prior needs low < high (got low=%g, high=%g)", low, high)
	}
	return Uniform{low, high}, nil
}

func (u Uniform) LogProb(x float64) float64 {
	if !(x >= u.Low && x <= u.High) {
		return math.Inf(-1)
	}
	return -math.Log(u.High - u.Low)
}
func (u Uniform) Support() (lo, hi float64)   { return u.Low, u.High }
func (u Uniform) Rand(rng *rand.Rand) float64 { return u.Quantile(rng.Float64()) }
func (u Uniform) Quantile(p float64) float64 {
	checkProb(p)
	return u.Low + p*(u.High-u.Low)
}
func (u Uniform) Mean() float64     { return 0.5 * (u.Low + u.High) }
func (u Uniform) Variance() float64 { d := u.High - u.Low; return d * d / 12 }
func (u Uniform) String() string    { return fmt.Sprintf("uniform(%g, %g)", u.Low, u.High) }

// LogUniform is the log-uniform (reciprocal) distribution on [Low, High],
// 0 < Low < High: ln x is uniform, so
//
//	p(x) = 1 / (x ln(High/Low)),  F(x) = ln(x/Low) / ln(High/Low).
//
// It is the prior of a positive scale quantity whose order of magnitude is
// unknown. (A parameter that is itself a log10 quantity, such as a log10
// mixing ratio, takes a Uniform prior instead.)
type LogUniform struct{ Low, High float64 }

// NewLogUniform returns the log-uniform prior on [low, high]; it needs
// 0 < low < high < +Inf.
func NewLogUniform(low, high float64) (LogUniform, error) {
	if !finite(low) || !finite(high) {
		return LogUniform{}, fmt.Errorf("log-uniform bounds must be finite numbers (got low=%g, high=%g)", low, high)
	}
	if low <= 0 || high <= 0 {
		return LogUniform{}, fmt.Errorf("log-uniform bounds must be positive (got low=%g, high=%g)", low, high)
	}
	if !(low < high) {
		return LogUniform{}, fmt.Errorf("log-uniform prior needs low < high (got low=%g, high=%g)", low, high)
	}
	return LogUniform{low, high}, nil
}

func (u LogUniform) LogProb(x float64) float64 {
	if !(x >= u.Low && x <= u.High) {
		return math.Inf(-1)
	}
	return -math.Log(x) - math.Log(math.Log(u.High/u.Low))
}
func (u LogUniform) Support() (lo, hi float64)   { return u.Low, u.High }
func (u LogUniform) Rand(rng *rand.Rand) float64 { return u.Quantile(rng.Float64()) }
func (u LogUniform) Quantile(p float64) float64 {
	checkProb(p)
	switch p {
	case 0:
		return u.Low
	case 1:
		return u.High
	}
	return u.Low * math.Exp(p*math.Log(u.High/u.Low))
}

// Mean is (High-Low)/ln(High/Low).
func (u LogUniform) Mean() float64 { return (u.High - u.Low) / math.Log(u.High/u.Low) }

// Variance is (High^2-Low^2)/(2 ln(High/Low)) - Mean^2.
func (u LogUniform) Variance() float64 {
	m := u.Mean()
	return (u.High*u.High-u.Low*u.Low)/(2*math.Log(u.High/u.Low)) - m*m
}
func (u LogUniform) String() string { return fmt.Sprintf("log-uniform(%g, %g)", u.Low, u.High) }

// Normal is the normal distribution with mean Mu and standard deviation
// Sigma > 0:
//
//	p(x) = exp(-(x-Mu)^2 / (2 Sigma^2)) / (Sigma sqrt(2 pi)).
type Normal struct{ Mu, Sigma float64 }

// NewNormal returns the normal prior N(mu, sigma); mu must be finite and
// sigma finite and positive.
func NewNormal(mu, sigma float64) (Normal, error) {
	if !finite(mu) {
		return Normal{}, fmt.Errorf("normal mean must be a finite number (got %g)", mu)
	}
	if !finite(sigma) || sigma <= 0 {
		return Normal{}, fmt.Errorf("normal width sigma must be positive and finite (got %g)", sigma)
	}
	return Normal{mu, sigma}, nil
}

var lnSqrt2Pi = 0.5 * math.Log(2*math.Pi)

func (n Normal) LogProb(x float64) float64 {
	z := (x - n.Mu) / n.Sigma
	return -0.5*z*z - math.Log(n.Sigma) - lnSqrt2Pi
}
func (n Normal) Support() (lo, hi float64)   { return math.Inf(-1), math.Inf(1) }
func (n Normal) Rand(rng *rand.Rand) float64 { return n.Mu + n.Sigma*rng.NormFloat64() }
func (n Normal) Quantile(p float64) float64 {
	checkProb(p)
	return n.Mu + n.Sigma*stdNormalQuantile(p)
}
func (n Normal) Mean() float64     { return n.Mu }
func (n Normal) Variance() float64 { return n.Sigma * n.Sigma }
func (n Normal) String() string    { return fmt.Sprintf("normal(%g, %g)", n.Mu, n.Sigma) }

// stdNormalCDF is Phi(z) = erfc(-z/sqrt2)/2; stdNormalSF is 1 - Phi(z)
// computed without cancellation; stdNormalQuantile is Phi^-1.
func stdNormalCDF(z float64) float64      { return 0.5 * math.Erfc(-z/math.Sqrt2) }
func stdNormalSF(z float64) float64       { return 0.5 * math.Erfc(z/math.Sqrt2) }
func stdNormalQuantile(p float64) float64 { return -math.Sqrt2 * math.Erfcinv(2*p) }
func stdNormalPDF(z float64) float64      { return math.Exp(-0.5*z*z - lnSqrt2Pi) }

// TruncatedNormal is a normal distribution N(Mu, Sigma) restricted to
// [Low, High] (either end may be infinite) and renormalised:
//
//	p(x) = phi((x-Mu)/Sigma) / (Sigma Z),  Z = Phi(beta) - Phi(alpha),
//	alpha = (Low-Mu)/Sigma, beta = (High-Mu)/Sigma,
//
// with mean Mu + Sigma (phi(alpha)-phi(beta))/Z and variance
// Sigma^2 [1 + (alpha phi(alpha) - beta phi(beta))/Z - ((phi(alpha)-phi(beta))/Z)^2]
// (Johnson, Kotz & Balakrishnan 1994, Continuous Univariate Distributions
// vol. 1, sect. 10.1). Z is computed from the tail on the side away from Mu,
// so intervals far in one tail keep their precision.
type TruncatedNormal struct {
	Mu, Sigma, Low, High float64
	alpha, beta          float64
	upper                bool    // both ends above Mu: work with upper tails
	lnZ                  float64 // ln Z
}

// NewTruncatedNormal returns the truncated normal prior. mu must be finite, sigma positive and finite, low < high; the
// bounds may be infinite but not NaN, and the interval must carry
// probability mass representable in float64.
func NewTruncatedNormal(mu, sigma, low, high float64) (TruncatedNormal, error) {
	if !finite(mu) {
		return TruncatedNormal{}, fmt.Errorf("truncated-normal mean must be a finite number (got %g)", mu)
	}
	if !finite(sigma) || sigma <= 0 {
		return TruncatedNormal{}, fmt.Errorf("truncated-normal width sigma must be positive and finite (got %g)", sigma)
	}
	if math.IsNaN(low) || math.IsNaN(high) {
		return TruncatedNormal{}, fmt.Errorf("truncated-normal bounds must not be NaN (got low=%g, high=%g)", low, high)
	}
	if !(low < high) {
		return TruncatedNormal{}, fmt.Errorf("truncated-normal prior needs low < high (got low=%g, high=%g)", low, high)
	}
	t := TruncatedNormal{Mu: mu, Sigma: sigma, Low: low, High: high}
	t.alpha = (low - mu) / sigma
	t.beta = (high - mu) / sigma
	t.upper = t.alpha > 0
	var z float64
	if t.upper {
		z = stdNormalSF(t.alpha) - stdNormalSF(t.beta)
	} else {
		z = stdNormalCDF(t.beta) - stdNormalCDF(t.alpha)
	}
	if !(z > 0) {
		return TruncatedNormal{}, fmt.Errorf("truncated-normal interval [%g, %g] is too far in the tail of normal(%g, %g): no probability left", low, high, mu, sigma)
	}
	t.lnZ = math.Log(z)
	return t, nil
}

func (t TruncatedNormal) LogProb(x float64) float64 {
	if !(x >= t.Low && x <= t.High) {
		return math.Inf(-1)
	}
	z := (x - t.Mu) / t.Sigma
	return -0.5*z*z - math.Log(t.Sigma) - lnSqrt2Pi - t.lnZ
}
func (t TruncatedNormal) Support() (lo, hi float64)   { return t.Low, t.High }
func (t TruncatedNormal) Rand(rng *rand.Rand) float64 { return t.Quantile(rng.Float64()) }

// Quantile inverts the cumulative distribution, from the tail away from Mu.
func (t TruncatedNormal) Quantile(p float64) float64 {
	checkProb(p)
	var z float64
	if t.upper {
		qa, qb := stdNormalSF(t.alpha), stdNormalSF(t.beta)
		z = math.Sqrt2 * math.Erfcinv(2*(qa-p*(qa-qb)))
	} else {
		pa, pb := stdNormalCDF(t.alpha), stdNormalCDF(t.beta)
		z = stdNormalQuantile(pa + p*(pb-pa))
	}
	x := t.Mu + t.Sigma*z
	return math.Min(math.Max(x, t.Low), t.High) // rounding at the ends
}

// aphi returns z phi(z), which is 0 at infinite z.
func aphi(z float64) float64 {
	if math.IsInf(z, 0) {
		return 0
	}
	return z * stdNormalPDF(z)
}

func (t TruncatedNormal) Mean() float64 {
	zInv := math.Exp(-t.lnZ)
	return t.Mu + t.Sigma*(stdNormalPDF(t.alpha)-stdNormalPDF(t.beta))*zInv
}
func (t TruncatedNormal) Variance() float64 {
	zInv := math.Exp(-t.lnZ)
	d := (stdNormalPDF(t.alpha) - stdNormalPDF(t.beta)) * zInv
	return t.Sigma * t.Sigma * (1 + (aphi(t.alpha)-aphi(t.beta))*zInv - d*d)
}
func (t TruncatedNormal) String() string {
	return fmt.Sprintf("truncated-normal(%g, %g, %g, %g)", t.Mu, t.Sigma, t.Low, t.High)
}

// Fixed is a point mass at Value: the parameter is held fixed and is not
// sampled. LogProb is 0 at Value and -Inf elsewhere (a point mass has no
// density; 0 keeps sums of log priors unchanged).
type Fixed struct{ Value float64 }

// NewFixed returns the fixed "prior" at value, which must be finite.
func NewFixed(value float64) (Fixed, error) {
	if !finite(value) {
		return Fixed{}, fmt.Errorf("fixed value must be a finite number (got %g)", value)
	}
	return Fixed{value}, nil
}

func (f Fixed) LogProb(x float64) float64 {
	if x == f.Value {
		return 0
	}
	return math.Inf(-1)
}
func (f Fixed) Support() (lo, hi float64)  { return f.Value, f.Value }
func (f Fixed) Rand(*rand.Rand) float64    { return f.Value }
func (f Fixed) Quantile(p float64) float64 { checkProb(p); return f.Value }
func (f Fixed) Mean() float64              { return f.Value }
func (f Fixed) Variance() float64          { return 0 }
func (f Fixed) String() string             { return fmt.Sprintf("fixed(%g)", f.Value) }
