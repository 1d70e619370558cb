package config

import (
	"bytes"
	"crypto/rand"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"regexp"
	"strings"
	"time"

	"github.com/BurntSushi/toml"

	"chord/forward"
	"chord/internal/version"
	"chord/obs"
	"chord/priors"
)

// Config is a retrieval configuration file: the model sections shared
// with `chord spectrum` ([star], [planet], [atmosphere], [clouds],
// [opacity], [spectrum]; one schema, ModelConfig) and
//
//	[[observations]]  the observed spectra, one table each
//	[[parameters]]    the free parameters, each with the quantity it sets and its prior
//	[sampler]         method, seed, stopping rule, workers; walkers and move
//	                  (ensemble) or live points, batch and evidence tolerance
//	                  (nested sampling)
//
// The model sections give the values of everything that is not a free
// parameter. In a retrieval the bins come from the observations, so
// [spectrum] gives only the model grid (wavelength range, resolving power,
// minimum points per bin).
type Config struct {
	ModelConfig
	Observations []ObservationConfig `toml:"observations"`
	Parameters   []ParameterConfig   `toml:"parameters"`
	Composition  CompositionConfig   `toml:"composition"`
	Sampler      SamplerConfig       `toml:"sampler"`
}

// CompositionConfig is [composition]: the joint prior of the mixing
// ratios. The default, "independent", gives each log10_vmr parameter its
// own prior, the balance gas making up the rest (trace gases summing above 1
// are rejected). "clr" is the centred-log-ratio prior of Benneke & Seager
// (2012, ApJ 753, 100) for atmospheres whose dominant gas is unknown: the
// gases listed and the balance gas (atmosphere.balance_gas, one component) are
// treated alike, the free parameters are the centred-log-ratio coordinates
// xi_g = ln(X_g / geometric mean of X) of the listed gases (named clr_<gas>),
// and the prior is uniform in them wherever every mixing ratio, the balance
// gas's included, is at least min_vmr (see priors.CLR).
type CompositionConfig struct {
	Prior  string   `toml:"prior"`   // "independent" (default) or "clr"
	Gases  []string `toml:"gases"`   // clr: the gases besides the balance gas, at least one
	MinVMR *float64 `toml:"min_vmr"` // clr: lowest mixing ratio of every gas; default 1e-12
}

// ObservationConfig is one [[observations]] table: a file and how to
// read it (obs.ReadOptions; docs/observations.md).
type ObservationConfig struct {
	File string `toml:"file"`           // observation table, relative to the configuration file; required
	Name string `toml:"name,omitempty"` // label; default the file's base name without extension
	// Format is "table", "ipac" or "ecsv"; default recognised by content.
	Format string `toml:"format,omitempty"`
	// Columns maps quantities (wavelength, width, edge_low, edge_high,
	// depth, error, error_plus, error_minus, instrument) to the file's
	// columns: names (strings) or, for a file without a header, 1-based
	// positions (integers).
	Columns map[string]any `toml:"columns,omitempty"`
	// WavelengthUnit (um, nm, angstrom) and DepthUnit (fraction, ppm,
	// percent, rp_rs) are the units of the columns whose unit the file
	// does not state.
	WavelengthUnit string `toml:"wavelength_unit,omitempty"`
	DepthUnit      string `toml:"depth_unit,omitempty"`
	// Width is "full" (default) or "half": what the width column holds.
	Width string `toml:"width,omitempty"`
	// EdgeTolerance is the largest difference of neighbouring bins' shared
	// edge, as a fraction of the narrower width, taken as rounding;
	// default obs.DefaultEdgeTolerance.
	EdgeTolerance *float64 `toml:"edge_tolerance,omitempty"`
}

// ReadOptions returns how to read the observation file; key is the
// table's key ("observations[2]") for errors.
func (o *ObservationConfig) ReadOptions(key string) (obs.ReadOptions, error) {
	opt := obs.ReadOptions{Name: o.Name, Format: o.Format, WavelengthUnit: o.WavelengthUnit, DepthUnit: o.DepthUnit, Width: o.Width}
	if o.EdgeTolerance != nil {
		opt.EdgeTolerance = *o.EdgeTolerance
		if opt.EdgeTolerance == 0 {
			return opt, keyErr(key+".edge_tolerance", "0 would refuse every rounded edge; give a small fraction such as 1e-4 (the default is %g)", obs.DefaultEdgeTolerance)
		}
	}
	if len(o.Columns) > 0 {
		opt.Columns = map[string]obs.Column{}
	}
	for q, v := range o.Columns {
		switch c := v.(type) {
		case string:
			opt.Columns[q] = obs.Column{Name: c}
		case int64:
			if c < 1 || c > 1000 {
				return opt, keyErr(key+".columns."+q, "position %d: columns are counted from 1", c)
			}
			opt.Columns[q] = obs.Column{Position: int(c)}
		default:
			return opt, keyErr(key+".columns."+q, "%v: give the column's name (a string) or its position (an integer from 1)", v)
		}
	}
	if err := opt.Check(); err != nil {
		var oe *obs.OptionError
		if errors.As(err, &oe) {
			return opt, keyErr(key+"."+oe.Key, "%s", oe.Msg)
		}
		return opt, keyWrap(key, err)
	}
	return opt, nil
}

// ParameterConfig is one [[parameters]] table: a free (or fixed) parameter.
type ParameterConfig struct {
	// Name labels the parameter in chains and reports; default the
	// quantity, with the gas or dataset appended (e.g. "log10_vmr_H2O").
	Name string `toml:"name"`
	// Sets is the quantity the parameter sets (see Quantities).
	Sets string `toml:"sets"`
	// Gas names the gas of a log10_vmr parameter; it joins the
	// atmosphere's trace gases if [atmosphere.gases] does not list it.
	Gas string `toml:"gas,omitempty"`
	// Dataset names the observations of an offset_ppm or
	// error_inflation_ppm parameter; it may be left out when there is one
	// data set (and, for error inflation, to inflate every data set).
	Dataset string `toml:"dataset,omitempty"`
	// Prior is uniform (low, high), log-uniform (low, high > 0), normal
	// (mean, sigma), truncated-normal (mean, sigma, and low and/or high) or
	// fixed (value: held at value, not sampled). Required.
	Prior string   `toml:"prior"`
	Low   *float64 `toml:"low"`
	High  *float64 `toml:"high"`
	Mean  *float64 `toml:"mean"`
	Sigma *float64 `toml:"sigma"`
	Value *float64 `toml:"value"`
}

