package campaign

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"

	"github.com/BurntSushi/toml"

	"chord/config"
	"chord/forward"
	"chord/forward/opacity"
	"chord/internal/atomicfile"
	"chord/internal/filehash"
	"chord/internal/logto"
	"chord/internal/runlock"
	"chord/internal/version"
	"chord/obs"
	"chord/report"
	"chord/retrieve"
	"chord/sampler"
	"chord/simulate"
)

// Observation plans (chord plan): simulate a scenario at several noise
// levels or numbers of transits, fit each observation, and compare the
// posterior widths.
//
// A plan directory holds
//
//	plan.toml        what was asked (levels, noise, bins, seeds, the scenario's SHA-256)
//	scenario.toml    a copy of the scenario, which the fits use
//	<level>/observation.csv, <level>/fit.toml, <level>/run/   one level: its observation,
//	                 its retrieval configuration and its run directory (chord resume
//	                 continues it like any other run)
//	comparison.txt, comparison.json, widths.png   the comparison, when every fit is done
//
// with <level> "noise-0030ppm" or "transits-0004". A plan is a grid of one
// axis (see grid.go): its levels are the points of that axis, observed and
// fitted by the grid's code. The fits run one after
// another, each with every worker (the sampler already spreads one fit's
// walkers over the cores), and share one set of opacity tables, loaded
// once. A plan stopped at any point (SIGINT, SIGKILL) resumes where it
// stopped when run again on the same directory: observations already
// written are checked against plan.toml and kept, finished fits (those
// with a summary.json) are kept, a started fit is resumed from its
// checkpoint, and the rest are started.

// ErrOtherPlan is the error of a new plan asked for in a directory that
// holds a different one.
var ErrOtherPlan = errors.New("holds a different plan")

// PlanFile is the plan's description in a plan directory.
const PlanFile = "plan.toml"

// PlanSpec is what a plan is asked to do; it is stored in plan.toml.
type PlanSpec struct {
	// ScenarioSHA256 is the digest of the scenario copied to the plan;
	// ScenarioDir the directory of the original, against which the copy's
	// relative paths (opacity.dir) are resolved.
	ScenarioSHA256 string `toml:"scenario_sha256"`
	ScenarioDir    string `toml:"scenario_dir"`
	// NoisePPM are the levels of a noise plan (single-transit errors, one
	// fit each); Transits those of a transits plan, with the noise given by
	// Observing. Exactly one is set.
	NoisePPM []float64 `toml:"noise_ppm,omitempty"`
	Transits []int     `toml:"transits,omitempty"`
	// Observing gives the bins and, for a transits plan, the
	// single-transit noise (NoisePPM or NoiseFile); paths are absolute.
	BinsFile       string     `toml:"bins_file,omitempty"`
	RangeUm        [2]float64 `toml:"wavelength_range_um"`
	ResolvingPower float64    `toml:"resolving_power"`
	NoiseFile      string     `toml:"noise_file,omitempty"`
	SingleNoisePPM float64    `toml:"single_transit_noise_ppm"`
	// Scatter draws Gaussian noise with NoiseSeed + level index (so the
	// levels' noise draws are independent); false (the default, the usual
	// choice for forecasts) writes noise-free observations.
	Scatter   bool   `toml:"scatter"`
	NoiseSeed uint64 `toml:"noise_seed"`
	// Steps, Budget (s) or UntilConverged, at most one, override the
	// scenario's stopping rule for every fit.
	Steps          int     `toml:"steps,omitempty"`
	Budget         float64 `toml:"budget_s,omitempty"`
	UntilConverged bool    `toml:"until_converged,omitempty"`
	// Detect lists the gases whose detection by evidence each level
	// reports (detectplan.go); the scenario's fits must then be nested
	// sampling.
	Detect []string `toml:"detect,omitempty"`
}

// PlanOptions configures RunPlan.
type PlanOptions struct {
	Dir string
	// ScenarioPath is the scenario of a new plan; with Demo set, the
	// demo's scenario (DemoScenario) is used instead. Neither resumes the
	// plan in Dir from its plan.toml.
	ScenarioPath string
	Demo         bool
	Spec         PlanSpec // ignored when resuming from plan.toml
	Workers      *int     // overrides the scenario's sampler.workers
	DemoCache    string
	Progress     retrieve.Progress
	Log          io.Writer // nil means Progress.Writer
	// OnLevel, when set, is told after each level's fit ends how many of
	// the plan's levels are done and how many it has (once before the
	// first, too).
	OnLevel func(done, total int)
}

