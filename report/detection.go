package report

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"gonum.org/v1/gonum/mathext"
	"gonum.org/v1/gonum/stat"
)

// Detection significance of a gas from one run.
//
// # Savage-Dickey density ratio
//
// Let theta = log10 of a gas's volume mixing ratio, with a prior uniform on
// [Low, High] (log-uniform in the mixing ratio) and independent of the other
// parameters. The nested model M0 "the gas is absent" fixes theta at the
// prior's lower edge Low, where the gas is too rare to leave a trace. The
// Bayes factor of M0 against the full model M1 is then the Savage-Dickey
// density ratio (Dickey 1971, Ann. Math. Stat. 42, 204; Trotta 2007, MNRAS
// 378, 72, eq. 14):
//
//	B01 = p(theta = Low | data, M1) / pi(theta = Low | M1)
//	    = p(theta = Low | data, M1) * (High - Low),
//
// so one run of M1 gives the evidence for presence, B10 = 1/B01, from the
// marginal posterior density of theta at the edge. The condition of the
// ratio (the other parameters' prior does not depend on theta) holds for
// independent priors; it does not hold for a centred-log-ratio composition
// prior, for which no significance is computed.
//
// # Density at the edge
//
// The marginal density at the edge is estimated from the samples with a
// local linear fit over the lowest window [Low, Low+w]: a density
// f(x) = f0 + f1 (x-Low) fitted to the window's sample count and mean
// (the method of moments; equivalently the local-linear boundary kernel of
// Jones 1993, Stat. Comput. 3, 135, with a uniform kernel). With
// u_i = (x_i-Low)/w for the n_w samples in the window,
//
//	f0 = 1/(n w) sum_{i in window} (4 - 6 u_i).
//
// The linear term removes the first-order bias that a plain histogram bin or
// a reflection kernel estimate has when the density slopes at the edge; the
// remaining bias is -f''(Low) w^2/12. The window is w = 2 s n_eff^(-1/5),
// where s is the posterior's robust scale (the smaller of the standard
// deviation and IQR/1.349) and n_eff the effective sample size, capped at a
// quarter of the prior width. Its standard error is the standard deviation
// of the per-sample kernel values over sqrt(n_eff), about
// 2/sqrt(n_eff * fraction in window) relative.
//
// # When there is no number
//
//   - Fewer than MinEffectiveSamples effective samples overall: nothing is
//     estimated.
//   - Fewer than MinEdgeSamples effective samples in the window (the gas is
//     bounded well away from the edge): the density at the edge is only
//     bounded from above, and the significance from below. The bound assumes
//     the density does not decrease from the edge up to the window's end
//     (true below the mode of a peaked posterior), and uses the one-sided 95%
//     Poisson upper limit of the window's effective count (Gehrels 1986, ApJ
//     303, 336, eq. 9) over the windows ending at the samples of effective
//     rank 1, 2, 4, ... up to the 16th percentile; the tightest is kept.
//   - The prior edge not low enough to mean "absent": B10 then measures the
//     evidence that the mixing ratio exceeds 10^Low, not that the gas is
//     present, and no detection is claimed. The edge means absent when
//     Low <= AbsentLog10 or when it lies at least AbsentDecades below the
//     posterior median.
//
// # Sigma
//
// B10 is turned into a significance with the calibration of Sellke, Bayarri &
// Berger (2001, Am. Stat. 55, 62): for a p-value p < 1/e the Bayes factor
// against the null is at most B10 <= -1/(e p ln p). The p whose bound equals
// the measured B10 is converted to a two-sided Gaussian sigma,
// p = 2 (1 - Phi(sigma)), as tabulated by Trotta (2008, Contemp. Phys. 49, 71).
// B10 <= 1 means no evidence for the gas: sigma is 0.

