package campaign

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strings"

	"github.com/BurntSushi/toml"

	"chord/config"
	"chord/forward/opacity"
	"chord/internal/atomicfile"
	"chord/internal/logto"
	"chord/internal/version"
	"chord/priors"
	"chord/report"
	"chord/retrieve"
	"chord/sampler"
)

// Detection of gases by evidence (chord detect): the full model and, for
// each gas, the reduced model without it, all fitted by nested sampling
// into one directory:
//
//	detect.toml                 what was asked: the configuration (path, SHA-256) and the gases
//	full/                       the full model's run directory
//	without-<gas>/              the reduced model's run directory, one per gas
//	detection.txt, detection.json   the detections (report.DetectionTable)
//
// Every run is an ordinary run directory (chord resume continues it). A
// detection stopped at any point resumes when run again on the same
// directory: finished runs are kept, started ones resumed, the rest
// started; the configuration must not have changed.

// DetectFile is the request stored in a detection directory.
const DetectFile = "detect.toml"

// ErrOtherDetection is the error of a detection asked for in a directory
// that holds a different one.
var ErrOtherDetection = errors.New("holds a different detection")

// DetectSpec is what a detection is asked to do (detect.toml).
type DetectSpec struct {
	ConfigFile   string   `toml:"config_file"` // absolute path
	ConfigSHA256 string   `toml:"config_sha256"`
	Gases        []string `toml:"gases"`
}

// DetectOptions configures RunDetect.
type DetectOptions struct {
	Dir string
	// ConfigPath is the retrieval configuration of a new detection (its
	// sampler.method must be "nested"); "" resumes the detection in Dir.
	ConfigPath string
	// Gases to test; nil means every gas with a free log10 mixing ratio
	// of uniform prior. Ignored when resuming.
	Gases     []string
	Stop      config.StopRule // overrides the runs' stopping rule (a budget per run)
	Workers   *int
	DemoCache string
	Progress  retrieve.Progress
	Log       io.Writer // nil means Progress.Writer
	// OnFit, when set, is told after each run ends how many of the runs
	// are done and how many there are (once before the first, too).
	OnFit func(done, total int)
}

// DetectReport is what RunDetect returns.
type DetectReport struct {
	Dir         string
	Interrupted bool // a run was stopped; the detection resumes when run again
	Table       *report.DetectionTable
	Text        string
}

// DetectRunDir is the run directory of the reduced model without gas
// ("" for the full model) in a detection directory.
func DetectRunDir(dir, gas string) string {
	if gas == "" {
		return filepath.Join(dir, "full")
	}
	return filepath.Join(dir, "without-"+unsafeName.ReplaceAllString(gas, "_"))
}

var unsafeName = regexp.MustCompile(`[^A-Za-z0-9_.+-]`)