// PlanLevel is one level of a plan and its fit.
type PlanLevel struct {
	Name     string  // directory name, e.g. "noise-0030ppm"
	NoisePPM float64 // NoiseLevel of its observation
	Report   *retrieve.RunReport
}

// PlanReport is what RunPlan returns.
type PlanReport struct {
	Dir    string
	Levels []PlanLevel
	// Interrupted is set when a fit was stopped (context cancelled); the
	// plan resumes when run again.
	Interrupted bool
	Comparison  *report.Comparison // nil when interrupted
	Table       string             // the comparison as text (and the detections, with PlanSpec.Detect)
	// Detections are the detections by evidence per level and gas (nil
	// without PlanSpec.Detect or when interrupted).
	Detections *report.DetectionTable
}

func (p *PlanSpec) check() error {
	switch {
	case len(p.NoisePPM) > 0 && len(p.Transits) > 0:
		return errors.New("plan: give noise levels or numbers of transits, not both")
	case len(p.NoisePPM) == 0 && len(p.Transits) == 0:
		return errors.New("plan: give the noise levels or the numbers of transits")
	}
	for _, v := range p.NoisePPM {
		if !(v > 0) || math.IsInf(v, 0) {
			return fmt.Errorf("plan: noise level %g ppm: must be positive and finite", v)
		}
	}
	for _, n := range p.Transits {
		if n < 1 {
			return fmt.Errorf("plan: %d transits: must be at least 1", n)
		}
	}
	if len(p.Transits) > 0 && p.SingleNoisePPM == 0 && p.NoiseFile == "" {
		return errors.New("plan: a plan over transits needs the single-transit noise (a level in ppm or a noise file)")
	}
	if len(p.NoisePPM) > 0 && p.NoiseFile != "" {
		return errors.New("plan: noise levels and a noise file exclude each other; with a noise file, plan over numbers of transits")
	}
	if p.Steps < 0 || p.Budget < 0 {
		return errors.New("plan: steps and budget must not be negative")
	}
	seen := map[string]bool{}
	for _, g := range p.Detect {
		if seen["gas "+g] {
			return fmt.Errorf("plan: gas %s to detect is given twice", g)
		}
		seen["gas "+g] = true
	}
	for i := range p.levels() {
		n := p.levelName(i)
		if seen[n] {
			return fmt.Errorf("plan: level %s is given twice", n)
		}
		seen[n] = true
	}
	return nil
}

func (p *PlanSpec) levels() int { return len(p.NoisePPM) + len(p.Transits) }

func (p *PlanSpec) levelName(i int) string {
	if len(p.NoisePPM) > 0 {
		return strings.TrimRight(strings.TrimRight(fmt.Sprintf("noise-%09.4f", p.NoisePPM[i]), "0"), ".") + "ppm"
	}
	return fmt.Sprintf("transits-%04d", p.Transits[i])
}

// grid is the plan as a grid of one axis (chord grid): the noise levels
// or numbers of transits over the plan's observing settings, level i's
// noise drawn with seed NoiseSeed + i.
func (p *PlanSpec) grid() (GridObserve, GridAxis) {
	rp, single, seed := p.ResolvingPower, p.SingleNoisePPM, int64(p.NoiseSeed)
	o := GridObserve{BinsFile: p.BinsFile, WavelengthRangeUm: p.RangeUm[:], ResolvingPower: &rp, NoiseFile: p.NoiseFile,
		NoisePPM: &single, Scatter: p.Scatter, NoiseSeed: &seed}
	a := GridAxis{Key: AxisNoisePPM}
	for _, v := range p.NoisePPM {
		a.Values = append(a.Values, v)
	}
	if len(p.Transits) > 0 {
		a = GridAxis{Key: AxisTransits}
		for _, n := range p.Transits {
			a.Values = append(a.Values, int64(n))
		}
	}
	return o, a
}

func (p *PlanSpec) stop() config.StopRule {
	return config.StopRule{Steps: p.Steps, Budget: p.Budget, UntilConverged: p.UntilConverged}
}

