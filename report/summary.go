package report

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"slices"
	"sort"
	"strings"

	"gonum.org/v1/gonum/stat"

	"chord/chains"
	"chord/internal/atomicfile"
	"chord/internal/version"
	"chord/sampler"
)

// Summaries of a run: summary.json (Summary) and summary.txt (WriteText).
//
// Per column: median, the 16th/84th and 2.5th/97.5th percentiles (empirical
// quantiles, gonum stat.Quantile with stat.Empirical), mean, standard
// deviation and the value at the maximum-posterior sample.
//
// Diagnostics are computed on the chain after burn-in, before thinning:
// the integrated autocorrelation time per column (sampler.IntegratedTime,
// Sokal's window c = 5, walkers' autocorrelation functions averaged;
// Goodman & Weare 2010), the effective sample size walkers * steps / tau,
// and the acceptance fraction per walker (the fraction of steps at which
// the walker's parameters changed).
//
// Log10 mixing ratios with a uniform prior get a verdict from ClassifyGas:
// the Savage-Dickey significance of the gas, and the rule that a posterior
// piled at the prior's lower edge (density at the edge not significantly
// below the prior's, i.e. significance under UpperLimitSigma) is reported as
// an upper limit, the one-sided 95% upper limit being its 95th percentile.

// Rules of the summaries (stated in docs/methods.md). Autocorrelation times use
// the sampler's window (sampler.DefaultSokalWindow), and a chain counts as
// converged when the whole chain (burn-in included, as in the sampler's
// stopping rule, so that a run the sampler stopped as converged is
// reported converged) is sampler.DefaultConvergedTaus largest
// autocorrelation times long.
const (
	// AutoBurnTaus is the burn-in chosen by --burn auto, in units of the
	// largest autocorrelation time estimated on the whole chain (common
	// practice: a few tau), at most half the chain.
	AutoBurnTaus = 3.0
)

// GasParam marks a parameter column that is the log10 volume mixing ratio
// of a gas with a prior uniform on [Low, High].
type GasParam struct {
	Column string
	Gas    string
	Low    float64
	High   float64
}

// SummaryOptions configures Summarize.
type SummaryOptions struct {
	Burn int // steps dropped from the start of the chain (already dropped from the Chains given)
	Thin int // keep every Thin-th step for the percentiles; 0 means 1
	// BurnAuto records that Burn was chosen by AutoBurn.
	BurnAuto bool
	Gases    []GasParam
	// Bounds are the prior boxes of the parameter columns for the
	// prior-edge check (checks.go); columns without one are not checked.
	Bounds []ParamBounds
	// Atmosphere gives the context of the cautions on gases associated
	// with life (Caution); nil means none (the full caution applies).
	Atmosphere *Atmosphere
	// Evidence, for a nested-sampling run, is its evidence; the chain is
	// then its equal-weight samples (EqualWeightSamples), summarised as
	// independent draws, and Burn and Thin must be 0 or 1.
	Evidence *Evidence
	// ConfigFile is the configuration the run was made from, named in the
	// advice on getting the evidence-based number when a Savage-Dickey
	// significance is only a lower bound; "" names it CONFIG.
	ConfigFile string
}

