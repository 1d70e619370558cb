package retrieve

import (
	"bytes"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"sort"

	"github.com/BurntSushi/toml"

	"chord/chains"
	"chord/config"
	"chord/forward"
	"chord/internal/atomicfile"
	"chord/report"
)

// What a run's report needs from the run: its model at a sample
// (report.Model), which data sets have free offsets and inflations, the
// context of the cautions, the truth of a simulated observation, and the
// run's configuration and inputs for report.html.

// TruthFile is the run directory's file of true parameter values, written
// when the observation was simulated (chord demo, chord fit --truth).
const TruthFile = "truth.toml"

// truthFile is truth.toml as decoded.
type truthFile struct {
	Truth map[string]float64 `toml:"truth"`
}

// ReadTruth returns the true parameter values of the run in dir by
// parameter name, or nil when the run has no truth.toml.
func ReadTruth(dir string) (map[string]float64, error) {
	path := filepath.Join(dir, TruthFile)
	if _, err := os.Stat(path); errors.Is(err, os.ErrNotExist) {
		return nil, nil
	}
	var t truthFile
	if _, err := config.DecodeStrict(path, &t); err != nil {
		return nil, err
	}
	return t.Truth, nil
}

// writeTruth writes dir/truth.toml: the value of each free parameter of r
// in the true atmosphere m (those m does not give, such as a cloud top in
// a clear atmosphere, are left out).
func writeTruth(dir string, r *config.Resolved, m *config.ModelConfig) error {
	t := truthFile{Truth: truthValues(r, m)}
	var b bytes.Buffer
	b.WriteString("# The true values of the free parameters: the observation was simulated from them.\n")
	if err := toml.NewEncoder(&b).Encode(t); err != nil {
		return err
	}
	return atomicfile.Write(filepath.Join(dir, TruthFile), b.Bytes(), true)
}

// truthValues maps the free parameters of r to their values in m.
func truthValues(r *config.Resolved, m *config.ModelConfig) map[string]float64 {
	out := map[string]float64{}
	f := func(v *float64) float64 {
		if v == nil {
			return math.NaN()
		}
		return *v
	}
	lg := func(v float64) float64 {
		if !(v > 0) {
			return math.NaN()
		}
		return math.Log10(v)
	}
	t := m.Atmosphere.Temperature
	for _, p := range r.Free {
		v := math.NaN()
		switch p.Sets {
		case config.QLog10VMR:
			if x, ok := m.Atmosphere.Gases[p.Gas]; ok {
				v = lg(x)
			}
		case config.QTemperature:
			v = f(t.TemperatureK)
		case config.QTIrr:
			v = f(t.TIrrK)
		case config.QTInt:
			v = f(t.TIntK)
		case config.QLog10ThermalOpacity:
			v = lg(f(t.ThermalOpacityM2Kg))
		case config.QLog10OpacityRatio:
			v = lg(f(t.OpacityRatio))
		case config.QRadiusRjup:
			v = planetRadius(m) / forward.JupiterRadius
		case config.QRadiusRearth:
			v = planetRadius(m) / forward.EarthRadius
		case config.QMassMjup:
			v = planetMass(m) / forward.JupiterMass
		case config.QMassMearth:
			v = planetMass(m) / forward.EarthMass
		case config.QLog10CloudTop:
			v = lg(f(m.Clouds.CloudTopBar))
		case config.QCloudFraction:
			v = f(m.Clouds.CloudFraction)
			if math.IsNaN(v) && m.Clouds.CloudTopBar != nil {
				v = 1
			}
		case config.QLog10HazeStrength:
			v = lg(f(m.Clouds.HazeStrength))
		case config.QHazeIndex:
			v = f(m.Clouds.HazeIndex)
		case config.QOffsetPPM, config.QErrorInflationPM:
			v = 0 // a simulation has no offset and its errors are the true ones
		}
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			out[p.Name] = v
		}
	}
	return out
}

func planetRadius(m *config.ModelConfig) float64 {
	p := m.Planet
	switch {
	case p.RadiusRjup != nil:
		return *p.RadiusRjup * forward.JupiterRadius
	case p.RadiusRearth != nil:
		return *p.RadiusRearth * forward.EarthRadius
	case p.RadiusM != nil:
		return *p.RadiusM
	}
	return math.NaN()
}

func planetMass(m *config.ModelConfig) float64 {
	p := m.Planet
	switch {
	case p.MassMjup != nil:
		return *p.MassMjup * forward.JupiterMass
	case p.MassMearth != nil:
		return *p.MassMearth * forward.EarthMass
	case p.MassKg != nil:
		return *p.MassKg
	}
	return math.NaN()
}

// fitted says which data sets have a free (or fixed) offset or inflation.
func (j *job) fitted() report.Fitted {
	n := len(j.res.Datasets)
	f := report.Fitted{Offset: make([]bool, n), Inflation: make([]bool, n)}
	for _, p := range append(slices.Clone(j.res.Free), j.res.Fixed...) {
		var dst []bool
		switch p.Sets {
		case config.QOffsetPPM:
			dst = f.Offset
		case config.QErrorInflationPM:
			dst = f.Inflation
		default:
			continue
		}
		if p.Dataset < 0 {
			for k := range dst {
				dst[k] = true
			}
		} else {
			dst[p.Dataset] = true
		}
	}
	return f
}