// RunPlan runs or resumes the plan in opt.Dir, holding the plan
// directory's lock throughout (each level's fit holds its run's too).
func RunPlan(ctx context.Context, opt PlanOptions) (*PlanReport, error) {
	log := logto.First(opt.Log, opt.Progress.Writer)
	lock, err := runlock.Create(opt.Dir, runlock.Holder("chord plan"), func() error { return checkPlanDir(opt.Dir) })
	if err != nil {
		return nil, fmt.Errorf("plan: %w", err)
	}
	defer lock.Release()
	spec, err := openPlan(opt)
	if err != nil {
		return nil, err
	}
	scPath := filepath.Join(opt.Dir, "scenario.toml")
	sc, err := simulate.LoadScenario(scPath)
	if err != nil {
		return nil, err
	}
	for _, w := range sc.Config.Renamed {
		fmt.Fprintf(log, "chord plan: warning: %s (the plan's copy of the scenario): %s\n", scPath, w)
	}
	if text, err := os.ReadFile(scPath); err != nil || hex.EncodeToString(sha256Sum(text)) != spec.ScenarioSHA256 {
		return nil, fmt.Errorf("plan: %s changed since the plan started (its SHA-256 differs from %s); restore it or start a new plan", scPath, PlanFile)
	}
	sc.Config.BaseDir = spec.ScenarioDir
	// Everything a level needs is checked before the first fit.
	lv, err := planLevels(opt.Dir, spec, sc)
	if err != nil {
		return nil, err
	}
	if err := checkPlanDetect(scPath, &sc.Config, spec.Detect); err != nil {
		return nil, err
	}
	set, err := sc.Config.ModelConfig.LoadOpacity(opt.DemoCache, log)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", scPath, err)
	}
	if set.Demo {
		fmt.Fprintln(log, "chord: "+report.DemoWarning)
	}
	// Observations and fit configurations (cheap; written once, checked
	// when they exist).
	for i := range lv {
		if err := lv[i].write(opt.Dir, sc, set); err != nil {
			return nil, err
		}
	}
	rep := &PlanReport{Dir: opt.Dir}
	onLevel := func(done int) {
		if opt.OnLevel != nil {
			opt.OnLevel(done, len(lv))
		}
	}
	onLevel(0)
	for i := range lv {
		l := &lv[i]
		r, err := fitOrResume(ctx, "chord plan", l.cfg, l.run, set, spec.stop(), opt.Workers, opt.DemoCache, opt.Progress, log, &sc.Config.ModelConfig)
		if err != nil && interrupted(ctx, err) {
			rep.Interrupted = true
			return rep, nil
		}
		if err != nil {
			return nil, fmt.Errorf("plan: level %s: %w", l.name, err)
		}
		d, err := obs.ReadDataset(l.obs)
		if err != nil {
			return nil, err
		}
		rep.Levels = append(rep.Levels, PlanLevel{Name: l.name, NoisePPM: d.NoisePPM(), Report: r})
		if r.Outcome != nil && r.Outcome.Stop == sampler.StopCanceled {
			rep.Interrupted = true
			return rep, nil
		}
		if len(spec.Detect) > 0 {
			stopped, err := rep.detectLevel(ctx, l, spec, set, opt, log)
			if err != nil {
				return nil, fmt.Errorf("plan: level %s: %w", l.name, err)
			}
			if stopped {
				rep.Interrupted = true
				return rep, nil
			}
		}
		onLevel(i + 1)
	}
	if err := rep.compare(log); err != nil {
		return nil, err
	}
	if err := rep.writeDetections(); err != nil {
		return nil, err
	}
	return rep, nil
}

// planLevel is one level of a plan: its files and how it is observed.
type planLevel struct {
	name, dir, obs, cfg, run string
	obsSpec                  simulate.ObservingSpec
	sim                      simulate.Options
}

// planLevels lays out the levels of spec in dir and checks that each can
// be observed.
func planLevels(dir string, spec *PlanSpec, sc *simulate.Scenario) ([]planLevel, error) {
	ospec, axis := spec.grid()
	points := expandAxes([]GridAxis{axis})
	lv := make([]planLevel, len(points))
	for i := range lv {
		l := &lv[i]
		l.name = spec.levelName(i)
		l.dir = filepath.Join(dir, l.name)
		l.obs, l.cfg, l.run = filepath.Join(l.dir, "observation.csv"), filepath.Join(l.dir, "fit.toml"), filepath.Join(l.dir, "run")
		l.obsSpec, l.sim = observePoint(ospec, []GridAxis{axis}, points[i])
		if _, _, err := l.obsSpec.Resolve(sc); err != nil {
			return nil, fmt.Errorf("plan: level %s: %w", l.name, err)
		}
	}
	return lv, nil
}

