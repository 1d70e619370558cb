package report

import (
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"

	"chord/chains"
	"chord/sampler"
)

// Checks that say when a fit is not to be trusted (docs/fit-checks.md).
// Each finding is a Check in Summary.Checks, in plain words with what to
// do; summary.txt lists them under "fit checks", and a report shows them.
//
//   - Goodness of fit: the chi-square of the best sample (with the errors
//     as fitted: inflated where error inflation is a free parameter) for
//     N - k degrees of freedom (N data points, k free parameters), its
//     reduced value and p-value, the probability of a chi-square at least
//     as large if the model were right and the errors as stated (the
//     chi-square distribution's survival function). Below MisfitPValue the
//     model does not fit the data, and every gas verdict is marked
//     MisfitVerdict: a significance computed within a model that does not
//     describe the data measures nothing.
//   - Prior edges: a parameter whose posterior is piled against an edge
//     of its prior that is not a physical limit. The prior range is cut
//     into EdgeBins equal parts (in log for a log-uniform prior); the
//     posterior is piled at an edge when the part next to it holds at
//     least EdgeShare times the prior's share of the samples and at least
//     half as many as the fullest part (the posterior is highest there).
//     Edges that are limits (a mixing ratio of 1, a cloud fraction of 0 or
//     1, no error inflation) or that mean "absent" (the lower edge of a
//     log abundance, reported as an upper limit) are not checked.
//   - Table coverage: data bins outside an opacity table's wavelength
//     range; bins where no gas has any line opacity (only continuum), when
//     the model does not fit or they are more than NoLinesShare of the
//     data (otherwise they are noted in summary.txt); temperatures of the posterior (central 95% of the samples' layer
//     temperatures) or pressures of the model atmosphere outside a
//     table's grid (the table's edge values are used there), and gases
//     whose table is zero in every bin. Bins where one gas's table is zero
//     are listed in Summary.Coverage without a warning: tables built from
//     line lists are zero outside a gas's bands, which is physics, not a
//     gap.
//   - Modes: walkers whose log posteriors fall into separate groups (the
//     sorted walker medians after burn-in split where neighbours differ by
//     more than ModeGapSpread times the walkers' own spread of log
//     posterior, and by at least ModeGapMin), or stuck walkers (see
//     Acceptance): the posterior is multimodal or the chain has not mixed.

// Thresholds of the fit checks (stated in docs/fit-checks.md).
const (
	// MisfitPValue is the chi-square p-value below which the model does
	// not fit the data (0.1%, about a 3.3 sigma excess; common practice).
	MisfitPValue = 1e-3
	// EdgeBins and EdgeShare define a posterior piled against a prior
	// edge (see above).
	EdgeBins  = 50
	EdgeShare = 3.0
	// ModeGapSpread and ModeGapMin separate groups of walkers by their
	// median log posterior (see above).
	ModeGapSpread = 3.0
	ModeGapMin    = 1.0
	// NoLinesShare is the share of the data bins without any line
	// opacity above which the table-coverage check fires on them even
	// when the model fits (a few such bins at the ends of a range, where
	// only continuum is expected, are noted without a warning).
	NoLinesShare = 0.25
)

// MisfitVerdict is added to every gas verdict of a fit that fails the
// goodness-of-fit check.
const MisfitVerdict = "model does not fit the data: significances are not reliable"

// Kinds of Check.
const (
	CheckGoodness  = "goodness_of_fit"
	CheckPriorEdge = "prior_edge"
	CheckCoverage  = "table_coverage"
	CheckModes     = "modes"
)

// Check is one finding of the fit checks: its kind and what it means, in
// plain words, with what to do.
type Check struct {
	Kind    string `json:"kind"`
	Message string `json:"message"`
}

// GoodnessOfFit is the goodness-of-fit check's numbers.
// Its chi-square uses the errors as fitted (named _fitted, as the chain
// column chi_square_fitted), the best sample's Best.ChiSquare the stated
// errors.
type GoodnessOfFit struct {
	ChiSquare        float64 `json:"chi_square_fitted"`
	DegreesOfFreedom int     `json:"degrees_of_freedom"`
	ReducedChiSquare Float   `json:"reduced_chi_square_fitted"`
	PValue           Float   `json:"p_value"`
	// ErrorsInflated is true when the chi-square uses errors inflated by
	// the fit (error_inflation_ppm parameters).
	ErrorsInflated bool `json:"errors_inflated"`
	// Fits is false when PValue is below MisfitPValue.
	Fits bool `json:"fits"`
}