// SamplerConfig is [sampler].
type SamplerConfig struct {
	// Method is "ensemble" (default: the affine-invariant ensemble
	// sampler, for posteriors) or "nested" (nested sampling, which also
	// gives the evidence; docs/evidence.md).
	Method string `toml:"method,omitempty"`
	// Walkers is the ensemble size, even and at least 2(dim+1); default
	// max(32, 4 dim) rounded up to even. Ensemble only.
	Walkers *int `toml:"walkers"`
	// LivePoints is the number of live points of nested sampling, at
	// least 2(dim+1); default DefaultLivePoints. Nested only.
	LivePoints *int `toml:"live_points"`
	// Batch is the number of likelihood evaluations nested sampling
	// draws and evaluates together on the workers; the run depends on it
	// (never on workers), so it is fixed here. Default DefaultBatch, at
	// most live_points. Nested only.
	Batch *int `toml:"batch"`
	// EvidenceTolerance ends a nested run once the live points could
	// raise ln Z by less than this (nats); default
	// DefaultEvidenceTolerance. Nested only.
	EvidenceTolerance *float64 `toml:"evidence_tolerance"`
	// Seed of the random generator; default a fresh random seed, recorded
	// in the resolved configuration.
	Seed *int64 `toml:"seed"`
	// Stopping rule, at most one; default until_converged = true. A
	// nested run stops at its evidence tolerance (until_converged) or at
	// the budget, whichever comes first; steps apply to the ensemble only.
	Steps          *int   `toml:"steps"`            // total ensemble steps
	Budget         string `toml:"budget,omitempty"` // wall-clock sampling time, e.g. "8h", "90m"
	UntilConverged *bool  `toml:"until_converged"`  // sampler.Convergence with its defaults
	// Workers is the number of goroutines evaluating the posterior; 0
	// (default) means one per core.
	Workers *int `toml:"workers"`
	// Move is the proposal: "stretch" (default; Goodman & Weare 2010,
	// a = 2), "walk" (the same paper's walk move) or
	// "differential-evolution" (ter Braak 2006); "de" is the old spelling.
	// Ensemble only.
	Move string `toml:"move,omitempty"`
}

// Quantity is what a parameter sets.
type Quantity string

// The quantities a parameter can set. The unit or transform is part of
// the name.
const (
	QLog10VMR            Quantity = "log10_vmr"                   // log10 volume mixing ratio of Gas
	QTemperature         Quantity = "temperature_k"               // isothermal temperature, K
	QTIrr                Quantity = "t_irr_k"                     // Guillot irradiation temperature, K
	QTInt                Quantity = "t_int_k"                     // Guillot internal temperature, K
	QLog10ThermalOpacity Quantity = "log10_thermal_opacity_m2_kg" // log10 Guillot thermal (infrared) mean opacity, m^2/kg
	QLog10OpacityRatio   Quantity = "log10_opacity_ratio"         // log10 Guillot visible-to-thermal opacity ratio
	QRadiusRjup          Quantity = "radius_rjup"                 // radius at the reference pressure, Jupiter radii
	QRadiusRearth        Quantity = "radius_rearth"               // the same in Earth radii
	QMassMjup            Quantity = "mass_mjup"                   // planet mass, Jupiter masses
	QMassMearth          Quantity = "mass_mearth"                 // planet mass, Earth masses
	QLog10CloudTop       Quantity = "log10_cloud_top_bar"         // log10 cloud-top pressure, bar
	QCloudFraction       Quantity = "cloud_fraction"              // patchy-cloud fraction
	QLog10HazeStrength   Quantity = "log10_haze_strength"         // log10 haze strength A
	QHazeIndex           Quantity = "haze_index"                  // haze power-law index
	QOffsetPPM           Quantity = "offset_ppm"                  // depth offset of Dataset, ppm (model + offset)
	QErrorInflationPM    Quantity = "error_inflation_ppm"         // s of sigma_eff^2 = sigma^2 + s^2, ppm
	// QCLR is a centred-log-ratio coordinate of Gas; these parameters come
	// from [composition] prior = "clr", not from [[parameters]].
	QCLR Quantity = "clr"
)

// Quantities lists every quantity, in the order of docs/configuration.md.
var Quantities = []Quantity{QLog10VMR, QTemperature, QTIrr, QTInt, QLog10ThermalOpacity, QLog10OpacityRatio,
	QRadiusRjup, QRadiusRearth, QMassMjup, QMassMearth, QLog10CloudTop, QCloudFraction,
	QLog10HazeStrength, QHazeIndex, QOffsetPPM, QErrorInflationPM}

func quantityNames() string {
	s := make([]string, len(Quantities))
	for i, q := range Quantities {
		s[i] = string(q)
	}
	return strings.Join(s, ", ")
}

// Param is a resolved parameter.
type Param struct {
	Name    string
	Sets    Quantity
	Gas     string // log10_vmr and clr
	Dataset int    // offset_ppm, error_inflation_ppm: index in Resolved.Datasets; -1 means all
	Prior   priors.Prior
	Key     string // "parameters[i]" for messages
}

// Resolved is a validated configuration with every default filled in.
// Config is the same configuration written out in full (defaults explicit,
// paths absolute), to be saved in a run directory as run.toml; decoding it
// again gives the same Resolved.
type Resolved struct {
	Config   Config
	Datasets []*obs.Dataset
	Free     []Param // sampled, in parameter-vector order
	Fixed    []Param // held at their Fixed value
	// CLR is the joint prior of the clr parameters, which are the last
	// len(CLR.Gases)-1 free parameters; nil without [composition] prior =
	// "clr".
	CLR *priors.CLR
	// Method is MethodEnsemble or MethodNested.
	Method  string
	Walkers int    // ensemble: walkers; 0 for nested sampling
	Move    string // ensemble: the move; "" for nested sampling
	// Nested sampling: live points, batch and evidence tolerance (nats);
	// zero for the ensemble.
	LivePoints, Batch int
	EvidenceTol       float64
	Seed              uint64
	Stop              StopRule
	Workers           int
	// Notes are remarks for the run's log (sorted observations, averaged
	// asymmetric errors, a generated seed).
	Notes []string
	// Warnings name implausible values of the system, each with its key
	// (ModelConfig.SystemWarnings), and the old spellings of renamed keys.
	Warnings []string
	// given records which keys set by parameters the configuration gave
	// (WriteTOML).
	given map[string]bool
}