// Summary is the content of summary.json.
type Summary struct {
	Program       string `json:"program"`
	RunID         string `json:"run_id"`
	DemoOpacities bool   `json:"demo_opacities"`
	// Method is MethodEnsemble or MethodNested (absent in summaries
	// written before nested sampling: ensemble).
	Method string `json:"method"`
	// Evidence is the evidence of a nested-sampling run (nil for the
	// ensemble).
	Evidence *Evidence `json:"evidence"`
	// Walkers and Steps are the ensemble's (0 for nested sampling).
	Walkers  int  `json:"walkers"`
	Steps    int  `json:"steps"` // total steps of the chain
	Burn     int  `json:"burn"`
	BurnAuto bool `json:"burn_auto"`
	Thin     int  `json:"thin"`
	Samples  int  `json:"samples"` // samples behind the percentiles

	Acceptance Acceptance `json:"acceptance"`
	// MaxTau is the largest integrated autocorrelation time of the free
	// parameters (steps, estimated after burn-in); ChainTaus the whole
	// chain's length over it.
	MaxTau    Float  `json:"max_tau"`
	ChainTaus Float  `json:"chain_taus"`
	Converged bool   `json:"converged"`
	Stop      string `json:"stop"` // why the sampler stopped

	Parameters []ColumnSummary `json:"parameters"`
	Derived    []ColumnSummary `json:"derived"`
	Best       BestSample      `json:"best"`

	// GoodnessOfFit is the goodness-of-fit check's numbers (nil without
	// a model or degrees of freedom).
	GoodnessOfFit *GoodnessOfFit `json:"goodness_of_fit"`
	// Checks are the findings of the checks that say when the fit is not
	// to be trusted (checks.go), in plain words; empty when none fired.
	Checks []Check `json:"checks"`
	// Coverage is what the opacity tables cover of the data (nil when not
	// known).
	Coverage *Coverage `json:"coverage"`

	// Atmosphere is the context of the cautions (SummaryOptions.Atmosphere),
	// kept for the cautions of detections made later from this run (chord
	// detect); nil when not known.
	Atmosphere *Atmosphere `json:"atmosphere"`

	// InvalidStates counts rejected proposals by reason (from the run).
	InvalidStates map[string]int64 `json:"invalid_states"`
	Warnings      []string         `json:"warnings"`
	Cautions      []string         `json:"cautions"`
}

// Acceptance is the acceptance fraction over walkers.
type Acceptance struct {
	Mean   float64 `json:"mean"`
	Min    float64 `json:"min"`
	Max    float64 `json:"max"`
	Median float64 `json:"median"`
	Stuck  []int   `json:"stuck_walkers"`
}

// ColumnSummary summarises one parameter or derived column.
type ColumnSummary struct {
	Name     string  `json:"name"`
	Quantity string  `json:"quantity"`
	Unit     string  `json:"unit"`
	Prior    string  `json:"prior"`
	Median   float64 `json:"median"`
	P16      float64 `json:"p16"`
	P84      float64 `json:"p84"`
	P2_5     float64 `json:"p2_5"`
	P97_5    float64 `json:"p97_5"`
	Mean     float64 `json:"mean"`
	StdDev   float64 `json:"std_dev"`
	MaxPost  float64 `json:"max_posterior"`
	Tau      Float   `json:"tau"` // integrated autocorrelation time (steps)
	// TauReliable is false when the chain is too short for Sokal's window
	// (the tau given is then a lower bound).
	TauReliable bool  `json:"tau_reliable"`
	ESS         Float `json:"ess"`
	// RHat is the rank-normalised split R-hat over the walkers and BulkESS
	// the bulk effective sample size (sampler.SplitRhat, sampler.BulkESS;
	// Vehtari et al. 2021, Bayesian Analysis 16, 667): heuristics for an
	// ensemble, whose walkers are not independent chains.
	RHat    Float       `json:"r_hat"`
	BulkESS Float       `json:"bulk_ess"`
	Gas     *GasVerdict `json:"gas"`
}

// GasVerdict is ClassifyGas's result as stored in summary.json.
type GasVerdict struct {
	Gas             string   `json:"gas"`
	Class           GasClass `json:"class"`
	Sigma           Float    `json:"sigma"`
	SigmaIsBound    bool     `json:"sigma_is_lower_bound"`
	LnB10           Float    `json:"ln_bayes_factor"`
	LnB10Err        Float    `json:"ln_bayes_factor_error"`
	Upper95         float64  `json:"upper_limit_95"`
	EdgeMeansAbsent bool     `json:"edge_means_absent"`
	// Unreliable is set when the model does not fit the data (the
	// goodness-of-fit check): the significance measures nothing then.
	Unreliable bool   `json:"unreliable"`
	Verdict    string `json:"verdict"`
}

// BestSample is the maximum-posterior sample after burn-in.
type BestSample struct {
	Step          int     `json:"step"`
	Walker        int     `json:"walker"`
	LogPosterior  float64 `json:"log_posterior"`
	LogLikelihood float64 `json:"log_likelihood"`
	// ChiSquare is sum ((d - m)/sigma)^2 of the best sample's model against
	// the data with their stated errors; ReducedChiSquare divides it by
	// DataPoints - FreeParameters. Zero when not computed.
	ChiSquare        float64 `json:"chi_square"`
	ReducedChiSquare Float   `json:"reduced_chi_square"`
	DataPoints       int     `json:"data_points"`
	FreeParameters   int     `json:"free_parameters"`
}

