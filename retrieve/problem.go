package retrieve

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"sync"
	"sync/atomic"

	"chord/config"
	"chord/forward"
	"chord/forward/opacity"
	"chord/forward/opacity/lbl"
	"chord/priors"
	"chord/report"
	"chord/sampler"
)

// Problem is the posterior of a retrieval: it maps a parameter vector x
// (the free parameters of Resolved.Free, in order) to the forward model's
// state, computes the binned transit depth and returns
//
//	ln p(x | d) = sum_k ln prior_k(x_k) + ln L(x) (+ const),
//
// with the Gaussian log-likelihood including its normalising term, so that
// error-inflation parameters are sampled correctly:
//
//	ln L = -1/2 sum_i [ (d_i - m_i - o_ds(i))^2 / v_i + ln(2 pi v_i) ],
//	v_i  = sigma_i^2 + s_ds(i)^2,
//
// where m_i is the model depth of bin i, o the depth offset of its data set
// (offset_ppm parameters; 0 without one) and s the error inflation
// (error_inflation_ppm; 0 without one).
//
// Problem implements sampler.Target. Each evaluator has its own forward
// workspace and state, so evaluators run concurrently; LogProb allocates
// nothing. A state the forward model rejects (unbound atmosphere, mixing
// ratios over 1, cloud below the bottom, unusable temperatures) gives
// -Inf, and the reason is counted (Rejections).
type Problem struct {
	notes    []string // what the summary says about the opacity tables (OpacityNotes)
	model    *forward.Model
	res      *config.Resolved
	base     forward.State
	free     []binding
	fixed    []binding
	gasIndex map[string]int

	depth  []float64 // observed depth per bin (data sets concatenated)
	sigma2 []float64 // sigma^2 per bin
	ds     []int     // data set of each bin
	nDS    int
	// lnVarSum is sum_i ln(2 pi sigma_i^2), used when no error inflation
	// is free.
	lnVarSum float64
	inflate  bool // some error_inflation_ppm parameter is free or fixed

	// clr is the centred-log-ratio prior of the last clrN free
	// parameters (nil for none); clrGas are their gases' indices in
	// State.VMR.
	clr    *priors.CLR
	clrN   int
	clrGas []int

	cover *report.Coverage // what the opacity tables cover

	counts [numReasons]atomic.Int64
	evals  atomic.Int64

	initOnce sync.Once
	initMu   sync.Mutex
	initEval *PosteriorEvaluator
}

// binding is a parameter bound to the model: its quantity, its index (gas
// in State.VMR or data set) and its prior.
type binding struct {
	q     config.Quantity
	index int
	prior priors.Prior
	value float64 // for fixed parameters
}

// Rejection reasons.
const (
	ReasonPrior       = iota // outside the prior's support
	ReasonMixingRatio        // trace gases sum above 1
	ReasonUnbound            // atmosphere unbound
	ReasonCloudBelow         // cloud top below the bottom of the model
	ReasonTemperature        // temperature profile unusable
	ReasonInvalid            // other invalid state (e.g. a non-finite value)
	numReasons
)

var reasonNames = [numReasons]string{
	"outside the prior",
	"trace-gas mixing ratios sum above 1",
	"atmosphere unbound (1/r reaches 0)",
	"cloud top below the bottom of the model atmosphere",
	"temperature profile not positive and finite",
	"other invalid physical state",
}

// OpacityNotes returns what a run's summary should say about the opacity
// tables of fc as model m uses them: k-tables merged from finer bins (a
// few ppm of extra error, measured in docs/opacity-accuracy.md), k-tables
// whose fine grid was coarser than the Doppler rule, and point
// cross-section tables (sampled at the model grid: noisy against a
// line-by-line spectrum unless the grid resolves the lines).
func OpacityNotes(fc forward.Config, m *forward.Model) []string {
	var out []string
	if merged := m.MergedK(); len(merged) > 0 {
		out = append(out, fmt.Sprintf("the k-tables of %s were merged from finer bins into the observation's bins (Leconte 2021): a few ppm of extra error, see docs/opacity-accuracy.md", strings.Join(merged, ", ")))
	}
	for _, t := range fc.KTables {
		for _, w := range strings.Split(t.Meta[lbl.MetaWarnings], "\n") {
			if strings.Contains(w, "coarser than a third of the Doppler") {
				out = append(out, fmt.Sprintf("k-table %s: %s", t.Gas, w))
			}
		}
	}
	if len(fc.XSec) > 0 {
		out = append(out, "point cross-section tables sample the lines at the model grid: unless the grid resolves the lines (resolving power of about 1e6), binned depths are noisy by tens to hundreds of ppm; use k-tables for fits")
	}
	return out
}