// Load reads, validates and resolves a retrieval configuration,
// reading its observation files. It decodes with Decode, the path
// the fuzz test exercises.
func Load(path string) (*Resolved, error) {
	text, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("configuration: %w", err)
	}
	c, err := Decode(string(text), path, filepath.Dir(path))
	if err != nil {
		return nil, err
	}
	r, err := c.Resolve()
	if err != nil {
		return nil, InFile(path, err)
	}
	return r, nil
}

// Decode decodes a retrieval configuration from TOML text without
// resolving it; unknown keys are errors. baseDir is where relative paths
// start.
func Decode(text, name, baseDir string) (*Config, error) {
	c := &Config{}
	if _, err := decodeStrict(text, name, c); err != nil {
		return nil, err
	}
	c.BaseDir = baseDir
	return c, nil
}

var nameRE = regexp.MustCompile(`^[A-Za-z][A-Za-z0-9_]*$`)

// reservedNames are chain columns that parameters may not take.
var reservedNames = map[string]bool{"step": true, "walker": true, "log_posterior": true, "log_likelihood": true, "point": true, "final": true, "log_weight": true}

// Abs returns the path p (relative to the configuration file) made
// absolute, so a resolved configuration works from any directory.
func (c *ModelConfig) Abs(p string) string {
	if !filepath.IsAbs(p) {
		p = filepath.Join(c.BaseDir, p)
	}
	if a, err := filepath.Abs(p); err == nil {
		return a
	}
	return p
}

// Resolve validates c, reads the observation files and fills in every
// default. Errors name the key.
func (c *Config) Resolve() (*Resolved, error) {
	s := &c.Spectrum
	if s.BinEdgesUm != nil || s.BinCentresUm != nil || s.BinWidthsUm != nil || s.BinResolvingPower != nil {
		return nil, keyErr("spectrum", "bins (bin_edges_um, bin_centres_um, bin_widths_um, bin_resolving_power) are not used by a retrieval: the bins are those of the observations")
	}
	r := &Resolved{}
	full := *c
	full.ModelConfig = c.ModelConfig.withDefaults()
	full.Atmosphere.Gases = map[string]float64{}
	for g, v := range c.Atmosphere.Gases {
		full.Atmosphere.Gases[g] = v
	}
	if c.Opacity.Dir != "" {
		full.Opacity.Dir = c.Abs(c.Opacity.Dir)
	}

	// Observations.
	if len(c.Observations) == 0 {
		return nil, missingKey("observations", "at least one [[observations]] table with a file")
	}
	full.Observations = make([]ObservationConfig, len(c.Observations))
	names := map[string]int{}
	for i, o := range c.Observations {
		key := fmt.Sprintf("observations[%d]", i+1)
		if o.File == "" {
			return nil, missingKey(key+".file", "")
		}
		if o.Name != "" && !nameRE.MatchString(o.Name) {
			return nil, keyErr(key+".name", "%q: use letters, digits and '_', starting with a letter", o.Name)
		}
		opt, err := o.ReadOptions(key)
		if err != nil {
			return nil, err
		}
		ds, err := obs.Read(c.Abs(o.File), opt)
		if err != nil {
			return nil, keyWrap(key+".file", err)
		}
		for _, d := range ds {
			if j, dup := names[d.Name]; dup {
				return nil, keyErr(key+".name", "data set name %q is also that of observations[%d]; give each a distinct name", d.Name, j+1)
			}
			names[d.Name] = i
			r.Datasets = append(r.Datasets, d)
			r.Notes = append(r.Notes, d.Notes...)
		}
		fo := o
		fo.File = c.Abs(o.File)
		if fo.Name == "" {
			fo.Name = obs.DefaultName(fo.File)
		}
		tol := obs.DefaultEdgeTolerance
		if o.EdgeTolerance != nil {
			tol = *o.EdgeTolerance
		}
		fo.EdgeTolerance = &tol
		full.Observations[i] = fo
	}
	for i := range r.Datasets {
		for j := range i {
			if err := overlapping(r.Datasets[j], r.Datasets[i]); err != nil {
				return nil, keyWrap(fmt.Sprintf("observations[%d].file", i+1), err)
			}
		}
	}

	// Parameters.
	if err := r.resolveParams(c, &full); err != nil {
		return nil, err
	}
	if err := r.resolveComposition(c, &full); err != nil {
		return nil, err
	}
	if len(r.Free) == 0 {
		return nil, keyErr("parameters", "no free parameter (every [[parameters]] table is fixed, or there are none)")
	}

	// The model sections with the parameters' gases added, and values the
	// free parameters set filled in from their priors' medians where the
	// model sections leave them out; checked by the shared validator.
	r.givenKeys(c)
	r.fillFromPriors(&full.ModelConfig)
	full.ModelConfig.free = r.freeSpans()
	if err := full.ModelConfig.Validate(); err != nil {
		return nil, err
	}
	r.Warnings = append(append([]string(nil), c.Renamed...), full.ModelConfig.SystemWarnings()...)
	full.ModelConfig.Renamed = nil
	full.ModelConfig.free = nil
	if err := r.checkApplies(&full); err != nil {
		return nil, err
	}

	// Sampler.
	if err := r.resolveSampler(c.Sampler, &full.Sampler); err != nil {
		return nil, err
	}
	r.Config = full
	return r, nil
}