// write simulates the level's observation and writes it with its fit
// configuration, or checks the observation a resumed plan wrote before.
func (l *planLevel) write(planDir string, sc *simulate.Scenario, set *opacity.Set) error {
	if err := os.MkdirAll(l.dir, 0o755); err != nil {
		return err
	}
	o, fc, err := simulatePoint(sc, set, l.obsSpec, l.sim, l.obs)
	if err != nil {
		return fmt.Errorf("plan: level %s: %w", l.name, err)
	}
	if err := keepOrWriteObservation(l.obs, o); err != nil {
		return fmt.Errorf("plan: level %s: %w", l.name, err)
	}
	hdr := []string{fmt.Sprintf("Retrieval configuration of a plan's level %s (chord %s).", l.name, version.Version)}
	// The observation beside it, by a relative path: the plan can move.
	fc.Observations[0].File = filepath.Base(l.obs)
	if _, err := os.Stat(l.cfg); errors.Is(err, os.ErrNotExist) {
		return config.Write(l.cfg, fc, hdr, false)
	}
	return nil
}

// compare compares the levels' posterior widths and writes
// comparison.txt, comparison.json and, when the noise differs, widths.png.
func (rep *PlanReport) compare(log io.Writer) error {
	runs := make([]report.CompareRun, len(rep.Levels))
	for i, l := range rep.Levels {
		runs[i] = report.CompareRun{Label: l.Name, NoisePPM: l.NoisePPM, Summary: l.Report.Summary}
	}
	c, err := report.Compare(runs)
	if err != nil {
		return err
	}
	rep.Comparison = c
	var txt, js bytes.Buffer
	if err := c.WriteTable(&txt); err != nil {
		return err
	}
	if err := c.WriteJSON(&js); err != nil {
		return err
	}
	rep.Table = txt.String()
	if err := atomicfile.Write(filepath.Join(rep.Dir, "comparison.txt"), txt.Bytes(), true); err != nil {
		return err
	}
	if err := atomicfile.Write(filepath.Join(rep.Dir, "comparison.json"), js.Bytes(), true); err != nil {
		return err
	}
	if !distinctNoise(runs) {
		fmt.Fprintln(log, "chord plan: every level has the same noise: no widths.png")
		return nil
	}
	return c.WritePlot(filepath.Join(rep.Dir, "widths.png"))
}

func distinctNoise(runs []report.CompareRun) bool {
	for _, r := range runs[1:] {
		if r.NoisePPM != runs[0].NoisePPM {
			return true
		}
	}
	return false
}