// Extra values stored with every sample, in this order.
var extraNames = []string{"log_likelihood", "mean_molecular_weight", "balance_vmr", "chi_square_fitted"}

// NewProblem prepares the posterior of r with the opacity tables of set
// (as loaded by r.Config.LoadOpacity). It checks that every bin lies
// within the model grid and that every free gas has an opacity source;
// errors name the file and line or the key.
func NewProblem(r *config.Resolved, set *opacity.Set) (*Problem, error) {
	if set == nil {
		set = &opacity.Set{XSec: map[string]*opacity.XSecTable{}}
	}
	mc := &r.Config.ModelConfig
	var bins forward.Bins
	for _, d := range r.Datasets {
		bins.Lo = append(bins.Lo, d.Lo...)
		bins.Hi = append(bins.Hi, d.Hi...)
	}
	fc, err := mc.ForwardConfig(set, &bins)
	if err != nil {
		return nil, err
	}
	// The data sets checked against the model grid, which moves edges equal
	// to the grid's ends up to rounding onto them; fc.Bins follows.
	bins.Lo, bins.Hi = bins.Lo[:0], bins.Hi[:0]
	for _, d := range r.Datasets {
		if len(fc.Wavelength) > 0 {
			if err := d.Cover(fc.Wavelength, fc.MinBinPoints); err != nil {
				return nil, err
			}
		}
		bins.Lo = append(bins.Lo, d.Lo...)
		bins.Hi = append(bins.Hi, d.Hi...)
	}
	if err := checkOpacity(r, fc); err != nil {
		return nil, err
	}
	m, err := forward.NewModel(fc)
	if err != nil {
		return nil, err
	}
	notes := OpacityNotes(fc, m)
	base, err := mc.State(m)
	if err != nil {
		return nil, err
	}
	p := &Problem{model: m, res: r, base: base, gasIndex: map[string]int{}, nDS: len(r.Datasets), notes: notes,
		cover: tableCoverage(fc, r.Datasets, m.LevelPressures())}
	for i, g := range m.Gases() {
		p.gasIndex[g] = i
	}
	for _, d := range r.Datasets {
		for i := range d.Lo {
			p.depth = append(p.depth, d.Depth[i])
			p.sigma2 = append(p.sigma2, d.Sigma[i]*d.Sigma[i])
			p.lnVarSum += math.Log(2 * math.Pi * d.Sigma[i] * d.Sigma[i])
		}
	}
	for k, d := range r.Datasets {
		for range d.Lo {
			p.ds = append(p.ds, k)
		}
	}
	bind := func(par config.Param) binding {
		b := binding{q: par.Sets, index: par.Dataset, prior: par.Prior}
		if par.Sets == config.QLog10VMR {
			b.index = p.gasIndex[par.Gas]
		}
		if par.Sets == config.QErrorInflationPM {
			p.inflate = true
		}
		if f, ok := par.Prior.(priors.Fixed); ok {
			b.value = f.Value
		}
		return b
	}
	for _, par := range r.Free {
		p.free = append(p.free, bind(par))
		if par.Sets == config.QCLR {
			p.clrGas = append(p.clrGas, p.gasIndex[par.Gas])
		}
	}
	if r.CLR != nil {
		p.clr, p.clrN = r.CLR, r.CLR.Dim()
	}
	for _, par := range r.Fixed {
		p.fixed = append(p.fixed, bind(par))
	}
	return p, nil
}

// checkOpacity rejects a free gas with no opacity source: no cross-section
// table, no CIA pair and no Rayleigh scattering in the model.
func checkOpacity(r *config.Resolved, fc forward.Config) error {
	for _, par := range append(append([]config.Param(nil), r.Free...), r.Fixed...) {
		if par.Sets != config.QLog10VMR {
			continue
		}
		ok := false
		for _, t := range fc.XSec {
			ok = ok || t.Gas == par.Gas
		}
		for _, t := range fc.KTables {
			ok = ok || t.Gas == par.Gas
		}
		for _, t := range fc.CIA {
			ok = ok || t.Pair[0] == par.Gas || t.Pair[1] == par.Gas
		}
		for _, g := range fc.Rayleigh {
			ok = ok || g == par.Gas
		}
		if !ok {
			have := make([]string, 0, len(fc.XSec))
			for _, t := range fc.XSec {
				have = append(have, t.Gas)
			}
			for _, t := range fc.KTables {
				have = append(have, t.Gas)
			}
			if len(have) == 0 {
				have = append(have, "none")
			}
			return &config.KeyError{Key: par.Key + ".gas", Msg: fmt.Sprintf("gas %q has no opacity: no cross-section table (tables loaded for: %s), no CIA pair and no Rayleigh scattering; its abundance cannot be measured",
				par.Gas, strings.Join(have, ", "))}
		}
	}
	return nil
}

