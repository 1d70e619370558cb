package retrieve

import (
	"bytes"
	"context"
	"embed"
	"fmt"
	"io"
	"math/rand/v2"
	"os"
	"path/filepath"

	"chord/forward"
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
	Progress  Progress
	Log       io.Writer
}

// DemoTruth returns the truth configuration of the demo scenario.
func DemoTruth() (*ModelConfig, error) {
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
	return DecodeModelConfig(path)
}

// SimulateObservation computes the binned transit depth of the model
// configuration truth (with its [spectrum] bins) and writes it as an
// observation table to path, with an error of errPPM per bin and, when
// noisy, Gaussian noise of that size drawn from seed.
func SimulateObservation(path string, truth *ModelConfig, cache string, log io.Writer, errPPM float64, noisy bool, seed uint64) error {
	set, err := truth.LoadOpacity(cache, log)
	if err != nil {
		return err
	}
	m, st, err := truth.Build(set)
	if err != nil {
		return err
	}
	fc, err := truth.ForwardConfig(set, nil)
	if err != nil {
		return err
	}
	depth := make([]float64, m.OutputLen())
	if err := m.Transit(depth, &st, m.NewWorkspace()); err != nil {
		return fmt.Errorf("simulating the observation: %w", err)
	}
	sigma := make([]float64, len(depth))
	if err := (Noise{PPM: errPPM}).Errors(sigma); err != nil {
		return err
	}
	noise := "noise-free"
	if noisy {
		noise = fmt.Sprintf("Gaussian noise of the stated error, seed %d", seed)
		AddNoise(depth, sigma, rand.New(rand.NewPCG(seed, 0)))
	}
	var b bytes.Buffer
	fmt.Fprintf(&b, "# Simulated observation of %s (invented) made by chord %s with the demo opacities: NOT FOR SCIENCE.\n", truth.Planet.Name, Version)
	fmt.Fprintf(&b, "# Truth: %s; error %g ppm per bin; %s.\n", truth.Planet.Name, errPPM, noise)
	b.WriteString("edge_low_um,edge_high_um,depth_ppm,error\n")
	for i := range depth {
		fmt.Fprintf(&b, "%.8f,%.8f,%.3f,%.3f\n", fc.Bins.Lo[i]/forward.Micron, fc.Bins.Hi[i]/forward.Micron, depth[i]*1e6, sigma[i]*1e6)
	}
	return writeFileAtomic(osFS{}, path, b.Bytes())
}

// Demo simulates the demo observation, writes the retrieval configuration
// and observation to opt.Dir, fits them into opt.Dir/run and reports.
func Demo(ctx context.Context, opt DemoOptions) (*RunReport, error) {
	log := logTo(opt.Log)
	if err := os.MkdirAll(opt.Dir, 0o755); err != nil {
		return nil, err
	}
	cfgPath := filepath.Join(opt.Dir, DemoConfigFile)
	obsPath := filepath.Join(opt.Dir, DemoObservationFile)
	runDir := filepath.Join(opt.Dir, DemoRunDir)
	if !opt.Force {
		for _, p := range []string{cfgPath, obsPath, runDir} {
			if _, err := os.Stat(p); err == nil {
				return nil, fmt.Errorf("%s already exists (an earlier demo?): choose another directory with -o, or pass --force", p)
			}
		}
	}
	truth, err := DemoTruth()
	if err != nil {
		return nil, err
	}
	cache := opt.DemoCache
	if cache == "" {
		if cache, err = DemoCacheDir(); err != nil {
			return nil, err
		}
	}
	fmt.Fprintf(log, "chord demo: simulating the spectrum of %s (an invented planet around the invented M dwarf %s), %g ppm noise per bin\n", truth.Planet.Name, truth.Star.Name, DemoNoisePPM)
	if err := SimulateObservation(obsPath, truth, cache, log, DemoNoisePPM, true, DemoNoiseSeed); err != nil {
		return nil, fmt.Errorf("demo: %w", err)
	}
	text, err := demoFiles.ReadFile("testdata/demo/" + DemoConfigFile)
	if err != nil {
		return nil, err
	}
	if err := writeFileAtomic(osFS{}, cfgPath, text); err != nil {
		return nil, err
	}
	rep, err := Fit(ctx, FitOptions{ConfigPath: cfgPath, RunDir: runDir, Force: opt.Force, Workers: opt.Workers, DemoCache: cache, Progress: opt.Progress, Log: log})
	if rep != nil {
		rep.ConfigFile, rep.ObservationFile = cfgPath, obsPath
	}
	return rep, err
}