// Thresholds of the detection rules (stated in docs/methods.md).
const (
	// MinEffectiveSamples is the fewest effective samples of a gas's chain
	// for any significance to be computed. With fewer, a posterior piled
	// flat against the edge could put fewer than MinEdgeSamples in the edge
	// window (about 0.58 n_eff^0.8 of them) and be mistaken for one bounded
	// away from it.
	MinEffectiveSamples = 200
	// MinEdgeSamples is the fewest effective samples in the edge window for
	// a point estimate of the density there (relative standard error about
	// 2/sqrt(25) = 40%, i.e. +-0.4 in ln B).
	MinEdgeSamples = 25
	// AbsentLog10 is the highest prior lower edge (log10 mixing ratio) that
	// means "absent" by itself: 1e-10, far below the mixing ratios at which
	// the molecules chord models leave transmission features in a few
	// transits (fact of the trade, rough).
	AbsentLog10 = -10.0
	// AbsentDecades is how far below the posterior median the prior edge
	// must lie, otherwise, to mean absent: 4 decades, because a band's
	// transit-depth contrast grows by about one scale height per e-fold of
	// abundance, so 10^-4 of the measured abundance removes about 9 scale
	// heights, more than the height of the bands (fact of the trade).
	AbsentDecades = 4.0
	// DetectSigma is the significance from which a gas is called detected
	// (3 sigma, common practice).
	DetectSigma = 3.0
	// UpperLimitSigma is the significance below which a gas is reported as an
	// upper limit (2 sigma, p = 0.05: at most weak evidence on the scale of
	// Trotta 2008).
	UpperLimitSigma = 2.0
)

// GasClass is what a run says about one gas.
type GasClass int

const (
	// Undetermined: too few effective samples to say.
	Undetermined GasClass = iota
	// UpperLimit: the posterior reaches the prior's lower edge; only the
	// one-sided 95% upper limit (95th percentile) is reported.
	UpperLimit
	// Constrained: bounded away from the edge, but below the detection
	// threshold, or the edge does not mean absent, or the significance is
	// only a lower bound below the threshold.
	Constrained
	// Detected: significance at least DetectSigma, the edge meaning absent.
	Detected
)

// String returns the class as printed in summaries.
func (c GasClass) String() string {
	switch c {
	case UpperLimit:
		return "upper limit"
	case Constrained:
		return "constrained"
	case Detected:
		return "detected"
	default:
		return "undetermined"
	}
}

// MarshalText writes the class as in String, for summary.json.
func (c GasClass) MarshalText() ([]byte, error) { return []byte(c.String()), nil }

// UnmarshalText reads a class written by MarshalText.
func (c *GasClass) UnmarshalText(b []byte) error {
	for _, k := range []GasClass{Undetermined, UpperLimit, Constrained, Detected} {
		if string(b) == k.String() {
			*c = k
			return nil
		}
	}
	return fmt.Errorf("unknown gas class %q", b)
}

// EdgeDensity is the estimated marginal posterior density of a log10 mixing
// ratio at its prior's lower edge (per decade).
type EdgeDensity struct {
	Density float64 // point estimate, or the upper bound when Bound
	StdErr  float64 // standard error of Density; 0 when Bound
	// Bound is set when too few samples lie near the edge for a point
	// estimate: Density is then a 95% upper bound.
	Bound  bool
	Window float64 // width w of the edge window (decades)
	// EdgeSamples is the effective number of samples in the window
	// (count * n_eff / n).
	EdgeSamples float64
}

// EstimateEdgeDensity estimates the marginal posterior density of samples at
// low, the lower edge of their uniform prior on [low, high] (see the package
// comment of this file for the method). ess is the effective sample size
// of the chain (<= 0 or > len(samples) means the samples are independent;
// NaN, an unknown one, is an error: pass it when the autocorrelation time
// is not reliable, since the ESS from a lower bound on tau overstates the
// significance).
// It returns an error for too few samples, samples outside the prior, or a
// degenerate posterior.
func EstimateEdgeDensity(samples []float64, low, high, ess float64) (EdgeDensity, error) {
	if !(low < high) || math.IsInf(low, 0) || math.IsInf(high, 0) {
		return EdgeDensity{}, fmt.Errorf("prior bounds [%g, %g] are not a finite interval", low, high)
	}
	n := float64(len(samples))
	if math.IsNaN(ess) {
		return EdgeDensity{}, fmt.Errorf("effective sample size unknown (the chain is too short for a reliable autocorrelation time): no density at the prior edge")
	}
	if ess <= 0 || ess > n {
		ess = n
	}
	if ess < MinEffectiveSamples {
		return EdgeDensity{}, fmt.Errorf("%.0f effective samples, fewer than the %d needed for a density at the prior edge", ess, MinEffectiveSamples)
	}
	x := slices.Clone(samples)
	slices.Sort(x)
	return edgeDensitySorted(x, low, high, ess)
}