// Notes returns what the run's summary should say about the opacity
// tables (OpacityNotes).
func (p *Problem) Notes() []string { return p.notes }

// Dim returns the number of free parameters.
func (p *Problem) Dim() int { return len(p.free) }

// NumExtra returns the number of derived values per sample (ExtraNames).
func (p *Problem) NumExtra() int { return len(extraNames) }

// ParamNames returns the free parameters' names, in vector order.
func (p *Problem) ParamNames() []string {
	n := make([]string, len(p.res.Free))
	for i, par := range p.res.Free {
		n[i] = par.Name
	}
	return n
}

// ExtraNames returns the names of the derived values: the log-likelihood,
// the mean molecular weight (u), the fill gas's volume mixing ratio and the
// chi-square with the (inflated) errors.
func (p *Problem) ExtraNames() []string { return append([]string(nil), extraNames...) }

// Priors returns the free parameters' priors, in vector order. For the
// centred-log-ratio parameters it is the uniform box [XiLow, XiHigh] that
// holds their joint prior (Resolved.CLR), not their marginal.
func (p *Problem) Priors() []priors.Prior {
	out := make([]priors.Prior, len(p.free))
	for i, b := range p.free {
		out[i] = b.prior
	}
	return out
}

// Model returns the prepared forward model (binned onto the data sets'
// bins, concatenated in configuration order).
func (p *Problem) Model() *forward.Model { return p.model }

// Resolved returns the configuration the problem was built from.
func (p *Problem) Resolved() *config.Resolved { return p.res }

// NewEvaluator returns an evaluator for one goroutine (sampler.Target).
func (p *Problem) NewEvaluator() sampler.Evaluator { return p.NewPosteriorEvaluator() }

var _ sampler.Target = (*Problem)(nil)

// Rejection is the number of evaluations rejected for one reason.
type Rejection struct {
	Reason string
	Count  int64
}

// Rejections returns the rejected evaluations so far by reason (reasons
// with a count of 0 left out), for a run's warnings.
func (p *Problem) Rejections() []Rejection {
	var out []Rejection
	for i := range p.counts {
		if c := p.counts[i].Load(); c > 0 {
			out = append(out, Rejection{reasonNames[i], c})
		}
	}
	return out
}

// Evaluations returns the number of posterior evaluations so far.
func (p *Problem) Evaluations() int64 { return p.evals.Load() }

// PosteriorEvaluator evaluates the posterior for one goroutine.
type PosteriorEvaluator struct {
	p     *Problem
	state forward.State
	iso   *forward.Isothermal
	gui   *forward.Guillot
	ws    *forward.Workspace
	spec  []float64 // model depth per bin
	off   []float64 // offset per data set, fraction
	s2    []float64 // inflation variance per data set, fraction^2
	xvmr  []float64 // mixing ratios of the centred-log-ratio prior's gases
	count bool      // count rejections (false for initial draws)
}

// NewPosteriorEvaluator returns an evaluator with its own workspace.
func (p *Problem) NewPosteriorEvaluator() *PosteriorEvaluator {
	e := &PosteriorEvaluator{
		p:     p,
		state: p.base,
		ws:    p.model.NewWorkspace(),
		spec:  make([]float64, p.model.OutputLen()),
		off:   make([]float64, p.nDS),
		s2:    make([]float64, p.nDS),
		count: true,
	}
	if p.clr != nil {
		e.xvmr = make([]float64, p.clrN+1)
	}
	e.state.VMR = append([]float64(nil), p.base.VMR...)
	switch pr := p.base.Profile.(type) {
	case *forward.Isothermal:
		c := *pr
		e.iso, e.state.Profile = &c, &c
	case *forward.Guillot:
		c := *pr
		e.gui, e.state.Profile = &c, &c
	}
	return e
}

func (e *PosteriorEvaluator) reject(reason int, extra []float64) float64 {
	if e.count {
		e.p.counts[reason].Add(1)
	}
	for i := range extra {
		extra[i] = math.NaN()
	}
	return math.Inf(-1)
}