// AutoBurn returns the burn-in chosen by --burn auto for a chain read with
// no burn-in: AutoBurnTaus times the largest autocorrelation time of the
// parameter columns, at most half the chain.
func AutoBurn(c *chains.Chain) int {
	tau, _ := maxTau(c)
	b := int(math.Ceil(AutoBurnTaus * tau))
	if half := c.TotalSteps / 2; b > half || math.IsNaN(tau) || math.IsInf(tau, 0) {
		b = half
	}
	return b
}

// maxTau is the largest autocorrelation time over the parameter columns.
func maxTau(c *chains.Chain) (float64, bool) {
	m, all := 0.0, true
	for i, col := range c.Columns {
		if col.Role != chains.RoleParameter {
			continue
		}
		t, ok := columnTau(c, i)
		all = all && ok
		if t > m || math.IsNaN(t) {
			m = t
		}
	}
	return m, all
}

func columnTau(c *chains.Chain, col int) (float64, bool) {
	if len(c.Steps) < 2 {
		return math.NaN(), false
	}
	return sampler.IntegratedTime(walkerSeries(c, col), sampler.DefaultSokalWindow)
}

func walkerSeries(c *chains.Chain, col int) [][]float64 {
	series := make([][]float64, c.Walkers)
	for k := range series {
		series[k] = c.Walker(nil, col, k)
	}
	return series
}

// RHatLimit is the split R-hat above which a parameter is flagged.
// Vehtari et al. (2021) recommend 1.01 for long independent chains; a walker
// of a 50-tau ensemble chain holds only about 25 independent draws per split
// half, for which a converged chain gives about 1.02 (the demo does), so
// the flag is set at 1.05, a hint beside the autocorrelation rule.
const RHatLimit = 1.05