// openPlan starts a new plan in opt.Dir (copying the scenario and writing
// plan.toml) or reopens the one there. A new plan's request must equal the
// stored one when the directory already holds a plan.
func openPlan(opt PlanOptions) (*PlanSpec, error) {
	planPath := filepath.Join(opt.Dir, PlanFile)
	var stored *PlanSpec
	if _, err := os.Stat(planPath); err == nil {
		stored = &PlanSpec{}
		if _, err := config.DecodeStrict(planPath, stored); err != nil {
			return nil, err
		}
		if err := stored.check(); err != nil {
			return nil, fmt.Errorf("%s: %w", planPath, err)
		}
	}
	if opt.Demo && opt.ScenarioPath != "" {
		return nil, errors.New("plan: a scenario file and the demo scenario both given; use one")
	}
	if opt.ScenarioPath == "" && !opt.Demo {
		if stored == nil {
			return nil, fmt.Errorf("plan: %s holds no plan (%s); give a scenario with -c to start one", opt.Dir, PlanFile)
		}
		return stored, nil
	}
	// Check the scenario before anything is written.
	var text []byte
	scDir := ""
	if opt.Demo {
		sc, err := DemoScenario()
		if err != nil {
			return nil, err
		}
		if err := checkPlanDetect(DemoScenarioName, &sc.Config, opt.Spec.Detect); err != nil {
			return nil, err
		}
		if text, err = scenarioText(sc); err != nil {
			return nil, err
		}
	} else {
		sc, err := simulate.LoadScenario(opt.ScenarioPath)
		if err != nil {
			return nil, err
		}
		if err := checkPlanDetect(opt.ScenarioPath, &sc.Config, opt.Spec.Detect); err != nil {
			return nil, err
		}
		if text, err = os.ReadFile(opt.ScenarioPath); err != nil {
			return nil, fmt.Errorf("plan: %w", err)
		}
		if scDir, err = filepath.Abs(filepath.Dir(opt.ScenarioPath)); err != nil {
			return nil, err
		}
	}
	spec := opt.Spec
	spec.ScenarioDir = scDir
	var err error
	for _, p := range []*string{&spec.BinsFile, &spec.NoiseFile} {
		if *p != "" {
			if *p, err = filepath.Abs(*p); err != nil {
				return nil, err
			}
		}
	}
	sum := sha256.Sum256(text)
	spec.ScenarioSHA256 = hex.EncodeToString(sum[:])
	if err := spec.check(); err != nil {
		return nil, err
	}
	if stored != nil {
		if diff := planDiff(stored, &spec); diff != "" {
			return nil, fmt.Errorf("plan: %s %w: %s", opt.Dir, ErrOtherPlan, diff)
		}
		return stored, nil
	}
	if err := checkPlanDir(opt.Dir); err != nil {
		return nil, err
	}
	if err := os.MkdirAll(opt.Dir, 0o755); err != nil {
		return nil, err
	}
	if err := atomicfile.Write(filepath.Join(opt.Dir, "scenario.toml"), text, false); err != nil {
		return nil, err
	}
	var b bytes.Buffer
	name := opt.ScenarioPath
	if opt.Demo {
		name = DemoScenarioName
	}
	fmt.Fprintf(&b, "# Plan written by chord %s from scenario %s. Resume it with: chord plan -o %s\n", version.Version, name, opt.Dir)
	if err := toml.NewEncoder(&b).Encode(&spec); err != nil {
		return nil, err
	}
	if err := atomicfile.Write(planPath, b.Bytes(), false); err != nil {
		return nil, err
	}
	return &spec, nil
}

// checkPlanDir refuses a directory that holds something but no plan.
func checkPlanDir(dir string) error {
	if _, err := os.Stat(filepath.Join(dir, PlanFile)); err == nil {
		return nil
	}
	if names, err := runlock.Entries(dir); err != nil {
		return err
	} else if len(names) > 0 {
		return fmt.Errorf("plan: directory %s is not empty (it holds %s) and holds no plan (%s): choose another", dir, names[0], PlanFile)
	}
	return nil
}

// planDiff says how the request asked differs from the stored plan, ""
// when it asks for the same plan. Files (bins, noise) are compared by
// their contents and the scenario by its digest, never by path: a plan
// is the same however its files are named, from wherever it is run, and
// after it is moved.
func planDiff(stored, asked *PlanSpec) string {
	a, b := stored.fields(), asked.fields()
	var diffs []string
	for i := range a {
		if a[i].key != b[i].key {
			diffs = append(diffs, fmt.Sprintf("its %s is %s, this request's %s", a[i].name, a[i].show, b[i].show))
		}
	}
	return strings.Join(diffs, "; ")
}

// planField is a setting of a plan: key is what is compared, show how it
// is named in messages.
type planField struct{ name, show, key string }

func (p *PlanSpec) fields() []planField {
	val := func(name string, v any) planField { s := fmt.Sprint(v); return planField{name, s, s} }
	file := func(name, path string) planField {
		if path == "" {
			return planField{name, "none", ""}
		}
		h, _, err := filehash.File(path)
		if err != nil {
			return planField{name, fmt.Sprintf("%s (%v)", path, err), "unreadable " + path}
		}
		return planField{name, fmt.Sprintf("%s (SHA-256 %s)", path, filehash.Short(h)), h}
	}
	return []planField{
		{"scenario", "SHA-256 " + filehash.Short(p.ScenarioSHA256), p.ScenarioSHA256},
		val("noise levels (ppm)", p.NoisePPM), val("numbers of transits", p.Transits),
		file("bins file", p.BinsFile), val("wavelength range (um)", p.RangeUm), val("resolving power", p.ResolvingPower),
		file("noise file", p.NoiseFile), val("single-transit noise (ppm)", p.SingleNoisePPM),
		val("Gaussian noise (--noise-seed)", p.Scatter), val("noise seed", p.NoiseSeed),
		val("step count", p.Steps), val("budget (s)", p.Budget), val("until-converged rule", p.UntilConverged),
	}
}