// set applies a parameter's value to the evaluator's state.
func (e *PosteriorEvaluator) set(b *binding, v float64) {
	s := &e.state
	switch b.q {
	case config.QLog10VMR:
		s.VMR[b.index] = math.Pow(10, v)
	case config.QTemperature:
		e.iso.T = v
	case config.QTIrr:
		e.gui.TIrr = v
	case config.QTInt:
		e.gui.TInt = v
	case config.QLog10ThermalOpacity:
		e.gui.KappaIR = math.Pow(10, v)
	case config.QLog10OpacityRatio:
		e.gui.Gamma = math.Pow(10, v)
	case config.QRadiusRjup:
		s.RefRadius = v * forward.JupiterRadius
	case config.QRadiusRearth:
		s.RefRadius = v * forward.EarthRadius
	case config.QMassMjup:
		s.Mass = v * forward.JupiterMass
	case config.QMassMearth:
		s.Mass = v * forward.EarthMass
	case config.QLog10CloudTop:
		s.CloudTop = math.Pow(10, v) * forward.Bar
	case config.QCloudFraction:
		s.CloudFraction = v
	case config.QLog10HazeStrength:
		s.HazeFactor = math.Pow(10, v)
	case config.QHazeIndex:
		s.HazeSlope = v
	case config.QOffsetPPM:
		e.off[b.index] = v * 1e-6
	case config.QErrorInflationPM:
		s := v * 1e-6
		if b.index < 0 {
			for k := range e.s2 {
				e.s2[k] = s * s
			}
		} else {
			e.s2[b.index] = s * s
		}
	}
}

// LogProb returns the log posterior at x (len Dim) and fills extra (len
// NumExtra): log-likelihood, mean molecular weight, fill-gas mixing ratio
// and chi-square. Rejected points give -Inf with NaN extras. It allocates
// nothing and does not retain x or extra.
func (e *PosteriorEvaluator) LogProb(x, extra []float64) float64 {
	p := e.p
	if len(x) != len(p.free) || len(extra) != len(extraNames) {
		panic("retrieve: LogProb: wrong length of x or extra")
	}
	if e.count {
		p.evals.Add(1)
	}
	lp := 0.0
	nIndep := len(p.free) - p.clrN
	for i := range nIndep {
		lp += p.free[i].prior.LogProb(x[i])
	}
	if p.clr != nil {
		lp += p.clr.LogProb(x[nIndep:], e.xvmr)
	}
	if math.IsInf(lp, -1) || math.IsNaN(lp) {
		return e.reject(ReasonPrior, extra)
	}
	ll, chi2, fill, err := e.evaluate(x)
	if err != nil {
		return e.reject(reasonOf(err), extra)
	}
	extra[0], extra[1], extra[2], extra[3] = ll, e.ws.MeanMolecularWeight, fill, chi2
	return lp + ll
}

// evaluate sets the state from x, runs the forward model and returns the
// log-likelihood, chi-square and fill-gas mixing ratio.
func (e *PosteriorEvaluator) evaluate(x []float64) (ll, chi2, fill float64, err error) {
	e.setState(x)
	fill = 1
	for _, v := range e.state.VMR {
		fill -= v
	}
	if err := e.p.model.Transit(e.spec, &e.state, e.ws); err != nil {
		return 0, 0, 0, err
	}
	ll, chi2 = e.p.logLikelihood(e.spec, e.off, e.s2)
	return ll, chi2, fill, nil
}

// setState sets the evaluator's state, offsets and inflations from x.
func (e *PosteriorEvaluator) setState(x []float64) {
	p := e.p
	s := &e.state
	s.CloudTop, s.CloudFraction, s.HazeFactor, s.HazeSlope = p.base.CloudTop, p.base.CloudFraction, p.base.HazeFactor, p.base.HazeSlope
	s.RefRadius, s.Mass = p.base.RefRadius, p.base.Mass
	copy(s.VMR, p.base.VMR)
	for k := range e.off {
		e.off[k], e.s2[k] = 0, 0
	}
	for i := range p.fixed {
		e.set(&p.fixed[i], p.fixed[i].value)
	}
	nIndep := len(p.free) - p.clrN
	for i := range nIndep {
		e.set(&p.free[i], x[i])
	}
	if p.clr != nil {
		// Mixing ratios from the clr coordinates; the fill gas is the last
		// component and comes out as 1 - sum of the others.
		p.clr.VMR(e.xvmr, x[nIndep:])
		for j, gi := range p.clrGas {
			s.VMR[gi] = e.xvmr[j]
		}
	}
}