// ParamBounds describes the prior box of a parameter column for the
// prior-edge check.
type ParamBounds struct {
	Column    string
	Low, High float64
	Log       bool // log-uniform prior: the range is cut in log
	// LowLimit and HighLimit mark edges that are physical limits or mean
	// "absent"; they are not checked.
	LowLimit, HighLimit bool
}

// setGoodness runs the goodness-of-fit check on the chi-square chi2 of
// the best sample for n data points (inflated: with fitted error
// inflation).
func (s *Summary) setGoodness(chi2 float64, n int, inflated bool) {
	dof := n - len(s.Parameters)
	if dof <= 0 {
		return // SetChiSquare has said so
	}
	p := distuv.ChiSquared{K: float64(dof)}.Survival(chi2)
	g := &GoodnessOfFit{ChiSquare: chi2, DegreesOfFreedom: dof, ReducedChiSquare: Float(chi2 / float64(dof)), PValue: Float(p), ErrorsInflated: inflated, Fits: !(p < MisfitPValue)}
	s.GoodnessOfFit = g
	if g.Fits {
		return
	}
	errs := "the stated errors"
	if inflated {
		errs = "the errors as inflated by the fit"
	}
	s.addCheck(CheckGoodness, fmt.Sprintf("the model does not fit the data: chi-square %.1f for %d degrees of freedom with %s (reduced %.2f; p = %.2g, below %g). Gas significances are not reliable. Look at the residuals in spectrum.png: a missing gas, clouds or hazes, an offset between data sets, or errors that are too small (fit error_inflation_ppm) are the usual causes",
		chi2, dof, errs, chi2/float64(dof), p, MisfitPValue))
	for i := range s.Parameters {
		if v := s.Parameters[i].Gas; v != nil && !v.Unreliable {
			v.Unreliable = true
			v.Verdict += "; " + MisfitVerdict
		}
	}
}

func (s *Summary) addCheck(kind, msg string) {
	s.Checks = append(s.Checks, Check{Kind: kind, Message: msg})
}

// edgeCheck returns a message when the samples x of the column with prior
// box b are piled against an edge that is not a limit, "" otherwise.
func edgeCheck(b ParamBounds, x []float64) string {
	lo, hi := b.Low, b.High
	if b.Log {
		if !(lo > 0) {
			return ""
		}
		lo, hi = math.Log(lo), math.Log(hi)
	}
	if !(hi > lo) || math.IsInf(lo, 0) || math.IsInf(hi, 0) || len(x) == 0 {
		return ""
	}
	var counts [EdgeBins]int
	for _, v := range x {
		if b.Log {
			v = math.Log(v)
		}
		k := int(float64(EdgeBins) * (v - lo) / (hi - lo))
		counts[min(max(k, 0), EdgeBins-1)]++
	}
	top := slices.Max(counts[:])
	piled := func(c int) bool {
		return float64(c) >= EdgeShare*float64(len(x))/EdgeBins && 2*c >= top
	}
	which, edge, c := "", 0.0, 0
	switch {
	case !b.LowLimit && piled(counts[0]):
		which, edge, c = "lower", b.Low, counts[0]
	case !b.HighLimit && piled(counts[EdgeBins-1]):
		which, edge, c = "upper", b.High, counts[EdgeBins-1]
	default:
		return ""
	}
	return fmt.Sprintf("%s is piled against its prior's %s edge %g (%.0f%% of the samples in the %g%% of the prior range next to it): the data want values beyond the prior. Widen the prior if such values are possible; if they are not, the model is likely missing something (a gas, clouds or hazes, an offset between data sets), and this parameter is absorbing it",
		b.Column, which, edge, 100*float64(c)/float64(len(x)), 100.0/EdgeBins)
}