// edgeDensitySorted is EstimateEdgeDensity on sorted samples, with bounds
// checked and ess in [MinEffectiveSamples, len(x)].
func edgeDensitySorted(x []float64, low, high, ess float64) (EdgeDensity, error) {
	n := float64(len(x))
	if math.IsNaN(x[0]) || math.IsNaN(x[len(x)-1]) {
		return EdgeDensity{}, fmt.Errorf("samples contain NaN")
	}
	// Allow rounding at the edges (the chain may store float32-rounded values).
	tol := 1e-9 * (high - low)
	if x[0] < low-tol || x[len(x)-1] > high+tol {
		return EdgeDensity{}, fmt.Errorf("samples span [%g, %g], outside the prior [%g, %g]", x[0], x[len(x)-1], low, high)
	}
	sd := stat.StdDev(x, nil)
	iqr := stat.Quantile(0.75, stat.Empirical, x, nil) - stat.Quantile(0.25, stat.Empirical, x, nil)
	s := sd
	if r := iqr / 1.349; r > 0 && r < s {
		s = r
	}
	if !(s > 0) {
		return EdgeDensity{}, fmt.Errorf("all samples equal: no spread to estimate a density from")
	}
	w := math.Min(2*s*math.Pow(ess, -0.2), (high-low)/4)
	effPer := ess / n // effective samples per sample

	var sum, sumSq float64
	m := 0
	for _, xi := range x {
		u := (xi - low) / w
		if u >= 1 {
			break
		}
		k := 4 - 6*math.Max(u, 0)
		sum += k
		sumSq += k * k
		m++
	}
	edge := float64(m) * effPer
	if edge >= MinEdgeSamples {
		f := sum / (n * w)
		// Per-sample kernel values k_i/w (zero outside the window).
		meanK := sum / n
		varK := sumSq/n - meanK*meanK
		se := math.Sqrt(math.Max(varK, 0)/ess) / w
		if f > 0 {
			return EdgeDensity{Density: f, StdErr: se, Window: w, EdgeSamples: edge}, nil
		}
	}
	return EdgeDensity{Density: edgeBound(x, low, ess), Bound: true, Window: w, EdgeSamples: edge}, nil
}

// edgeBound is the 95% upper bound on the density at low from sorted x,
// assuming the density is non-decreasing from low to each window's end.
func edgeBound(x []float64, low, ess float64) float64 {
	n := float64(len(x))
	best := math.Inf(1)
	last := int(0.16 * n)
	for keff := 0.0; ; keff = math.Max(1, 2*keff) {
		k := int(math.Round(keff * n / ess)) // samples strictly inside the window
		if k > last {
			break
		}
		v := x[k] - low
		if v > 0 {
			best = math.Min(best, poissonUpper95(float64(k)*ess/n)/(ess*v))
		}
	}
	return best
}

// poissonUpper95 is the one-sided 95% upper limit of a Poisson mean given an
// observed count k (Gehrels 1986, ApJ 303, 336, eq. 9 with S = 1.645; it
// gives 3.21 for k = 0 against the exact 3.00, so it errs on the safe side).
func poissonUpper95(k float64) float64 {
	const s = 1.645
	return k + s*math.Sqrt(k+1) + (s*s+2)/3
}