// atmosphere is the context of the cautions: a hydrogen-rich fill, and
// the limb temperature (the isothermal temperature, free or fixed).
func (j *job) atmosphere() *report.Atmosphere {
	mc := &j.res.Config.ModelConfig
	a := &report.Atmosphere{HydrogenRich: mc.Atmosphere.BalanceGas == "" || mc.Atmosphere.BalanceGas == forward.FillH2He, TemperatureK: math.NaN()}
	for _, p := range j.res.Free {
		if p.Sets == config.QTemperature {
			a.TemperatureColumn = p.Name
		}
	}
	if a.TemperatureColumn == "" && mc.Atmosphere.Temperature.TemperatureK != nil && mc.Atmosphere.Temperature.Profile == "isothermal" {
		a.TemperatureK = *mc.Atmosphere.Temperature.TemperatureK
	}
	return a
}

// runDetails are run.toml and the run's inputs, for report.html.
func (j *job) runDetails(dir string) (*report.RunDetails, error) {
	path := filepath.Join(dir, RunFile)
	text, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	rf := &runFile{}
	if _, err := config.DecodeStrict(path, rf); err != nil {
		return nil, err
	}
	d := &report.RunDetails{Title: j.res.Config.Planet.Name, Config: string(text)}
	for _, in := range rf.Run.Inputs {
		d.Inputs = append(d.Inputs, report.Input{Role: in.Role, Path: in.Path, SHA256: in.SHA256})
	}
	sort.SliceStable(d.Inputs, func(a, b int) bool { return d.Inputs[a].Role < d.Inputs[b].Role })
	return d, nil
}

// reportModel is the report.Model of a job.
type reportModel struct {
	j        *job
	eval     *PosteriorEvaluator
	pressure []float64 // Pa, the layer pressures
	off, inf []float64
	ds       []report.Dataset
}

func newReportModel(j *job) *reportModel {
	m := &reportModel{j: j}
	lev := j.prob.Model().LevelPressures()
	for i := 0; i+1 < len(lev); i++ {
		m.pressure = append(m.pressure, math.Sqrt(lev[i]*lev[i+1]))
	}
	for _, d := range j.res.Datasets {
		rd := report.Dataset{Name: d.Name}
		for i := range d.Lo {
			rd.Wavelength = append(rd.Wavelength, 0.5*(d.Lo[i]+d.Hi[i])/forward.Micron)
			rd.HalfWidth = append(rd.HalfWidth, 0.5*(d.Hi[i]-d.Lo[i])/forward.Micron)
			rd.Depth = append(rd.Depth, d.Depth[i]*1e6)
			rd.Sigma = append(rd.Sigma, d.Sigma[i]*1e6)
		}
		m.ds = append(m.ds, rd)
	}
	m.off, m.inf = make([]float64, len(m.ds)), make([]float64, len(m.ds))
	return m
}

func (m *reportModel) Datasets() []report.Dataset { return m.ds }

func (m *reportModel) Pressures() []float64 {
	out := make([]float64, len(m.pressure))
	for i, p := range m.pressure {
		out[i] = p / forward.Bar
	}
	return out
}

func (m *reportModel) Gases() []string { return m.j.prob.Model().Gases() }

func (m *reportModel) evaluator() *PosteriorEvaluator {
	if m.eval == nil {
		m.eval = m.j.prob.NewPosteriorEvaluator()
		m.eval.count = false
	}
	return m.eval
}

func (m *reportModel) Evaluate(v *report.SampleView, x []float64) error {
	if err := m.evaluator().View(v.Depth, v.Offset, v.Inflation, v.Temperature, m.pressure, x, -1); err != nil {
		return err
	}
	toPPM(v.Depth)
	toPPM(v.Offset)
	toPPM(v.Inflation)
	return nil
}

func (m *reportModel) Without(dst, x []float64, gas string) error {
	i := slices.Index(m.Gases(), gas)
	if i < 0 {
		return fmt.Errorf("no gas %s in the model", gas)
	}
	if err := m.evaluator().View(dst, m.off, m.inf, nil, nil, x, i); err != nil {
		return err
	}
	toPPM(dst)
	return nil
}

func toPPM(v []float64) {
	for i := range v {
		v[i] *= 1e6
	}
}

// ReadPosterior reads the chain of the run in dir after the burn-in its
// summary.json states (the samples behind its intervals); for a
// nested-sampling run, its equal-weight samples.
func ReadPosterior(dir string) (*chains.Chain, error) {
	s, err := report.ReadSummary(dir)
	if err != nil {
		return nil, err
	}
	ck, err := ReadCheckpoint(filepath.Join(dir, CheckpointFile))
	if err != nil {
		return nil, err
	}
	store := filepath.Join(dir, chains.DirName)
	if s.Evidence != nil {
		return nestedPosterior(store, ck, s.Evidence.Seed)
	}
	return chains.Read(store, ck.Parts, s.Burn, 1)
}