// Summarize computes the summary of a chain read after burn-in without
// thinning (chains.Read(dir, parts, burn, 1)).
func Summarize(c *chains.Chain, opt SummaryOptions) (*Summary, error) {
	thin := opt.Thin
	if thin == 0 {
		thin = 1
	}
	if thin < 1 || opt.Burn < 0 {
		return nil, fmt.Errorf("summary: burn-in %d, thinning %d", opt.Burn, opt.Thin)
	}
	nested := opt.Evidence != nil
	if nested && (opt.Burn != 0 || thin != 1 || c.Walkers != 1) {
		return nil, fmt.Errorf("summary: the equal-weight samples of nested sampling take no burn-in or thinning (got burn-in %d, thinning %d, %d walkers)", opt.Burn, thin, c.Walkers)
	}
	if len(c.Steps) < 2 {
		return nil, fmt.Errorf("summary: %d steps after burn-in: need at least 2", len(c.Steps))
	}
	lp := c.Column("log_posterior")
	if lp == nil {
		return nil, fmt.Errorf("summary: the chains have no log_posterior column")
	}
	s := &Summary{
		Program: "chord " + version.Version, Method: MethodEnsemble, Walkers: c.Walkers, Steps: c.TotalSteps,
		Burn: opt.Burn, BurnAuto: opt.BurnAuto, Thin: thin,
		Warnings: []string{}, Cautions: []string{}, Checks: []Check{},
	}
	if nested {
		s.Method, s.Evidence, s.Walkers, s.Steps = MethodNested, opt.Evidence, 0, 0
	}
	best := s.setBest(c, lp)
	if nested {
		s.Acceptance.Stuck = []int{}
		s.MaxTau, s.ChainTaus = Float(math.NaN()), Float(math.NaN())
	} else {
		s.Acceptance = acceptance(c)
		if msg := modesCheck(c, s.Acceptance); msg != "" {
			s.addCheck(CheckModes, msg)
		}
	}
	gases := make(map[string]GasParam, len(opt.Gases))
	for _, g := range opt.Gases {
		gases[g.Column] = g
	}
	bounds := make(map[string]ParamBounds, len(opt.Bounds))
	for _, b := range opt.Bounds {
		bounds[b.Column] = b
	}
	nKept := 0
	for _, st := range c.Steps {
		if (st-c.Steps[0])%thin == 0 {
			nKept++
		}
	}
	s.Samples = nKept * c.Walkers
	allTau := true
	var highRHat []string
	var detected [][2]string // gas and column of each gas verdict
	buf := make([]float64, 0, s.Samples)
	for i, col := range c.Columns {
		if col.Role != chains.RoleParameter && col.Role != chains.RoleDerived {
			continue
		}
		buf = keptValues(buf[:0], c, i, thin)
		var cs ColumnSummary
		if nested {
			cs = columnSummary(col, buf)
			cs.Tau, cs.TauReliable, cs.ESS = Float(math.NaN()), false, Float(c.EffectiveSize)
			cs.RHat, cs.BulkESS = Float(math.NaN()), Float(math.NaN())
		} else {
			cs = columnStats(c, i, buf)
		}
		cs.MaxPost = c.Values[i][best]
		if col.Role == chains.RoleDerived {
			s.Derived = append(s.Derived, cs)
			continue
		}
		allTau = allTau && (cs.TauReliable || nested)
		if cs.RHat > RHatLimit {
			highRHat = append(highRHat, fmt.Sprintf("%s %.3f", col.Name, float64(cs.RHat)))
		}
		if tau := float64(cs.Tau); !nested && (tau > float64(s.MaxTau) || math.IsNaN(tau)) {
			s.MaxTau = cs.Tau
		}
		if b, ok := bounds[col.Name]; ok {
			if msg := edgeCheck(b, buf); msg != "" {
				s.addCheck(CheckPriorEdge, msg)
			}
		}
		if g, ok := gases[col.Name]; ok {
			// The equal-weight samples of nested sampling count as
			// independent draws.
			ess := math.Min(float64(cs.ESS), float64(len(buf)))
			switch {
			case nested:
				ess = float64(len(buf))
			case !cs.TauReliable:
				// tau is then only a lower bound, so this ESS is an upper
				// bound, and a significance from it would be overstated.
				ess = math.NaN()
			}
			var err error
			if cs.Gas, err = gasVerdict(g, buf, ess); err != nil {
				return nil, fmt.Errorf("summary: parameter %s: %w", col.Name, err)
			}
			detected = append(detected, [2]string{g.Gas, col.Name})
		}
		s.Parameters = append(s.Parameters, cs)
	}
	s.setCautions(detected, opt.Atmosphere)
	s.adviseEvidence(opt.ConfigFile)
	if nested {
		s.Converged = s.Evidence.Finished
		if !s.Converged {
			s.Warnings = append(s.Warnings, "not finished: the nested-sampling run stopped before its evidence tolerance; ln Z and the posterior count the live points as the final ones would be, an estimate that the rest of the run refines; resume the run before trusting either")
		}
		return s, nil
	}
	if len(highRHat) > 0 {
		s.Warnings = append(s.Warnings, fmt.Sprintf("split R-hat above %g: %s; the walkers disagree, the chain may need to be longer", RHatLimit, strings.Join(highRHat, ", ")))
	}
	s.setConvergence(c, allTau)
	return s, nil
}

// setCautions adds the caution each gas verdict calls for (Caution), once
// each; the limb temperature is the median of the atmosphere's temperature
// column, or its fixed temperature.
func (s *Summary) setCautions(gases [][2]string, a *Atmosphere) {
	if a != nil {
		c := *a
		if math.IsNaN(c.TemperatureK) {
			c.TemperatureK = 0 // unknown; JSON has no NaN
		}
		s.Atmosphere = &c
	}
	for _, g := range gases {
		for _, p := range s.Parameters {
			if p.Name != g[1] || p.Gas == nil {
				continue
			}
			s.addCaution(g[0], p.Gas.Class)
		}
	}
}

// addCaution adds the caution a verdict of class on gas calls for
// (Caution) with the context of s.Atmosphere, once.
func (s *Summary) addCaution(gas string, class GasClass) {
	if c := Caution(gas, class, s.Atmosphere, s.limbTemperature()); c != "" && !slices.Contains(s.Cautions, c) {
		s.Cautions = append(s.Cautions, c)
	}
}

// limbTemperature is the median of the atmosphere's temperature column,
// or its fixed temperature; NaN when unknown.
func (s *Summary) limbTemperature() float64 {
	a := s.Atmosphere
	if a == nil {
		return math.NaN()
	}
	t := a.TemperatureK
	for _, p := range s.Parameters {
		if a.TemperatureColumn != "" && p.Name == a.TemperatureColumn {
			t = p.Median
		}
	}
	return t
}