// logLikelihood returns the Gaussian log-likelihood of the model depths m
// (per bin) with per-data-set offsets off and inflation variances s2, and
// the chi-square.
func (p *Problem) logLikelihood(m, off, s2 []float64) (ll, chi2 float64) {
	if !p.inflate {
		for i, d := range p.depth {
			r := d - m[i] - off[p.ds[i]]
			chi2 += r * r / p.sigma2[i]
		}
		return -0.5 * (chi2 + p.lnVarSum), chi2
	}
	lnv := 0.0
	for i, d := range p.depth {
		r := d - m[i] - off[p.ds[i]]
		v := p.sigma2[i] + s2[p.ds[i]]
		chi2 += r * r / v
		lnv += math.Log(2 * math.Pi * v)
	}
	return -0.5 * (chi2 + lnv), chi2
}

func reasonOf(err error) int {
	if se, ok := err.(*forward.StateError); ok {
		switch se.Kind {
		case forward.ErrMixingRatio:
			return ReasonMixingRatio
		case forward.ErrUnbound:
			return ReasonUnbound
		case forward.ErrCloudBelow:
			return ReasonCloudBelow
		case forward.ErrTemperature:
			return ReasonTemperature
		}
		return ReasonInvalid
	}
	if errors.Is(err, forward.ErrTemperature) {
		return ReasonTemperature
	}
	return ReasonInvalid
}

// Spectrum fills dst (len Model().OutputLen()) with the model depth per bin
// at x, offsets included: what the likelihood compares with the data. It
// returns the forward model's error for a rejected state.
func (e *PosteriorEvaluator) Spectrum(dst, x []float64) error {
	if _, _, _, err := e.evaluate(x); err != nil {
		return err
	}
	for i := range dst {
		dst[i] = e.spec[i] + e.off[e.p.ds[i]]
	}
	return nil
}

// View fills what a report shows at x: depth (len Model().OutputLen())
// with the model per bin without offsets, offset and inflation (len the
// number of data sets) with the data sets' offsets and error inflations
// (fractions of the stellar disc), and temp with the temperatures (K) at
// the pressures p (Pa). It returns the forward model's error for a
// rejected state. A gas named in without (an index in Model().Gases(), or
// -1 for none) is removed.
func (e *PosteriorEvaluator) View(depth, offset, inflation, temp, p []float64, x []float64, without int) error {
	e.setState(x)
	if without >= 0 {
		e.state.VMR[without] = 0
	}
	if err := e.p.model.Transit(e.spec, &e.state, e.ws); err != nil {
		return err
	}
	copy(depth, e.spec)
	copy(offset, e.off)
	for k := range inflation {
		inflation[k] = math.Sqrt(e.s2[k])
	}
	if len(p) > 0 {
		g := forward.Gravitation * e.state.Mass / (e.state.RefRadius * e.state.RefRadius)
		if err := e.state.Profile.TemperatureTo(temp, p, g); err != nil {
			return err
		}
	}
	return nil
}

// DrawPrior fills dst (len Dim) with a draw from the prior at which the
// posterior is finite: each free parameter is drawn from its prior, and a
// draw the forward model rejects (e.g. mixing ratios summing above 1, an
// unbound atmosphere) is redrawn, up to 10000 times. Its signature fits
// sampler.InitPrior. Initial draws are not counted in Rejections.
func (p *Problem) DrawPrior(dst []float64, rng *rand.Rand) error {
	p.initMu.Lock()
	defer p.initMu.Unlock()
	p.initOnce.Do(func() {
		p.initEval = p.NewPosteriorEvaluator()
		p.initEval.count = false
	})
	extra := make([]float64, len(extraNames))
	nIndep := len(p.free) - p.clrN
	for range 10000 {
		for i := range nIndep {
			dst[i] = p.free[i].prior.Rand(rng)
		}
		if p.clr != nil {
			if err := p.clr.Rand(dst[nIndep:], p.initEval.xvmr, rng); err != nil {
				return err
			}
		}
		if lp := p.initEval.LogProb(dst, extra); !math.IsInf(lp, -1) && !math.IsNaN(lp) {
			return nil
		}
	}
	return fmt.Errorf("no prior draw in 10000 tries gives a valid atmosphere: the priors allow almost only invalid states (check the mixing-ratio bounds, temperature, mass and radius priors)")
}