// SellkeLnB is the Sellke-Bayarri-Berger bound on the Bayes factor against
// the null for a p-value p < 1/e: ln B10 <= -ln(-e p ln p) (Sellke, Bayarri &
// Berger 2001, Am. Stat. 55, 62). It returns 0 for p >= 1/e.
func SellkeLnB(p float64) float64 {
	if !(p > 0) {
		panic("retrieve: SellkeLnB of a p-value <= 0")
	}
	if p >= 1/math.E {
		return 0
	}
	return -math.Log(-math.E * p * math.Log(p))
}

// SigmaFromLnB converts a log Bayes factor in favour of presence to a
// two-sided Gaussian significance through the Sellke-Bayarri-Berger
// calibration: it finds p with SellkeLnB(p) = lnB10 and returns sigma with
// p = 2(1-Phi(sigma)). lnB10 <= 0 gives 0 (no evidence for presence); +Inf
// gives +Inf.
//
// With x = -ln p the condition is x - ln x = 1 + lnB10 (x > 1), i.e.
// p = exp(W_-1(-1/(e B10))) with W_-1 the lower branch of Lambert's W; the
// root is found by Newton's method, which converges monotonically from
// x0 = 1 + lnB10 + ln(1 + lnB10) because x - ln x is convex.
func SigmaFromLnB(lnB10 float64) float64 {
	switch {
	case math.IsNaN(lnB10):
		return math.NaN()
	case lnB10 <= 0:
		return 0
	case math.IsInf(lnB10, 1):
		return math.Inf(1)
	}
	c := 1 + lnB10
	x := c + math.Log(c)
	for range 50 {
		g := x - math.Log(x) - c
		dx := g / (1 - 1/x)
		x -= dx
		if math.Abs(dx) <= 1e-14*x {
			break
		}
	}
	return sigmaTwoSided(x)
}

// sigmaTwoSided returns sigma with ln(2(1-Phi(sigma))) = -x, accurate for all
// x >= 0: the rational approximation of the normal quantile (gonum mathext,
// Wichura 1988) while p/2 is a normal float64, the asymptotic tail
// 1-Phi(s) ~ phi(s)/s (1 - 1/s^2 + 3/s^4) beyond (s > 37, where it is exact to
// float64 precision).
func sigmaTwoSided(x float64) float64 {
	lnHalfP := -x - math.Ln2
	if lnHalfP > -700 {
		return -mathext.NormalQuantile(math.Exp(lnHalfP))
	}
	s := math.Sqrt(-2 * lnHalfP)
	for range 50 {
		lnTail := -s*s/2 - math.Log(s*math.Sqrt(2*math.Pi)) + math.Log1p(-1/(s*s)+3/(s*s*s*s))
		// d lnTail / ds ~ -s - 1/s
		ds := (lnTail - lnHalfP) / (s + 1/s)
		s += ds
		if math.Abs(ds) < 1e-14*s {
			break
		}
	}
	return s
}

// GasDetection is what one run says about one gas whose log10 mixing ratio
// has a uniform prior on [Low, High].
type GasDetection struct {
	Class GasClass
	// LnB10 is the natural log of the Bayes factor for "present" against
	// "absent at the prior edge"; a lower bound when SigmaIsBound. Zero
	// when not computed (see Note).
	LnB10    float64
	LnB10Err float64 // standard error of LnB10 (0 for a bound)
	// Sigma is the Sellke-Bayarri-Berger significance of LnB10; a lower
	// bound when SigmaIsBound.
	Sigma        float64
	SigmaIsBound bool
	// EdgeMeansAbsent is whether the prior edge is low enough to mean
	// absent (AbsentLog10, AbsentDecades).
	EdgeMeansAbsent bool
	// Upper95 is the one-sided 95% upper limit (95th percentile) of the
	// log10 mixing ratio, the number quoted for an upper limit.
	Upper95 float64
	Edge    EdgeDensity
	// Note says in words why a number is a bound or missing; empty when the
	// significance is a plain estimate.
	Note string
}