// setBest records the maximum-posterior sample of lp (column
// log_posterior) and returns its index.
func (s *Summary) setBest(c *chains.Chain, lp []float64) int {
	best := 0
	for i, v := range lp {
		if v > lp[best] {
			best = i
		}
	}
	s.Best = BestSample{Step: c.Steps[best/c.Walkers], Walker: best % c.Walkers, LogPosterior: lp[best]}
	if ll := c.Column("log_likelihood"); ll != nil {
		s.Best.LogLikelihood = ll[best]
	}
	return best
}

// keptValues appends to dst the values of column i at the steps kept by
// the thinning.
func keptValues(dst []float64, c *chains.Chain, i, thin int) []float64 {
	v := c.Values[i]
	for j, st := range c.Steps {
		if (st-c.Steps[0])%thin == 0 {
			dst = append(dst, v[j*c.Walkers:(j+1)*c.Walkers]...)
		}
	}
	return dst
}

// columnStats summarises column i from its kept values x, with its
// autocorrelation time, effective sample sizes and split R-hat computed on
// the whole chain read.
func columnStats(c *chains.Chain, i int, x []float64) ColumnSummary {
	cs := columnSummary(c.Columns[i], x)
	tau, ok := columnTau(c, i)
	cs.Tau, cs.TauReliable = Float(tau), ok
	cs.ESS = Float(float64(len(c.Values[i])) / tau)
	cs.RHat, cs.BulkESS = Float(math.NaN()), Float(math.NaN())
	if series := walkerSeries(c, i); len(series[0]) >= 4 {
		if r, err := sampler.SplitRhat(series); err == nil {
			cs.RHat = Float(r)
		}
		if e, err := sampler.BulkESS(series); err == nil {
			cs.BulkESS = Float(e)
		}
	}
	return cs
}

// gasVerdict classifies the gas g from its kept log10 mixing ratios x
// (ClassifyGas) with the effective sample size ess (NaN: unknown).
func gasVerdict(g GasParam, x []float64, ess float64) (*GasVerdict, error) {
	d, err := ClassifyGas(x, g.Low, g.High, ess)
	if err != nil {
		return nil, err
	}
	return &GasVerdict{
		Gas: g.Gas, Class: d.Class, Sigma: Float(d.Sigma), SigmaIsBound: d.SigmaIsBound,
		LnB10: Float(d.LnB10), LnB10Err: Float(d.LnB10Err), Upper95: d.Upper95,
		EdgeMeansAbsent: d.EdgeMeansAbsent, Verdict: d.Describe(),
	}, nil
}

// setConvergence judges the whole chain's length against the largest
// autocorrelation time (allTau: every parameter's tau is reliable).
func (s *Summary) setConvergence(c *chains.Chain, allTau bool) {
	s.ChainTaus = Float(float64(c.TotalSteps) / float64(s.MaxTau))
	s.Converged = allTau && s.ChainTaus >= sampler.DefaultConvergedTaus
	if !s.Converged {
		why := fmt.Sprintf("the chain is %.1f autocorrelation times long, fewer than %g", s.ChainTaus, sampler.DefaultConvergedTaus)
		if !allTau {
			why = "the chain is too short for a reliable autocorrelation time"
		}
		s.Warnings = append(s.Warnings, "not converged: "+why+"; extend the chain (resume the run with more steps, or until converged) before trusting the intervals")
	}
}

func columnSummary(col chains.Column, x []float64) ColumnSummary {
	sorted := slices.Clone(x)
	slices.Sort(sorted)
	q := func(p float64) float64 { return stat.Quantile(p, stat.Empirical, sorted, nil) }
	mean, sd := stat.MeanStdDev(x, nil)
	return ColumnSummary{
		Name: col.Name, Quantity: col.Quantity, Unit: col.Unit, Prior: col.Prior,
		Median: q(0.5), P16: q(0.16), P84: q(0.84), P2_5: q(0.025), P97_5: q(0.975),
		Mean: mean, StdDev: sd,
	}
}

