package campaign

import (
	"context"
	"embed"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"

	"chord/config"
	"chord/internal/atomicfile"
	"chord/internal/logto"
	"chord/internal/runlock"
	"chord/retrieve"
	"chord/simulate"
)

// The demo: an invented scenario (testdata/demo of this package, embedded
// so that an installed chord carries it), simulated with a fixed seed,
// fitted and reported.
//
//	ossery-b-truth.toml  the truth: a `chord spectrum` model configuration
//	ossery-b.toml        the retrieval configuration the demo fits
//
// The observation is the truth's binned transit depth plus Gaussian noise
// of DemoNoisePPM per bin, drawn with DemoNoiseSeed.

//go:embed testdata/demo/ossery-b-truth.toml testdata/demo/ossery-b.toml
var demoFiles embed.FS

// Demo noise model: a constant error per bin (ppm), from a fixed seed.
// Seed 2 gives a typical draw: chi-square 86.4 for the 86 bins at the
// truth (seed 7, say, gives 117, a 2.4 sigma fluctuation that would make
// the demo's reduced chi-square look like a misfit).
const (
	DemoNoisePPM  = 35.0
	DemoNoiseSeed = 2
)

// Demo file names in the demo directory.
const (
	DemoConfigFile      = "ossery-b.toml"
	DemoObservationFile = "ossery-b-observation.csv"
	DemoRunDir          = "run"
)

// DemoOptions configures Demo.
type DemoOptions struct {
	Dir       string // directory for the configuration, observation and run
	Force     bool   // replace an earlier demo in Dir
	Workers   *int
	DemoCache string
	Progress  retrieve.Progress
	Log       io.Writer
	HTML      bool // also write report.html
}

// DemoTruth returns the truth configuration of the demo scenario.
func DemoTruth() (*config.ModelConfig, error) {
	text, err := demoFiles.ReadFile("testdata/demo/ossery-b-truth.toml")
	if err != nil {
		return nil, err
	}
	dir, err := os.MkdirTemp("", "chord-demo-truth")
	if err != nil {
		return nil, err
	}
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "ossery-b-truth.toml")
	if err := os.WriteFile(path, text, 0o644); err != nil {
		return nil, err
	}
	return config.LoadModel(path)
}

// Demo simulates the demo observation, writes the retrieval configuration
// and observation to opt.Dir, fits them into opt.Dir/run and reports.
func Demo(ctx context.Context, opt DemoOptions) (*retrieve.RunReport, error) {
	log := logto.First(opt.Log)
	cfgPath := filepath.Join(opt.Dir, DemoConfigFile)
	obsPath := filepath.Join(opt.Dir, DemoObservationFile)
	runDir := filepath.Join(opt.Dir, DemoRunDir)
	// The demo's directory is locked while it writes the files beside its
	// run (the fit locks the run directory itself).
	lock, err := runlock.Create(opt.Dir, runlock.Holder("chord demo"), func() error {
		if opt.Force {
			return nil
		}
		for _, p := range []string{cfgPath, obsPath, runDir} {
			if _, err := os.Stat(p); err == nil {
				return fmt.Errorf("%s already exists (an earlier demo?): %w", p, fs.ErrExist)
			}
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	defer lock.Release()
	truth, err := DemoTruth()
	if err != nil {
		return nil, err
	}
	fmt.Fprintf(log, "chord demo: simulating the spectrum of %s (an invented planet around the invented M dwarf %s), %g ppm noise per bin\n", truth.Planet.Name, truth.Star.Name, DemoNoisePPM)
	if err := simulate.ObserveModel(obsPath, truth, opt.DemoCache, log, DemoNoisePPM, true, DemoNoiseSeed); err != nil {
		return nil, fmt.Errorf("demo: %w", err)
	}
	text, err := demoFiles.ReadFile("testdata/demo/" + DemoConfigFile)
	if err != nil {
		return nil, err
	}
	if err := atomicfile.Write(cfgPath, text, true); err != nil {
		return nil, err
	}
	rep, err := retrieve.Fit(ctx, retrieve.FitOptions{ConfigPath: cfgPath, RunDir: runDir, Force: opt.Force, Workers: opt.Workers, DemoCache: opt.DemoCache, Progress: opt.Progress, Log: log, Truth: truth, HTML: opt.HTML})
	if rep != nil {
		rep.ConfigFile, rep.ObservationFile = cfgPath, obsPath
	}
	return rep, err
}
