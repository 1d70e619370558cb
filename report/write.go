package report

import (
	"fmt"
	"math"
	"math/rand/v2"
	"path/filepath"
	"slices"

	"gonum.org/v1/gonum/stat"

	"chord/chains"
)

// The report of a run directory: summary.json and summary.txt, the plots
// (each as PNG and SVG), and report.html on request.

// Names of the report's files in a run directory. Each plot is written as
// NAME.png and NAME.svg.
const (
	SummaryJSON = "summary.json"
	SummaryText = "summary.txt"
	HTMLFile    = "report.html"
)

// PlotNames are the plots of a run's report, without extension.
var PlotNames = []string{"spectrum", "temperature", "gases", "traces", "corner"}

// Files lists every file a report may write in a run directory.
func Files() []string {
	f := []string{SummaryJSON, SummaryText, HTMLFile}
	for _, p := range PlotNames {
		f = append(f, p+".png", p+".svg")
	}
	return f
}

// Dataset is one observed data set of a run.
type Dataset struct {
	Name       string
	Wavelength []float64 // bin centres, µm
	HalfWidth  []float64 // bin half widths, µm
	Depth      []float64 // transit depth, ppm
	Sigma      []float64 // stated 1-sigma errors, ppm
}

// SampleView is what the model of a run says at one parameter vector.
type SampleView struct {
	Depth       []float64 // model depth per bin (data sets concatenated), ppm, without offsets
	Offset      []float64 // depth offset per data set, ppm (0 when not fitted)
	Inflation   []float64 // error inflation per data set, ppm (0 when not fitted)
	Temperature []float64 // K at Model.Pressures()
}

// Model evaluates the model of a run for reports.
type Model interface {
	// Datasets returns the observed data sets, in the order of the bins
	// of SampleView.Depth.
	Datasets() []Dataset
	// Pressures are the pressures (bar) of the temperature profile.
	Pressures() []float64
	// Gases are the trace gases of the model, in the order Without takes.
	Gases() []string
	// Evaluate fills v (its slices sized by the model) at the free-parameter
	// vector x (in the order of the chain's parameter columns); an invalid
	// state is an error.
	Evaluate(v *SampleView, x []float64) error
	// Without fills dst (one value per bin, ppm, without offsets) with the
	// model at x with gas removed.
	Without(dst, x []float64, gas string) error
}

// Fitted says which data sets have a free offset or inflation.
type Fitted struct {
	Offset, Inflation []bool // per data set
}

// Options configures Write.
type Options struct {
	Burn     int  // steps dropped from the start
	BurnAuto bool // choose Burn by AutoBurn instead
	Thin     int  // 0 means 1
	Gases    []GasParam
	// Bounds are the prior boxes for the prior-edge check.
	Bounds []ParamBounds
	// Model, if set, gives the chi-square of the best sample, the
	// goodness-of-fit check, the fit's temperatures for the table-coverage
	// check and the spectrum, temperature and gas plots; nil skips them.
	Model  Model
	Fitted Fitted
	// ErrorsInflated says the fit has error-inflation parameters (the
	// chain's chi2 column then uses the inflated errors).
	ErrorsInflated bool
	// Coverage, if set, is what the opacity tables cover (without the
	// fit's temperatures, which Write adds); the table-coverage check
	// runs on it.
	Coverage *Coverage
	// Atmosphere is the context of the cautions (SummaryOptions.Atmosphere).
	Atmosphere *Atmosphere
	// SpectrumSamples is the number of posterior samples drawn for the
	// bands; 0 means 300.
	SpectrumSamples int
	Title           string
	// Truth gives true parameter values by column name (demo, simulated
	// observations); nil when unknown.
	Truth map[string]float64
	// Fill lets the caller complete the summary (run identity, demo flag,
	// invalid-state counts, stopping reason) before it is written.
	Fill func(*Summary)
	// HTML, when not nil, also writes report.html with these run details.
	HTML *RunDetails
	// Evidence, for a nested-sampling run, is its evidence: the summary
	// and plots are then made from the run's equal-weight samples
	// (EqualWeightSamples with Evidence.Seed), without burn-in or
	// thinning, and there is no trace plot.
	Evidence *Evidence
	// Live are the live points of a nested run that has not finished
	// (chains.Points), resampled with the dead points; nil otherwise.
	Live *chains.Points
	// ConfigFile is the run's configuration, named in the summary's advice
	// (SummaryOptions.ConfigFile).
	ConfigFile string
}