// resolveComposition adds the centred-log-ratio parameters of
// [composition] prior = "clr" at the end of the free parameters.
func (r *Resolved) resolveComposition(c *Config, full *Config) error {
	cc := c.Composition
	switch cc.Prior {
	case "", "independent":
		if cc.Gases != nil || cc.MinVMR != nil {
			return keyErr("composition.prior", "composition.gases and composition.min_vmr apply only to prior = \"clr\"")
		}
		full.Composition = CompositionConfig{Prior: "independent"}
		return nil
	case "clr":
	default:
		return keyErr("composition.prior", "unknown composition prior %q (independent, clr)", cc.Prior)
	}
	if len(cc.Gases) == 0 {
		return missingKey("composition.gases", "the gases of the centred-log-ratio prior besides the balance gas")
	}
	minVMR := 1e-12
	if cc.MinVMR != nil {
		minVMR = *cc.MinVMR
	}
	names := append(append([]string(nil), cc.Gases...), c.fillName())
	for _, g := range cc.Gases {
		if _, err := forward.MolecularMass(g); err != nil {
			return keyErr("composition.gases", "unknown gas %q (known: %s)", g, strings.Join(forward.KnownGases(), ", "))
		}
		for _, f := range c.fillSpecies() {
			if f == g {
				return keyErr("composition.gases", "%q is the balance gas (%s), the last component of the prior; list the others", g, c.fillName())
			}
		}
		for _, p := range append(append([]Param(nil), r.Free...), r.Fixed...) {
			if p.Sets == QLog10VMR && p.Gas == g {
				return keyErr(p.Key+".gas", "the mixing ratio of %q is set by the centred-log-ratio prior (composition.gases)", g)
			}
		}
		if _, ok := full.Atmosphere.Gases[g]; !ok {
			full.Atmosphere.Gases[g] = 0 // set by the prior's parameters
		}
	}
	clr, err := priors.NewCLR(names, minVMR)
	if err != nil {
		return keyWrap("composition", err)
	}
	r.CLR = clr
	box := priors.Uniform{Low: clr.XiLow, High: clr.XiHigh}
	for _, g := range cc.Gases {
		name := "clr_" + g
		for _, p := range append(append([]Param(nil), r.Free...), r.Fixed...) {
			if p.Name == name {
				return keyErr(p.Key+".name", "%q is the name of a centred-log-ratio parameter of composition.gases", name)
			}
		}
		r.Free = append(r.Free, Param{Name: name, Sets: QCLR, Gas: g, Dataset: -1, Prior: box, Key: "composition.gases"})
	}
	mv := minVMR
	full.Composition = CompositionConfig{Prior: "clr", Gases: append([]string(nil), cc.Gases...), MinVMR: &mv}
	return nil
}

// overlapping rejects two data sets with a bin in common: the same
// wavelengths measured twice are one data set's business (or a mistake).
func overlapping(a, b *obs.Dataset) error {
	for i := range b.Lo {
		for j := range a.Lo {
			if a.Lo[j] == b.Lo[i] && a.Hi[j] == b.Hi[i] {
				return fmt.Errorf("%s: duplicated bin %.6g-%.6g um, also in %s", b.Where(i), b.Lo[i]/forward.Micron, b.Hi[i]/forward.Micron, a.Where(j))
			}
		}
	}
	return nil
}

func (r *Resolved) datasetIndex(name string) int {
	for i, d := range r.Datasets {
		if d.Name == name {
			return i
		}
	}
	return -2
}

func (r *Resolved) resolveParams(c *Config, full *Config) error {
	full.Parameters = make([]ParameterConfig, len(c.Parameters))
	byName := map[string]string{}
	bySets := map[string]string{}
	for i, pc := range c.Parameters {
		key := fmt.Sprintf("parameters[%d]", i+1)
		p, target, err := r.bindParam(key, pc, c, full)
		if err != nil {
			return err
		}
		q := p.Sets
		p.Name = pc.Name
		if p.Name == "" {
			p.Name = string(q)
			if target != "" {
				p.Name += "_" + target
			}
		}
		if !nameRE.MatchString(p.Name) || reservedNames[p.Name] {
			return keyErr(key+".name", "%q: use letters, digits and '_', starting with a letter, and not a fixed column of the chain store (step, walker, log_posterior, log_likelihood, point, final, log_weight)", p.Name)
		}
		if other, dup := byName[p.Name]; dup {
			return keyErr(key+".name", "parameter %q is defined twice (also %s)", p.Name, other)
		}
		byName[p.Name] = key
		setsKey := string(q) + "/" + target
		if q == QErrorInflationPM && p.Dataset < 0 {
			setsKey = string(q) + "/"
		}
		if other, dup := bySets[setsKey]; dup {
			return keyErr(key+".sets", "%s%s is already set by %s", q, forTarget(target), other)
		}
		bySets[setsKey] = key
		pr, err := buildPrior(key, p.Name, pc)
		if err != nil {
			return err
		}
		p.Prior = pr
		if err := checkPriorRange(key, p.Name, q, pr); err != nil {
			return err
		}
		if _, fixed := pr.(priors.Fixed); fixed {
			r.Fixed = append(r.Fixed, p)
		} else {
			r.Free = append(r.Free, p)
		}
		pc.Name = p.Name
		pc.Dataset = ""
		if p.Dataset >= 0 {
			pc.Dataset = r.Datasets[p.Dataset].Name
		}
		full.Parameters[i] = pc
	}
	// Error inflation of every data set and of one data set together
	// would inflate that one twice.
	if _, all := bySets[string(QErrorInflationPM)+"/"]; all {
		for k, v := range bySets {
			if strings.HasPrefix(k, string(QErrorInflationPM)+"/") && k != string(QErrorInflationPM)+"/" {
				return keyErr(v+".dataset", "an %s parameter for every data set is given too (%s)", QErrorInflationPM, bySets[string(QErrorInflationPM)+"/"])
			}
		}
	}
	return nil
}