// ClassifyGas applies the Savage-Dickey significance and the rules of this
// file to the samples of one gas's log10 mixing ratio (uniform prior on
// [low, high]; ess as in EstimateEdgeDensity):
//
//   - fewer than MinEffectiveSamples effective samples: Undetermined;
//   - a point estimate with sigma < UpperLimitSigma: UpperLimit (quote Upper95);
//   - sigma >= DetectSigma (estimate or lower bound) and the edge means
//     absent: Detected;
//   - otherwise Constrained.
//
// Bad prior bounds or samples outside the prior are errors.
func ClassifyGas(samples []float64, low, high, ess float64) (GasDetection, error) {
	if !(low < high) || math.IsInf(low, 0) || math.IsInf(high, 0) {
		return GasDetection{}, fmt.Errorf("prior bounds [%g, %g] are not a finite interval", low, high)
	}
	if len(samples) == 0 {
		return GasDetection{Class: Undetermined, Note: "no samples"}, nil
	}
	x := slices.Clone(samples)
	slices.Sort(x)
	d := GasDetection{Upper95: stat.Quantile(0.95, stat.Empirical, x, nil)}
	median := stat.Quantile(0.5, stat.Empirical, x, nil)
	d.EdgeMeansAbsent = low <= AbsentLog10 || median-low >= AbsentDecades

	n := float64(len(x))
	if math.IsNaN(ess) {
		d.Note = "effective sample size unknown (the chain is too short for a reliable autocorrelation time): no significance"
		return d, nil
	}
	if ess <= 0 || ess > n {
		ess = n
	}
	if ess < MinEffectiveSamples {
		d.Note = fmt.Sprintf("%.0f effective samples, fewer than %d: no significance", ess, MinEffectiveSamples)
		return d, nil
	}
	e, err := edgeDensitySorted(x, low, high, ess)
	if err != nil {
		return GasDetection{}, err
	}
	d.Edge = e
	d.LnB10 = -math.Log(e.Density * (high - low))
	d.Sigma = SigmaFromLnB(d.LnB10)
	if e.Bound {
		d.SigmaIsBound = true
		d.Note = fmt.Sprintf("too few samples near the prior edge (%.1f effective within %.2g dex) for an estimate; ln B >= %.1f is a bound", e.EdgeSamples, e.Window, d.LnB10)
	} else {
		d.LnB10Err = e.StdErr / e.Density
	}
	switch {
	case !e.Bound && d.Sigma < UpperLimitSigma:
		d.Class = UpperLimit
	case d.Sigma >= DetectSigma && d.EdgeMeansAbsent:
		d.Class = Detected
	default:
		d.Class = Constrained
	}
	if !d.EdgeMeansAbsent && d.Class != UpperLimit {
		d.Note = strings.TrimPrefix(d.Note+fmt.Sprintf("; the prior edge 1e%g is not low enough to mean absent, so ln B only measures evidence for a mixing ratio above it", low), "; ")
	}
	return d, nil
}

// Describe is the one-line verdict printed in summaries, e.g.
// "detected, 4.1 sigma (ln B = 7.6 +- 0.2)", "detected, > 3.6 sigma (bound)",
// "upper limit, log10 < -5.32 (95%)". Whenever the significance is not a
// plain estimate the note says why.
func (d GasDetection) Describe() string {
	s := verdictHead(d.Class, d.Sigma, d.SigmaIsBound, d.Upper95)
	switch {
	case d.Class == UpperLimit:
		s += " (95%)"
	case d.SigmaIsBound && d.Sigma > 0:
		s += " (lower bound)"
	case !d.SigmaIsBound && d.Class != Undetermined:
		s += fmt.Sprintf(" (ln B = %.1f +- %.1f)", d.LnB10, d.LnB10Err)
	}
	if d.Note != "" {
		s += "; " + d.Note
	}
	return s
}