// Write reads the committed parts of the run in dir, and writes the
// summaries, the plots and (with Options.HTML) report.html. When the
// summary files cannot be written it returns the summary with a
// *WriteError, having written nothing.
func Write(dir string, parts []chains.PartInfo, opt Options) (*Summary, error) {
	chainsDir := filepath.Join(dir, chains.DirName)
	var all, c *chains.Chain
	var err error
	burn, thin := opt.Burn, max(opt.Thin, 1)
	if opt.Evidence != nil {
		if burn != 0 || thin != 1 {
			return nil, fmt.Errorf("report: burn-in and thinning apply to ensemble chains; the posterior of nested sampling is its equal-weight samples")
		}
		opt.BurnAuto = false
		if c, err = EqualWeightSamples(chainsDir, parts, opt.Live, opt.Evidence.Seed); err != nil {
			return nil, err
		}
		if len(c.Steps) < MinNestedSamples {
			return nil, fmt.Errorf("%w: the weights of the %d points so far are worth %.1f samples, fewer than %d; resume the run", ErrFewSamples, c.TotalSteps, c.EffectiveSize, MinNestedSamples)
		}
	} else {
		if all, err = chains.Read(chainsDir, parts, 0, 1); err != nil {
			return nil, err
		}
		if opt.BurnAuto {
			burn = AutoBurn(all)
		}
		if c, err = chains.Read(chainsDir, parts, burn, 1); err != nil {
			return nil, err
		}
	}
	s, err := Summarize(c, SummaryOptions{Burn: burn, BurnAuto: opt.BurnAuto, Thin: thin, Gases: opt.Gases, Bounds: opt.Bounds, Atmosphere: opt.Atmosphere,
		Evidence: opt.Evidence, ConfigFile: opt.ConfigFile})
	if err != nil {
		return nil, err
	}
	if opt.Fill != nil {
		opt.Fill(s)
	}
	var figs []func() error
	if opt.Model != nil {
		f, err := modelPlots(dir, c, s, opt)
		if err != nil {
			return nil, err
		}
		figs = append(figs, f...)
	}
	if opt.Coverage != nil {
		s.checkCoverage(opt.Coverage)
	}
	s.sortChecks()
	if err := writeSummaryFiles(dir, s); err != nil {
		return s, &WriteError{Dir: dir, Err: err}
	}
	figs = append(figs, func() error {
		return PlotCorner(filepath.Join(dir, "corner"), c, CornerOptions{Thin: thin, Demo: s.DemoOpacities, Truth: opt.Truth})
	})
	if all != nil {
		figs = append(figs, func() error { return PlotTraces(filepath.Join(dir, "traces"), all, burn, s.DemoOpacities) })
	}
	for _, f := range figs {
		if err := f(); err != nil {
			return nil, err
		}
	}
	if opt.HTML != nil {
		if err := WriteHTML(dir, s, opt.HTML); err != nil {
			return nil, err
		}
	}
	return s, nil
}

// WriteError is the error of Write when the summary was computed but its
// files could not be written (a read-only run directory, a full disk):
// Write returns the summary with it, and nothing of the run's is changed.
type WriteError struct {
	Dir string
	Err error
}

func (e *WriteError) Error() string {
	return fmt.Sprintf("could not write the report files in %s: %v", e.Dir, e.Err)
}

func (e *WriteError) Unwrap() error { return e.Err }