// bindParam checks what parameters[i] (key) sets: its quantity and the gas
// or data set it applies to (target, "" for none); a gas not in the
// atmosphere joins full's trace gases.
func (r *Resolved) bindParam(key string, pc ParameterConfig, c *Config, full *Config) (Param, string, error) {
	q := Quantity(pc.Sets)
	if pc.Sets == "" {
		return Param{}, "", missingKey(key+".sets", "the quantity the parameter sets: "+quantityNames())
	}
	known := false
	for _, k := range Quantities {
		known = known || k == q
	}
	if q == QCLR {
		return Param{}, "", keyErr(key+".sets", "centred-log-ratio coordinates are not set by [[parameters]]: give [composition] prior = \"clr\" with its gases")
	}
	if !known {
		return Param{}, "", keyErr(key+".sets", "unknown quantity %q (known: %s)", pc.Sets, quantityNames())
	}
	p := Param{Sets: q, Dataset: -1, Key: key}
	target := ""
	switch q {
	case QLog10VMR:
		if pc.Gas == "" {
			return Param{}, "", missingKey(key+".gas", "the gas whose log10 mixing ratio it sets")
		}
		if _, err := forward.MolecularMass(pc.Gas); err != nil {
			return Param{}, "", keyErr(key+".gas", "unknown gas %q (known: %s)", pc.Gas, strings.Join(forward.KnownGases(), ", "))
		}
		for _, f := range c.fillSpecies() {
			if f == pc.Gas {
				return Param{}, "", keyErr(key+".gas", "%q is the balance gas (%s), which makes up the rest; it has no free mixing ratio", pc.Gas, c.fillName())
			}
		}
		p.Gas, target = pc.Gas, pc.Gas
		if _, ok := full.Atmosphere.Gases[pc.Gas]; !ok {
			full.Atmosphere.Gases[pc.Gas] = 0 // set by the parameter
		}
	case QOffsetPPM, QErrorInflationPM:
		switch {
		case pc.Dataset != "":
			if p.Dataset = r.datasetIndex(pc.Dataset); p.Dataset < 0 {
				return Param{}, "", keyErr(key+".dataset", "no observations named %q (%s)", pc.Dataset, r.datasetNames())
			}
		case len(r.Datasets) == 1:
			p.Dataset = 0
		case q == QOffsetPPM:
			return Param{}, "", missingKey(key+".dataset", "which observations the offset shifts: "+r.datasetNames())
		}
		if p.Dataset >= 0 {
			target = r.Datasets[p.Dataset].Name
		}
	}
	if pc.Gas != "" && q != QLog10VMR {
		return Param{}, "", keyErr(key+".gas", "applies only to %s parameters, not %s", QLog10VMR, q)
	}
	if pc.Dataset != "" && q != QOffsetPPM && q != QErrorInflationPM {
		return Param{}, "", keyErr(key+".dataset", "applies only to %s and %s parameters, not %s", QOffsetPPM, QErrorInflationPM, q)
	}
	return p, target, nil
}

func forTarget(t string) string {
	if t == "" {
		return ""
	}
	return " of " + t
}

func (r *Resolved) datasetNames() string {
	n := make([]string, len(r.Datasets))
	for i, d := range r.Datasets {
		n[i] = d.Name
	}
	return "data sets: " + strings.Join(n, ", ")
}

func (c *ModelConfig) fillName() string {
	if c.Atmosphere.BalanceGas == "" {
		return forward.FillH2He
	}
	return c.Atmosphere.BalanceGas
}

// priorKeys are the keys each prior takes (required, optional).
var priorKeys = map[string][2][]string{
	"uniform":          {{"low", "high"}, nil},
	"log-uniform":      {{"low", "high"}, nil},
	"normal":           {{"mean", "sigma"}, nil},
	"truncated-normal": {{"mean", "sigma"}, {"low", "high"}},
	"fixed":            {{"value"}, nil},
}

func buildPrior(key, name string, pc ParameterConfig) (priors.Prior, error) {
	if pc.Prior == "" {
		return nil, missingKey(key+".prior", "uniform, log-uniform, normal, truncated-normal or fixed")
	}
	keys, ok := priorKeys[pc.Prior]
	if !ok {
		return nil, keyErr(key+".prior", "unknown prior %q (uniform, log-uniform, normal, truncated-normal, fixed)", pc.Prior)
	}
	vals := map[string]*float64{"low": pc.Low, "high": pc.High, "mean": pc.Mean, "sigma": pc.Sigma, "value": pc.Value}
	for _, k := range []string{"low", "high", "mean", "sigma", "value"} {
		if vals[k] != nil && !contains(keys[0], k) && !contains(keys[1], k) {
			return nil, keyErr(key+"."+k, "does not apply to a %s prior (it takes %s)", pc.Prior, strings.Join(append(append([]string(nil), keys[0]...), keys[1]...), ", "))
		}
	}
	for _, k := range keys[0] {
		if vals[k] == nil {
			return nil, missingKey(key+"."+k, "for the "+pc.Prior+" prior")
		}
	}
	v := func(k string, d float64) float64 {
		if vals[k] == nil {
			return d
		}
		return *vals[k]
	}
	var p priors.Prior
	var err error
	switch pc.Prior {
	case "uniform":
		p, err = priors.NewUniform(*pc.Low, *pc.High)
	case "log-uniform":
		p, err = priors.NewLogUniform(*pc.Low, *pc.High)
	case "normal":
		p, err = priors.NewNormal(*pc.Mean, *pc.Sigma)
	case "truncated-normal":
		if pc.Low == nil && pc.High == nil {
			return nil, missingKey(key+".low", "or "+key+".high: a truncated-normal prior needs at least one bound")
		}
		p, err = priors.NewTruncatedNormal(*pc.Mean, *pc.Sigma, v("low", math.Inf(-1)), v("high", math.Inf(1)))
	case "fixed":
		p, err = priors.NewFixed(*pc.Value)
	}
	if err != nil {
		return nil, &KeyError{Key: key, Msg: fmt.Sprintf("prior of parameter %q", name), Err: err}
	}
	return p, nil
}