// RunDetect runs or resumes the detection in opt.Dir.
func RunDetect(ctx context.Context, opt DetectOptions) (*DetectReport, error) {
	log := logto.First(opt.Log, opt.Progress.Writer)
	spec, err := openDetect(opt)
	if err != nil {
		return nil, err
	}
	text, err := os.ReadFile(spec.ConfigFile)
	if err != nil {
		return nil, fmt.Errorf("detect: %w", err)
	}
	if hex.EncodeToString(sha256Sum(text)) != spec.ConfigSHA256 {
		return nil, fmt.Errorf("detect: %s changed since the detection started (its SHA-256 differs from %s's); restore it, or start a new detection in another directory", spec.ConfigFile, filepath.Join(opt.Dir, DetectFile))
	}
	r, err := config.Load(spec.ConfigFile)
	if err != nil {
		return nil, err
	}
	set, err := r.Config.LoadOpacity(opt.DemoCache, log)
	if err != nil {
		return nil, config.InFile(spec.ConfigFile, err)
	}
	runs := append([]string{""}, spec.Gases...)
	done := func(n int) {
		if opt.OnFit != nil {
			opt.OnFit(n, len(runs))
		}
	}
	done(0)
	sums := map[string]report.DetectRun{}
	for i, g := range runs {
		var without []string
		if g != "" {
			without = []string{g}
		}
		run := DetectRunDir(opt.Dir, g)
		rep, err := detectFit(ctx, "chord detect", spec.ConfigFile, run, without, set, fitSettings{opt.Stop, opt.Workers, opt.DemoCache, opt.Progress, log})
		if err != nil {
			return nil, fmt.Errorf("detect: %s: %w", run, err)
		}
		if rep.Outcome != nil && rep.Outcome.Stop == sampler.StopCanceled {
			return &DetectReport{Dir: opt.Dir, Interrupted: true}, nil
		}
		if rep.Summary == nil {
			return nil, fmt.Errorf("detect: %s stopped before it could be summarised (%s); run chord detect -o %s again to resume it", run, strings.TrimSpace(rep.SummaryText), opt.Dir)
		}
		if rep.Summary.Evidence == nil {
			return nil, fmt.Errorf("detect: %s has no evidence", run)
		}
		if !rep.Summary.Evidence.Finished {
			fmt.Fprintf(log, "chord detect: %s stopped before its evidence tolerance (budget); its ln Z is an estimate\n", run)
		}
		sums[g] = report.DetectRun{Dir: run, Summary: rep.Summary}
		done(i + 1)
	}
	t := &report.DetectionTable{}
	if err := t.DetectByEvidence("", sums[""], spec.Gases, sums); err != nil {
		return nil, err
	}
	out := &DetectReport{Dir: opt.Dir, Table: t}
	if out.Text, err = writeDetection(opt.Dir, t); err != nil {
		return nil, err
	}
	return out, nil
}

// writeDetection writes detection.txt and detection.json in dir and
// returns the text.
func writeDetection(dir string, t *report.DetectionTable) (string, error) {
	var txt, js bytes.Buffer
	if err := t.WriteText(&txt); err != nil {
		return "", err
	}
	if err := t.WriteJSON(&js); err != nil {
		return "", err
	}
	if err := atomicfile.Write(filepath.Join(dir, "detection.txt"), txt.Bytes(), true); err != nil {
		return "", err
	}
	if err := atomicfile.Write(filepath.Join(dir, "detection.json"), js.Bytes(), true); err != nil {
		return "", err
	}
	return txt.String(), nil
}

// fitSettings are the settings every fit of a detection shares.
type fitSettings struct {
	stop    config.StopRule
	workers *int
	cache   string
	prog    retrieve.Progress
	log     io.Writer
}

// detectFit keeps a run whose nested sampling finished, resumes a started
// one, or starts it (the reduced model without the gases named).
func detectFit(ctx context.Context, who, cfg, run string, without []string, set *opacity.Set, f fitSettings) (*retrieve.RunReport, error) {
	if s, err := report.ReadSummary(run); err == nil && s.Evidence != nil && s.Evidence.Finished {
		fmt.Fprintf(f.log, "%s: %s is done; kept\n", who, run)
		return &retrieve.RunReport{Dir: run, Summary: s}, nil
	}
	if _, err := os.Stat(filepath.Join(run, retrieve.CheckpointFile)); err == nil {
		fmt.Fprintf(f.log, "%s: resuming %s\n", who, run)
		return retrieve.Resume(ctx, run, retrieve.ResumeOptions{Stop: f.stop, Workers: f.workers, Opacity: set, DemoCache: f.cache, Progress: f.prog, Log: f.log})
	}
	fmt.Fprintf(f.log, "%s: fitting %s\n", who, run)
	return retrieve.Fit(ctx, retrieve.FitOptions{ConfigPath: cfg, RunDir: run, Force: true, Workers: f.workers, Stop: f.stop, Opacity: set,
		DemoCache: f.cache, Progress: f.prog, Log: f.log, Without: without})
}