// verdictHead is the short verdict: the class and the significance (a
// lower bound rounded down, floorTenth), or the upper limit:
// "detected, 4.1 sigma", "detected, > 3.8 sigma", "upper limit, log10 <
// -5.32", "undetermined".
func verdictHead(class GasClass, sigma float64, bound bool, upper95 float64) string {
	switch {
	case class == Undetermined:
		return "undetermined"
	case class == UpperLimit:
		return fmt.Sprintf("upper limit, log10 < %.2f", upper95)
	case bound && sigma == 0:
		return fmt.Sprintf("%s, significance not measurable", class)
	case bound:
		return fmt.Sprintf("%s, > %s sigma", class, floorTenth(sigma))
	}
	return fmt.Sprintf("%s, %.1f sigma", class, sigma)
}

// LifeCautionGases are the gases whose detection, on Earth, is associated
// with life, and which therefore carry LifeCaution when detected.
var LifeCautionGases = []string{"O2", "O3", "CH4"}

// LifeCaution is printed by summaries and reports whenever one of
// LifeCautionGases is reported detected.
const LifeCaution = "Caution: a detected gas is not by itself evidence of life. " +
	"Oxygen, ozone and methane all have abiotic sources (for example photolysis of water or carbon dioxide " +
	"with hydrogen escape, volcanic and geological outgassing, impacts), and the significance rests on the " +
	"model's assumptions (composition, temperature profile, clouds, the opacities used, the star). " +
	"Abiotic sources and these assumptions must be ruled out before the detection says anything about life."

// NeedsLifeCaution reports whether a verdict on gas calls for LifeCaution:
// the gas (a chemical formula as in the configuration, e.g. "CH4") is one
// of LifeCautionGases and is reported detected. Caution chooses between
// LifeCaution and MethaneChemistryNote with the atmosphere's context.
func NeedsLifeCaution(gas string, class GasClass) bool {
	return class == Detected && slices.Contains(LifeCautionGases, gas)
}

// CoolMethaneK is the limb temperature below which methane is expected in
// a hydrogen-rich atmosphere: in gas of solar composition near 1 bar,
// methane replaces carbon monoxide as the main carrier of carbon below
// roughly 1000-1100 K (Lodders & Fegley 2002, Icarus 155, 393).
const CoolMethaneK = 1000.0

// MethaneChemistryNote replaces LifeCaution for methane detected in a cool,
// hydrogen-rich atmosphere, where chemistry predicts it.
const MethaneChemistryNote = "Note on methane: in a hydrogen-rich atmosphere at about 1000 K or cooler, equilibrium chemistry " +
	"makes methane the main carrier of carbon (Lodders & Fegley 2002, Icarus 155, 393), so its detection here is " +
	"expected chemistry, not a sign of life. The significance still rests on the model's assumptions " +
	"(composition, temperature profile, clouds, the opacities used, the star)."

// Atmosphere is what the cautions need to know of a fitted atmosphere.
type Atmosphere struct {
	// HydrogenRich is set when the fill gas is H2+He (a giant or
	// sub-Neptune envelope), unset for a rocky planet's N2, CO2, ... fill.
	HydrogenRich bool `json:"hydrogen_rich"`
	// TemperatureColumn names the free parameter giving the limb
	// temperature (its median is used); empty when the temperature is fixed.
	TemperatureColumn string `json:"temperature_column,omitempty"`
	// TemperatureK is the fixed limb temperature (K) when no column gives
	// it; NaN or 0 when unknown.
	TemperatureK float64 `json:"temperature_k,omitempty"`
}

// Caution returns the caution printed for a detection of gas with the
// atmosphere's context (limb temperature t, K; NaN when unknown): "" when
// none applies, MethaneChemistryNote for methane in a cool hydrogen-rich
// atmosphere, else LifeCaution for LifeCautionGases. Oxygen and ozone, and
// any of the three in an atmosphere that is not hydrogen-rich (a rocky
// planet's), keep the full caution.
func Caution(gas string, class GasClass, a *Atmosphere, t float64) string {
	if !NeedsLifeCaution(gas, class) {
		return ""
	}
	if gas == "CH4" && a != nil && a.HydrogenRich && t > 0 && t <= CoolMethaneK {
		return MethaneChemistryNote
	}
	return LifeCaution
}