// checkPriorRange rejects priors that put more than a negligible
// probability (1e-9 in either tail) on values the quantity can never take,
// so that a run does not spend its time on -Inf. A normal prior on a
// radius far from 0 is fine; a uniform one reaching 0 is not.
func checkPriorRange(key, name string, q Quantity, p priors.Prior) error {
	const tail = 1e-9
	lo, hi := p.Quantile(tail), p.Quantile(1-tail)
	if _, fixed := p.(priors.Fixed); fixed {
		lo, hi = p.Quantile(0), p.Quantile(1)
	}
	bad := func(format string, a ...any) error {
		return keyErr(key, "prior %v of %q: %s", p, name, fmt.Sprintf(format, a...))
	}
	switch q {
	case QLog10VMR:
		if hi > 0 {
			return bad("reaches log10 mixing ratio %.4g > 0 (a mixing ratio above 1); end it at 0 or below", hi)
		}
	case QTemperature, QTIrr, QRadiusRjup, QRadiusRearth, QMassMjup, QMassMearth:
		if !(lo > 0) {
			return bad("%s must be positive; the prior reaches %.4g (use a truncated-normal or a positive range)", q, lo)
		}
	case QTInt, QErrorInflationPM:
		if lo < 0 {
			return bad("%s must not be negative; the prior reaches %.4g", q, lo)
		}
	case QCloudFraction:
		if lo < 0 || hi > 1 {
			return bad("a cloud fraction lies in [0, 1]; the prior reaches [%.4g, %.4g]", lo, hi)
		}
	}
	return nil
}

// checkApplies rejects parameters that set nothing in this model: a
// temperature quantity of another profile, a cloud fraction without a
// cloud deck, a haze index without haze.
func (r *Resolved) checkApplies(c *Config) error {
	has := map[Quantity]bool{}
	for _, p := range append(append([]Param(nil), r.Free...), r.Fixed...) {
		has[p.Sets] = true
	}
	profile := c.Atmosphere.Temperature.Profile
	for _, p := range append(append([]Param(nil), r.Free...), r.Fixed...) {
		nothing := ""
		switch p.Sets {
		case QTemperature:
			if profile != "isothermal" {
				nothing = fmt.Sprintf("the temperature profile is %q, not isothermal (atmosphere.temperature.profile)", profile)
			}
		case QTIrr, QTInt, QLog10ThermalOpacity, QLog10OpacityRatio:
			if profile != "guillot" {
				nothing = fmt.Sprintf("the temperature profile is %q, not guillot (atmosphere.temperature.profile)", profile)
			}
		case QCloudFraction:
			if c.Clouds.CloudTopBar == nil && !has[QLog10CloudTop] {
				nothing = "there is no cloud deck (no clouds.cloud_top_bar and no log10_cloud_top_bar parameter)"
			}
		case QHazeIndex:
			if *c.Clouds.HazeStrength == 0 && !has[QLog10HazeStrength] {
				nothing = "there is no haze (clouds.haze_strength is 0 and no log10_haze_strength parameter)"
			}
		}
		if nothing != "" {
			return keyErr(p.Key+".sets", "%s (parameter %q) sets nothing: %s", p.Sets, p.Name, nothing)
		}
	}
	return nil
}

// The ensemble moves (sampler.move).
const (
	MoveStretch       = "stretch"                // Goodman & Weare (2010) stretch move, a = 2
	MoveWalk          = "walk"                   // Goodman & Weare (2010) walk move
	MoveDiffEvolution = "differential-evolution" // ter Braak (2006)
)

var moves = []string{MoveStretch, MoveWalk, MoveDiffEvolution}

// MaxWalkersPerParameter bounds sampler.walkers: at most this many walkers
// per free parameter. The default is 4 per parameter (at least 32); the
// bound keeps a mistyped size (1e8 walkers: gigabytes per step, hours
// before the first one) from being accepted.
const MaxWalkersPerParameter = 1000

// Sampling methods ([sampler] method).
const (
	MethodEnsemble = "ensemble"
	MethodNested   = "nested"
)

// Defaults of nested sampling ([sampler] with method = "nested").
const (
	// DefaultLivePoints is a few hundred live points, the common choice
	// for model comparison (fact of the trade, common practice): ln Z's
	// error sqrt(H/N) is then about 0.2 for the information H of about 15
	// nats a spectrum typically holds.
	DefaultLivePoints = 400
	// DefaultBatch is the sampler's default batch (sampler.NestedSettings).
	DefaultBatch = 16
	// DefaultEvidenceTolerance is the sampler's default tolerance on ln Z
	// (nats).
	DefaultEvidenceTolerance = 0.1
)