// acceptance is the fraction of steps (after the first kept one) at which a
// walker's parameters changed.
func acceptance(c *chains.Chain) Acceptance {
	var params []int
	for i, col := range c.Columns {
		if col.Role == chains.RoleParameter {
			params = append(params, i)
		}
	}
	frac := make([]float64, c.Walkers)
	n := len(c.Steps)
	for k := range c.Walkers {
		moved := 0
		for i := 1; i < n; i++ {
			for _, p := range params {
				if c.Values[p][i*c.Walkers+k] != c.Values[p][(i-1)*c.Walkers+k] {
					moved++
					break
				}
			}
		}
		frac[k] = float64(moved) / float64(n-1)
	}
	sorted := slices.Clone(frac)
	sort.Float64s(sorted)
	a := Acceptance{
		Mean: stat.Mean(frac, nil), Min: sorted[0], Max: sorted[len(sorted)-1],
		Median: stat.Quantile(0.5, stat.Empirical, sorted, nil), Stuck: []int{},
	}
	// The sampler's rule (sampler.State.Acceptance): below half the median
	// and more than sampler.StuckSigma binomial standard deviations below it.
	m, p := float64(n-1), a.Median
	sd := math.Sqrt(m * p * (1 - p))
	for k, f := range frac {
		if f < p/2 && m*f < m*p-sampler.StuckSigma*sd {
			a.Stuck = append(a.Stuck, k)
		}
	}
	return a
}

// SetChiSquare records the chi-square of the best sample against n data
// points for a model of the summary's free parameters.
func (s *Summary) SetChiSquare(chi2 float64, n int) {
	s.Best.ChiSquare = chi2
	s.Best.DataPoints = n
	s.Best.FreeParameters = len(s.Parameters)
	if dof := n - len(s.Parameters); dof > 0 {
		s.Best.ReducedChiSquare = Float(chi2 / float64(dof))
	} else {
		s.Best.ReducedChiSquare = Float(math.NaN())
		s.Warnings = append(s.Warnings, fmt.Sprintf("%d data points for %d free parameters: no degrees of freedom left for a reduced chi-square", n, len(s.Parameters)))
	}
}

// Float is a number of a summary that may be NaN or infinite (a tau from
// too short a chain, an unbounded significance); JSON has neither, so they
// are written as null, and null reads back as NaN.
type Float float64

// MarshalJSON writes f, or null when it is not finite.
func (f Float) MarshalJSON() ([]byte, error) {
	if math.IsNaN(float64(f)) || math.IsInf(float64(f), 0) {
		return []byte("null"), nil
	}
	return json.Marshal(float64(f))
}

// UnmarshalJSON reads a number, or null as NaN.
func (f *Float) UnmarshalJSON(b []byte) error {
	if string(b) == "null" {
		*f = Float(math.NaN())
		return nil
	}
	return json.Unmarshal(b, (*float64)(f))
}

// WriteJSON writes summary.json.
//
// Every field is written, empty or not (docs/formats.md lists them): an
// absent object is null, an absent list or map empty.
func (s *Summary) WriteJSON(w io.Writer) error {
	c := *s
	if c.InvalidStates == nil {
		c.InvalidStates = map[string]int64{}
	}
	for _, p := range []*[]string{&c.Warnings, &c.Cautions} {
		if *p == nil {
			*p = []string{}
		}
	}
	for _, p := range []*[]ColumnSummary{&c.Parameters, &c.Derived} {
		if *p == nil {
			*p = []ColumnSummary{}
		}
	}
	if c.Checks == nil {
		c.Checks = []Check{}
	}
	if c.Acceptance.Stuck == nil {
		c.Acceptance.Stuck = []int{}
	}
	s = &c
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	enc.SetEscapeHTML(false)
	return enc.Encode(s)
}

// DemoWarning is printed wherever results made with the demo opacities appear.
const DemoWarning = "DEMO OPACITIES: these results were made with chord's invented demo opacity tables, not real line lists; they are for trying the program, NOT FOR SCIENCE."

func writeSummaryFiles(dir string, s *Summary) error {
	var js, txt bytes.Buffer
	if err := s.WriteJSON(&js); err != nil {
		return err
	}
	if err := s.WriteText(&txt); err != nil {
		return err
	}
	if err := atomicfile.Write(filepath.Join(dir, "summary.json"), js.Bytes(), true); err != nil {
		return err
	}
	return atomicfile.Write(filepath.Join(dir, "summary.txt"), txt.Bytes(), true)
}