// DetectableGases lists the gases of r whose log10 mixing ratio is free
// with a uniform prior: those a detection can test.
func DetectableGases(r *config.Resolved) []string {
	var g []string
	for _, p := range r.Free {
		if _, ok := p.Prior.(priors.Uniform); ok && p.Sets == config.QLog10VMR {
			g = append(g, p.Gas)
		}
	}
	return g
}

// checkDetectable checks that r is fitted by nested sampling and that each
// gas can be tested (a free log10 mixing ratio with a uniform prior); it
// returns the gases, all the detectable ones when gases is empty.
func checkDetectable(path string, r *config.Resolved, gases []string) ([]string, error) {
	if r.Method != config.MethodNested {
		return nil, fmt.Errorf("%s: a detection by evidence compares the evidences of nested-sampling runs: set method = \"nested\" in [sampler] (and remove walkers and move)", path)
	}
	ok := DetectableGases(r)
	if len(gases) == 0 {
		if len(ok) == 0 {
			return nil, fmt.Errorf("%s: no gas has a free log10 mixing ratio with a uniform prior: nothing to detect", path)
		}
		return ok, nil
	}
	for _, g := range gases {
		if !slices.Contains(ok, g) {
			return nil, fmt.Errorf("%s: gas %s has no free log10 mixing ratio with a uniform prior (gases that have one: %v)", path, g, ok)
		}
	}
	return gases, nil
}

// openDetect starts a new detection in opt.Dir (writing detect.toml) or
// reopens the one there; a new request must equal a stored one.
func openDetect(opt DetectOptions) (*DetectSpec, error) {
	path := filepath.Join(opt.Dir, DetectFile)
	var stored *DetectSpec
	if _, err := os.Stat(path); err == nil {
		stored = &DetectSpec{}
		if _, err := config.DecodeStrict(path, stored); err != nil {
			return nil, err
		}
	}
	if opt.ConfigPath == "" {
		if stored == nil {
			return nil, fmt.Errorf("detect: %s holds no detection (%s); give a configuration with -c to start one", opt.Dir, DetectFile)
		}
		return stored, nil
	}
	abs, err := filepath.Abs(opt.ConfigPath)
	if err != nil {
		return nil, err
	}
	text, err := os.ReadFile(abs)
	if err != nil {
		return nil, fmt.Errorf("detect: %w", err)
	}
	r, err := config.Load(abs)
	if err != nil {
		return nil, err
	}
	gases, err := checkDetectable(opt.ConfigPath, r, opt.Gases)
	if err != nil {
		return nil, err
	}
	sum := sha256.Sum256(text)
	spec := &DetectSpec{ConfigFile: abs, ConfigSHA256: hex.EncodeToString(sum[:]), Gases: gases}
	if stored != nil {
		if stored.ConfigFile != spec.ConfigFile || stored.ConfigSHA256 != spec.ConfigSHA256 || !slices.Equal(stored.Gases, spec.Gases) {
			return nil, fmt.Errorf("detect: %s %w (%s differs from this request: configuration or gases)", opt.Dir, ErrOtherDetection, path)
		}
		return stored, nil
	}
	if ents, err := os.ReadDir(opt.Dir); err == nil && len(ents) > 0 {
		return nil, fmt.Errorf("detect: directory %s is not empty and holds no detection: choose another", opt.Dir)
	}
	if err := os.MkdirAll(opt.Dir, 0o755); err != nil {
		return nil, err
	}
	var b bytes.Buffer
	fmt.Fprintf(&b, "# Detection by evidence written by chord %s. Resume it with: chord detect -o %s\n", version.Version, opt.Dir)
	if err := toml.NewEncoder(&b).Encode(spec); err != nil {
		return nil, err
	}
	if err := atomicfile.Write(path, b.Bytes(), false); err != nil {
		return nil, err
	}
	return spec, nil
}