func (r *Resolved) resolveSampler(s SamplerConfig, full *SamplerConfig) error {
	dim := len(r.Free)
	r.Method = s.Method
	switch r.Method {
	case "":
		r.Method = MethodEnsemble
	case MethodEnsemble, MethodNested:
	default:
		return keyErr("sampler.method", "unknown method %q (ensemble, nested)", s.Method)
	}
	nested := r.Method == MethodNested
	// Keys of the other method are errors, not silently ignored.
	wrong := func(key string, given bool) error {
		if !given {
			return nil
		}
		if nested {
			return keyErr("sampler."+key, "applies to method = \"ensemble\", not to nested sampling")
		}
		return keyErr("sampler."+key, "applies to method = \"nested\"; this configuration uses the ensemble (the default)")
	}
	for _, k := range []struct {
		key   string
		given bool
	}{
		{"walkers", nested && s.Walkers != nil}, {"move", nested && s.Move != ""},
		{"live_points", !nested && s.LivePoints != nil}, {"batch", !nested && s.Batch != nil},
		{"evidence_tolerance", !nested && s.EvidenceTolerance != nil},
	} {
		if err := wrong(k.key, k.given); err != nil {
			return err
		}
	}
	if nested {
		if err := r.resolveNested(s, dim); err != nil {
			return err
		}
	} else {
		r.Walkers = max(32, 4*dim)
		r.Walkers += r.Walkers % 2
		if s.Walkers != nil {
			w := *s.Walkers
			if w%2 != 0 || w < 2*(dim+1) {
				return keyErr("sampler.walkers", "%d: must be even and at least 2(dim+1) = %d for %d free parameters", w, 2*(dim+1), dim)
			}
			if w > MaxWalkersPerParameter*dim {
				return keyErr("sampler.walkers", "%d: at most %d per free parameter, %d for %d; an ensemble sampler gains nothing from more (a few times the number of parameters is usual), and each walker costs a posterior evaluation per step and several in the search for a starting point", w, MaxWalkersPerParameter, MaxWalkersPerParameter*dim, dim)
			}
			r.Walkers = w
		}
		r.Move = s.Move
		if r.Move == "" {
			r.Move = MoveStretch
		}
		if !contains(moves, r.Move) {
			return keyErr("sampler.move", "unknown move %q (%s)", s.Move, strings.Join(moves, ", "))
		}
	}
	if s.Seed != nil {
		if *s.Seed < 0 {
			return keyErr("sampler.seed", "must not be negative, got %d", *s.Seed)
		}
		r.Seed = uint64(*s.Seed)
	} else {
		var b [8]byte
		if _, err := rand.Read(b[:]); err != nil {
			return keyWrap("sampler.seed", fmt.Errorf("none given and no random seed available: %w", err))
		}
		r.Seed = binary.LittleEndian.Uint64(b[:]) >> 1 // fits a TOML integer
		r.Notes = append(r.Notes, fmt.Sprintf("sampler.seed not given; using seed %d (recorded in the resolved configuration)", r.Seed))
	}
	rules := 0
	if s.Steps != nil {
		if nested {
			return keyErr("sampler.steps", "a nested-sampling run ends when the live points can change ln Z by less than sampler.evidence_tolerance; bound its time with sampler.budget instead")
		}
		rules++
		if *s.Steps < 1 {
			return keyErr("sampler.steps", "must be at least 1, got %d", *s.Steps)
		}
		r.Stop.Steps = *s.Steps
	}
	if s.Budget != "" {
		rules++
		d, err := time.ParseDuration(s.Budget)
		if err != nil || d <= 0 {
			return keyErr("sampler.budget", "%q is not a positive duration such as \"8h\" or \"90m\"", s.Budget)
		}
		r.Stop.Budget = d.Seconds()
	}
	if s.UntilConverged != nil {
		if !*s.UntilConverged {
			return keyErr("sampler.until_converged", "false is not a stopping rule; give sampler.steps or sampler.budget instead")
		}
		rules++
		r.Stop.UntilConverged = true
	}
	if rules > 1 {
		return keyErr("sampler", "give one stopping rule: steps, budget or until_converged")
	}
	if rules == 0 {
		r.Stop.UntilConverged = true
	}
	if s.Workers != nil {
		if *s.Workers < 0 {
			return keyErr("sampler.workers", "must not be negative (0 means one per core), got %d", *s.Workers)
		}
		r.Workers = *s.Workers
	}
	seed := int64(r.Seed)
	workers := r.Workers
	if nested {
		live, batch, tol := r.LivePoints, r.Batch, r.EvidenceTol
		*full = SamplerConfig{Method: MethodNested, LivePoints: &live, Batch: &batch, EvidenceTolerance: &tol, Seed: &seed, Workers: &workers}
	} else {
		walkers := r.Walkers
		*full = SamplerConfig{Walkers: &walkers, Seed: &seed, Workers: &workers, Move: r.Move}
	}
	switch {
	case r.Stop.Steps > 0:
		steps := r.Stop.Steps
		full.Steps = &steps
	case r.Stop.Budget > 0:
		full.Budget = s.Budget
	default:
		t := true
		full.UntilConverged = &t
	}
	return nil
}

// resolveNested fills the nested-sampling settings of s for dim free
// parameters.
func (r *Resolved) resolveNested(s SamplerConfig, dim int) error {
	if r.CLR != nil {
		return keyErr("sampler.method", "nested sampling draws each parameter from its own prior (through its quantile function), and the centred-log-ratio prior of [composition] is a joint prior; use the ensemble (the default method) with it")
	}
	r.LivePoints, r.Batch, r.EvidenceTol = DefaultLivePoints, DefaultBatch, DefaultEvidenceTolerance
	if s.LivePoints != nil {
		if n := *s.LivePoints; n < 2*(dim+1) {
			return keyErr("sampler.live_points", "%d: must be at least 2(dim+1) = %d for %d free parameters, so that bounding ellipsoids can be fitted", n, 2*(dim+1), dim)
		}
		r.LivePoints = *s.LivePoints
	}
	r.LivePoints = max(r.LivePoints, 2*(dim+1))
	if s.Batch != nil {
		if b := *s.Batch; b < 1 || b > r.LivePoints {
			return keyErr("sampler.batch", "%d: must be from 1 to the %d live points", b, r.LivePoints)
		}
		r.Batch = *s.Batch
	}
	r.Batch = min(r.Batch, r.LivePoints)
	if s.EvidenceTolerance != nil {
		if t := *s.EvidenceTolerance; !(t > 0) || math.IsInf(t, 0) {
			return keyErr("sampler.evidence_tolerance", "%g: must be a positive number of nats (e.g. 0.1)", t)
		}
		r.EvidenceTol = *s.EvidenceTolerance
	}
	return nil
}

// fillFromPriors fills the model keys that a parameter sets and that the
// model sections would otherwise require (isothermal or irradiation
// temperature, radius, mass) with the parameter's prior median, so that a
// retrieval need not give a value it is about to fit. The value is the
// reference state of the resolved configuration; the fit does not use it.
func (r *Resolved) fillFromPriors(m *ModelConfig) {
	for _, p := range append(append([]Param(nil), r.Free...), r.Fixed...) {
		v := p.Prior.Quantile(0.5)
		t := &m.Atmosphere.Temperature
		pl := &m.Planet
		switch p.Sets {
		case QTemperature:
			if t.TemperatureK == nil && (t.Profile == "" || t.Profile == "isothermal") {
				t.TemperatureK = &v
			}
		case QTIrr:
			if t.TIrrK == nil && t.Profile == "guillot" {
				t.TIrrK = &v
			}
		case QRadiusRjup, QRadiusRearth:
			if pl.RadiusRjup == nil && pl.RadiusRearth == nil && pl.RadiusM == nil {
				if p.Sets == QRadiusRjup {
					pl.RadiusRjup = &v
				} else {
					pl.RadiusRearth = &v
				}
			}
		case QMassMjup, QMassMearth:
			if pl.MassMjup == nil && pl.MassMearth == nil && pl.MassKg == nil {
				if p.Sets == QMassMjup {
					pl.MassMjup = &v
				} else {
					pl.MassMearth = &v
				}
			}
		}
	}
}