// modesCheck looks for walkers in separate groups of log posterior in the
// chain c (after burn-in), and for stuck walkers (acc).
func modesCheck(c *chains.Chain, acc Acceptance) string {
	lp := c.Column("log_posterior")
	n := len(c.Steps)
	if lp == nil || n < 4 {
		return ""
	}
	type walker struct {
		k      int
		median float64
	}
	ws := make([]walker, c.Walkers)
	spreads := make([]float64, c.Walkers)
	series := make([]float64, n)
	for k := range c.Walkers {
		for i := range n {
			series[i] = lp[i*c.Walkers+k]
		}
		slices.Sort(series)
		q := func(p float64) float64 { return stat.Quantile(p, stat.Empirical, series, nil) }
		ws[k] = walker{k, q(0.5)}
		spreads[k] = (q(0.75) - q(0.25)) / 1.349 // a robust standard deviation
	}
	slices.Sort(spreads)
	spread := stat.Quantile(0.5, stat.Empirical, spreads, nil)
	sort.Slice(ws, func(a, b int) bool { return ws[a].median > ws[b].median })
	gap := math.Max(ModeGapSpread*spread, ModeGapMin)
	var groups [][]walker
	for i, w := range ws {
		if i == 0 || ws[i-1].median-w.median > gap {
			groups = append(groups, nil)
		}
		groups[len(groups)-1] = append(groups[len(groups)-1], w)
	}
	var parts []string
	if len(groups) > 1 {
		desc := make([]string, len(groups))
		for i, g := range groups {
			desc[i] = fmt.Sprintf("%d walker(s) around %.1f", len(g), g[len(g)/2].median)
		}
		parts = append(parts, fmt.Sprintf("the walkers fall into %d groups by log posterior after burn-in (%s; the groups differ by more than %.1f, the walkers' own spread being %.2f)", len(groups), strings.Join(desc, ", "), gap, spread))
	}
	if len(acc.Stuck) > 0 {
		parts = append(parts, fmt.Sprintf("%d stuck walker(s) %v (acceptance under half the median %.2f and more than %d binomial standard deviations below it)", len(acc.Stuck), acc.Stuck, acc.Median, sampler.StuckSigma))
	}
	if len(parts) == 0 {
		return ""
	}
	return "multimodal or not mixed: " + strings.Join(parts, "; ") + ". The lower walkers may sit in a separate, lower mode (or a bad region) that the ensemble cannot cross, so the intervals mix modes or miss one. Look at the chain's traces; run the fit again from other seeds and compare the best log posteriors (the run's log lists the optima the start found); extend the burn-in, or discard the run and start again in the best mode"
}

// sortChecks orders the checks: goodness of fit, modes, prior edges,
// table coverage (stable within a kind).
func (s *Summary) sortChecks() {
	rank := map[string]int{CheckGoodness: 0, CheckModes: 1, CheckPriorEdge: 2, CheckCoverage: 3}
	slices.SortStableFunc(s.Checks, func(a, b Check) int { return rank[a.Kind] - rank[b.Kind] })
}

// writeChecks writes the fit checks' section of summary.txt.
func (s *Summary) writeChecks(b *strings.Builder) {
	b.WriteString("\nfit checks (docs/fit-checks.md)\n")
	if g := s.GoodnessOfFit; g != nil {
		errs := "stated errors"
		if g.ErrorsInflated {
			errs = "errors as inflated by the fit"
		}
		fits := "the model fits the data"
		if !g.Fits {
			fits = "THE MODEL DOES NOT FIT THE DATA"
		}
		fmt.Fprintf(b, "  goodness of fit: chi-square %.1f for %d degrees of freedom (%s): reduced %.2f, p-value %.2g; %s (threshold p < %g)\n",
			g.ChiSquare, g.DegreesOfFreedom, errs, float64(g.ReducedChiSquare), float64(g.PValue), fits, MisfitPValue)
	}
	if c := s.Coverage; c != nil && len(c.NoLines) > 0 && !slices.ContainsFunc(s.Checks, func(k Check) bool { return strings.HasPrefix(k.Message, "no gas of the model has any line opacity") }) {
		fmt.Fprintf(b, "  table coverage: no gas has line opacity in %d of %d data bins (continuum only): %s\n", len(c.NoLines), c.Bins, strings.Join(c.NoLines, ", "))
	}
	if len(s.Checks) == 0 {
		b.WriteString("  no check fired (goodness of fit, prior edges, walker modes, table coverage)\n")
		return
	}
	fmt.Fprintf(b, "  %d check(s) fired: do not trust this fit before reading them\n", len(s.Checks))
	for _, c := range s.Checks {
		fmt.Fprintf(b, "  - [%s] %s\n", strings.ReplaceAll(c.Kind, "_", " "), c.Message)
	}
}