// newView returns a SampleView sized for m.
func newView(m Model) *SampleView {
	n := 0
	ds := m.Datasets()
	for _, d := range ds {
		n += len(d.Wavelength)
	}
	return &SampleView{Depth: make([]float64, n), Offset: make([]float64, len(ds)), Inflation: make([]float64, len(ds)), Temperature: make([]float64, len(m.Pressures()))}
}

// truthVector returns the true parameter vector of c's parameter columns,
// or nil when some parameter has no true value.
func truthVector(c *chains.Chain, truth map[string]float64) []float64 {
	if truth == nil {
		return nil
	}
	var x []float64
	for _, col := range c.Columns {
		if col.Role != chains.RoleParameter {
			continue
		}
		v, ok := truth[col.Name]
		if !ok || math.IsNaN(v) {
			return nil
		}
		x = append(x, v)
	}
	return x
}

// LegacyColumns are the derived chain columns renamed since chord first
// wrote them (new name -> old name); runs started before keep the old
// names.
var LegacyColumns = map[string]string{"balance_vmr": "fill_vmr", "chi_square_fitted": "chi2"}

// modelPlots records the best sample's chi-square in s and returns the
// drawing of the spectrum, temperature and gas plots.
func modelPlots(dir string, c *chains.Chain, s *Summary, opt Options) ([]func() error, error) {
	m := opt.Model
	ds := m.Datasets()
	best := newView(m)
	xBest := c.Sample(nil, (s.Best.Step-c.Steps[0])*c.Walkers+s.Best.Walker)
	if err := m.Evaluate(best, xBest); err != nil {
		return nil, fmt.Errorf("report: model of the best sample: %w", err)
	}
	chi2, n, first := 0.0, 0, 0
	for k, d := range ds {
		for i := range d.Depth {
			r := (d.Depth[i] - best.Depth[first+i] - best.Offset[k]) / d.Sigma[i]
			chi2 += r * r
		}
		first += len(d.Depth)
		n += len(d.Depth)
	}
	s.SetChiSquare(chi2, n)
	fit := c.Column("chi_square_fitted")
	if fit == nil {
		fit = c.Column(LegacyColumns["chi_square_fitted"]) // a run started before the rename
	}
	if fit != nil {
		chi2 = fit[(s.Best.Step-c.Steps[0])*c.Walkers+s.Best.Walker] // with the errors as fitted
	}
	s.setGoodness(chi2, n, opt.ErrorsInflated)

	nSamples := opt.SpectrumSamples
	if nSamples == 0 {
		nSamples = 300
	}
	rng := rand.New(rand.NewPCG(1, 2)) // fixed: a report is reproducible
	total := len(c.Steps) * c.Walkers
	var models, temps [][]float64
	var tLo, tHi []float64 // each sample's coldest and hottest layer, for the coverage check
	offsets := make([][]float64, len(ds))
	infl := make([][]float64, len(ds))
	x := xBest
	for range min(nSamples, total) {
		x = c.Sample(x, rng.IntN(total))
		v := newView(m)
		if err := m.Evaluate(v, x); err != nil {
			continue // an invalid state has no spectrum; it is not in the posterior either
		}
		models = append(models, v.Depth)
		temps = append(temps, v.Temperature)
		if len(v.Temperature) > 0 {
			if lo, hi := slices.Min(v.Temperature), slices.Max(v.Temperature); finiteRange(lo, hi) {
				tLo, tHi = append(tLo, lo), append(tHi, hi)
			}
		}
		for k := range ds {
			offsets[k] = append(offsets[k], v.Offset[k])
			infl[k] = append(infl[k], v.Inflation[k])
		}
	}
	if len(models) == 0 {
		return nil, fmt.Errorf("report: no posterior sample gives a valid model")
	}
	if opt.Coverage != nil {
		opt.Coverage.setTemperatures(tLo, tHi)
	}
	medianOf := func(v []float64) float64 {
		v = slices.Clone(v)
		slices.Sort(v)
		return stat.Quantile(0.5, stat.Empirical, v, nil)
	}
	spec := &SpectrumPlot{Title: opt.Title, Demo: s.DemoOpacities, Models: models}
	var truth *SampleView
	if xt := truthVector(c, opt.Truth); xt != nil {
		truth = newView(m)
		if err := m.Evaluate(truth, xt); err != nil {
			truth = nil // a truth outside the model (it cannot be drawn); the corner still marks it
		} else {
			spec.Truth = truth.Depth
		}
	}
	grey := &PlotDataset{Name: "data"}
	for k, d := range ds {
		pd := PlotDataset{Name: d.Name, Wavelength: d.Wavelength, HalfWidth: d.HalfWidth}
		pd.Fitted = k < len(opt.Fitted.Offset) && opt.Fitted.Offset[k]
		pd.Inflated = k < len(opt.Fitted.Inflation) && opt.Fitted.Inflation[k]
		if pd.Fitted {
			pd.Offset = medianOf(offsets[k])
		}
		if pd.Inflated {
			pd.Inflation = medianOf(infl[k])
		}
		for i := range d.Depth {
			pd.Depth = append(pd.Depth, d.Depth[i]-pd.Offset)
			pd.Error = append(pd.Error, math.Hypot(d.Sigma[i], pd.Inflation))
		}
		spec.Datasets = append(spec.Datasets, pd)
		grey.Wavelength = append(grey.Wavelength, pd.Wavelength...)
		grey.HalfWidth = append(grey.HalfWidth, pd.HalfWidth...)
		grey.Depth = append(grey.Depth, pd.Depth...)
		grey.Error = append(grey.Error, pd.Error...)
	}
	figs := []func() error{func() error { return PlotSpectrum(filepath.Join(dir, "spectrum"), spec) }}
	if pr := m.Pressures(); len(pr) >= 2 {
		prof := &ProfilePlot{Title: opt.Title, Demo: s.DemoOpacities, Pressure: pr, Samples: temps}
		if truth != nil {
			prof.Truth = truth.Temperature
		}
		figs = append(figs, func() error { return PlotProfile(filepath.Join(dir, "temperature"), prof) })
	}
	if gases := m.Gases(); len(gases) > 0 {
		g := &GasesPlot{Title: "Best fit with each gas removed", Demo: s.DemoOpacities, FullLabel: "best fit", Data: grey}
		for _, d := range ds {
			for i := range d.Wavelength {
				g.Wavelength = append(g.Wavelength, d.Wavelength[i])
				g.Lo = append(g.Lo, d.Wavelength[i]-d.HalfWidth[i])
				g.Hi = append(g.Hi, d.Wavelength[i]+d.HalfWidth[i])
			}
		}
		g.Full = best.Depth
		for _, gas := range gases {
			dst := make([]float64, len(best.Depth))
			if err := m.Without(dst, xBest, gas); err != nil {
				return nil, fmt.Errorf("report: best fit without %s: %w", gas, err)
			}
			g.Without = append(g.Without, GasCurve{Gas: gas, Depth: dst})
		}
		sortBins(g)
		figs = append(figs, func() error { return PlotGases(filepath.Join(dir, "gases"), g) })
	}
	return figs, nil
}

// sortBins orders the bins of g by wavelength (data sets may interleave).
func sortBins(g *GasesPlot) {
	n := len(g.Wavelength)
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	slices.SortStableFunc(idx, func(a, b int) int {
		switch {
		case g.Wavelength[a] < g.Wavelength[b]:
			return -1
		case g.Wavelength[a] > g.Wavelength[b]:
			return 1
		}
		return 0
	})
	perm := func(v []float64) []float64 {
		out := make([]float64, n)
		for i, j := range idx {
			out[i] = v[j]
		}
		return out
	}
	g.Wavelength, g.Lo, g.Hi, g.Full = perm(g.Wavelength), perm(g.Lo), perm(g.Hi), perm(g.Full)
	for k := range g.Without {
		g.Without[k].Depth = perm(g.Without[k].Depth)
	}
}