// freeSpans are the ranges of the quantities the free parameters set
// (central 1 - 2e-9 of each prior, as checkPriorRange); a quantity that
// several parameters set (log10_vmr) spans all of them.
func (r *Resolved) freeSpans() map[Quantity]priorSpan {
	const tail = 1e-9
	m := map[Quantity]priorSpan{}
	for _, p := range r.Free {
		s := priorSpan{p.Prior.Quantile(tail), p.Prior.Quantile(1 - tail)}
		if o, ok := m[p.Sets]; ok {
			s = priorSpan{math.Min(o.lo, s.lo), math.Max(o.hi, s.hi)}
		}
		m[p.Sets] = s
	}
	return m
}

// WriteTOML writes the resolved configuration (r.Config) as TOML, with a
// comment line naming the program version. A key whose value a parameter
// sets shows no placeholder: when the configuration did not give it (the
// resolved value is a default, a prior's median or a gas added at 0) the
// line becomes a comment naming the parameter, and reading the file again
// fills it in the same way; when the configuration gave it, the value is
// kept with a comment saying the parameter sets it instead.
func (r *Resolved) WriteTOML(w io.Writer) error {
	var buf bytes.Buffer
	fmt.Fprintf(&buf, "# Resolved retrieval configuration written by chord %s: every default explicit.\n", version.Version)
	fmt.Fprintf(&buf, "# Keys set by a parameter are marked \"set by parameter ...\"; their values are in the chains.\n")
	var body bytes.Buffer
	if err := toml.NewEncoder(&body).Encode(r.Config); err != nil {
		return fmt.Errorf("writing resolved configuration: %w", err)
	}
	buf.WriteString(markSetKeys(body.String(), r.setKeys()))
	_, err := w.Write(buf.Bytes())
	return err
}

// setKey is a key of the model sections that a parameter sets.
type setKey struct {
	path  string // dotted key path, e.g. "atmosphere.gases.CH4"
	param string // the parameter's name
	fixed bool   // a fixed parameter (its value is its prior's)
	given bool   // the configuration file gave the key
}

// setKeys lists the keys of the model sections the parameters set.
func (r *Resolved) setKeys() []setKey {
	var out []setKey
	for i, ps := range [][]Param{r.Free, r.Fixed} {
		for _, p := range ps {
			path := quantityKey(p.Sets)
			if p.Sets == QLog10VMR || p.Sets == QCLR {
				path = "atmosphere.gases." + p.Gas
			}
			if path == "" {
				continue
			}
			out = append(out, setKey{path: path, param: p.Name, fixed: i == 1, given: r.given[path]})
		}
	}
	return out
}

// quantityKey is the key of the model sections that a quantity sets ("" for
// none: offsets and error inflation; a gas's key for log10_vmr and clr).
func quantityKey(q Quantity) string {
	switch q {
	case QTemperature, QTIrr, QTInt:
		return "atmosphere.temperature." + string(q)
	case QLog10ThermalOpacity:
		return "atmosphere.temperature.thermal_opacity_m2_kg"
	case QLog10OpacityRatio:
		return "atmosphere.temperature.opacity_ratio"
	case QRadiusRjup, QRadiusRearth, QMassMjup, QMassMearth:
		return "planet." + string(q)
	case QLog10CloudTop:
		return "clouds.cloud_top_bar"
	case QCloudFraction:
		return "clouds.cloud_fraction"
	case QLog10HazeStrength:
		return "clouds.haze_strength"
	case QHazeIndex:
		return "clouds.haze_index"
	}
	return ""
}

// givenKeys records which of the keys the parameters set the configuration
// c gave (before defaults and priors filled them in).
func (r *Resolved) givenKeys(c *Config) {
	r.given = map[string]bool{}
	root := reflect.ValueOf(c.ModelConfig)
	for _, ps := range [][]Param{r.Free, r.Fixed} {
		for _, p := range ps {
			path := quantityKey(p.Sets)
			if p.Sets == QLog10VMR || p.Sets == QCLR {
				_, ok := c.Atmosphere.Gases[p.Gas]
				r.given["atmosphere.gases."+p.Gas] = ok
				continue
			}
			if path == "" {
				continue
			}
			v := root
			for _, k := range strings.Split(path, ".") {
				v = fieldByKey(v, k)
			}
			r.given[path] = v.IsValid() && !v.IsNil()
		}
	}
}

// fieldByKey is the field of struct value v with TOML key k (invalid when
// there is none).
func fieldByKey(v reflect.Value, k string) reflect.Value {
	if !v.IsValid() || v.Kind() != reflect.Struct {
		return reflect.Value{}
	}
	for i := range v.NumField() {
		name, _, _ := strings.Cut(v.Type().Field(i).Tag.Get("toml"), ",")
		if name == k {
			return v.Field(i)
		}
	}
	return reflect.Value{}
}

// markSetKeys marks the lines of the TOML text (as the encoder writes it:
// one key per line, tables headed [a.b]) of the keys the parameters set.
func markSetKeys(text string, keys []setKey) string {
	if len(keys) == 0 {
		return text
	}
	byPath := map[string]setKey{}
	for _, k := range keys {
		byPath[k.path] = k
	}
	lines := strings.Split(text, "\n")
	table := ""
	for i, line := range lines {
		t := strings.TrimSpace(line)
		switch {
		case strings.HasPrefix(t, "[["):
			table = ""
			continue
		case strings.HasPrefix(t, "["):
			table = strings.Trim(t, "[]")
			continue
		}
		name, _, ok := strings.Cut(t, " = ")
		if !ok || table == "" {
			continue
		}
		k, ok := byPath[table+"."+name]
		if !ok {
			continue
		}
		what := "parameter " + k.param
		if k.fixed {
			what = "fixed parameter " + k.param
		}
		indent := line[:len(line)-len(strings.TrimLeft(line, " \t"))]
		if k.given {
			lines[i] = line + "  # set by " + what + "; this value is not used"
		} else {
			lines[i] = indent + "# " + name + ": set by " + what
		}
	}
	return strings.Join(lines, "\n")
}