// keepOrWriteObservation writes o to path, or, when path exists, checks
// that it holds the same observation (a resumed plan must fit what it
// simulated). The data are compared as the file gives them (bins, depths
// and errors after reading), not its comment lines, which say how and
// where it was made.
func keepOrWriteObservation(path string, o *obs.Observation) error {
	if _, err := os.Stat(path); errors.Is(err, os.ErrNotExist) {
		return obs.WriteObservation(path, o, false)
	}
	old, err := obs.ReadDataset(path)
	if err != nil {
		return err
	}
	tmp := filepath.Join(filepath.Dir(path), ".check-"+filepath.Base(path))
	if err := obs.WriteObservation(tmp, o, true); err != nil {
		return err
	}
	now, err := obs.ReadDataset(tmp)
	os.Remove(tmp)
	if err != nil {
		return err
	}
	if diff := observationDiff(old, now); diff != "" {
		return fmt.Errorf("%s differs from the observation simulated now: %s (did the scenario's opacity tables or the program change?); remove the level's directory to simulate and fit it again", path, diff)
	}
	return nil
}

// observationDiff names the first difference between the data of two
// observations, "" when they are the same.
func observationDiff(old, now *obs.Dataset) string {
	if old.Len() != now.Len() {
		return fmt.Sprintf("it has %d bins, the simulation %d", old.Len(), now.Len())
	}
	for i := range old.Lo {
		what := ""
		switch {
		case old.Lo[i] != now.Lo[i] || old.Hi[i] != now.Hi[i]:
			what = fmt.Sprintf("bin %.6g-%.6g um, simulated %.6g-%.6g um", old.Lo[i]/forward.Micron, old.Hi[i]/forward.Micron, now.Lo[i]/forward.Micron, now.Hi[i]/forward.Micron)
		case old.Depth[i] != now.Depth[i]:
			what = fmt.Sprintf("depth %.12g ppm, simulated %.12g ppm", old.Depth[i]*1e6, now.Depth[i]*1e6)
		case old.Sigma[i] != now.Sigma[i]:
			what = fmt.Sprintf("error %.12g ppm, simulated %.12g ppm", old.Sigma[i]*1e6, now.Sigma[i]*1e6)
		default:
			continue
		}
		return fmt.Sprintf("line %d has %s", old.Line[i], what)
	}
	return ""
}

func sha256Sum(b []byte) []byte { s := sha256.Sum256(b); return s[:] }

// DemoScenarioName names the demo's scenario in outputs.
const DemoScenarioName = "the chord demo scenario"

// DemoScenario returns the scenario of chord demo: the invented warm
// sub-Neptune Ossery b, its truth (DemoTruth, with the bins of the demo
// observation) and the free parameters and sampler settings of the demo's
// retrieval configuration. Demo opacities: not for science.
func DemoScenario() (*simulate.Scenario, error) {
	truth, err := DemoTruth()
	if err != nil {
		return nil, err
	}
	text, err := demoFiles.ReadFile("testdata/demo/" + DemoConfigFile)
	if err != nil {
		return nil, err
	}
	cfg, err := config.Decode(string(text), DemoConfigFile, "")
	if err != nil {
		return nil, err
	}
	truth.BaseDir = ""
	return &simulate.Scenario{Path: DemoScenarioName, Config: config.Config{ModelConfig: *truth, Parameters: cfg.Parameters, Sampler: cfg.Sampler}}, nil
}

// scenarioText is the scenario as a TOML file (for a plan's copy).
func scenarioText(sc *simulate.Scenario) ([]byte, error) {
	var b bytes.Buffer
	fmt.Fprintf(&b, "# Scenario %s, written by chord %s.\n", sc.Path, version.Version)
	c := sc.Config
	c.Observations = nil
	if err := toml.NewEncoder(&b).Encode(c); err != nil {
		return nil, err
	}
	return b.Bytes(), nil
}
