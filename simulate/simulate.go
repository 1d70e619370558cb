package simulate

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"path/filepath"

	"chord/config"
	"chord/forward"
	"chord/forward/opacity"
	"chord/internal/version"
	"chord/obs"
)

// Simulated observations (chord simulate, chord plan).
//
// A scenario's true spectrum, binned onto the instrument's bins, with an
// error bar per bin from a noise model:
//
//   - a constant error in ppm of transit depth, or
//   - per-bin errors read from a file,
//
// either for one transit and divided by sqrt(N) for N transits (photon
// noise averages down as 1/sqrt(N) for independent transits; fact of the
// trade). The depth is either the noise-free model (the usual choice for
// forecasts: the posterior is then centred on the truth and its width is
// the expected one, without the scatter of one noise draw) or the model
// plus Gaussian noise drawn from a seeded generator.

// Noise is the noise model of a simulated observation.
type Noise struct {
	// PPM is a constant single-transit error per bin (ppm of transit
	// depth); used when PerBinPPM is nil. Must be positive.
	PPM float64
	// PerBinPPM are single-transit errors per bin (ppm), one per bin.
	PerBinPPM []float64
	// Transits N divides the single-transit errors by sqrt(N); 0 means 1.
	Transits int
}

// Errors fills dst (len n, the number of bins) with the errors as a
// fraction of transit depth, or returns an error naming the bad value.
func (nz Noise) Errors(dst []float64) error {
	n := nz.Transits
	if n == 0 {
		n = 1
	}
	if n < 0 {
		return fmt.Errorf("noise: %d transits: must be at least 1", nz.Transits)
	}
	scale := 1e-6 / math.Sqrt(float64(n))
	if nz.PerBinPPM == nil {
		if !(nz.PPM > 0) || math.IsInf(nz.PPM, 0) {
			return fmt.Errorf("noise: %g ppm: must be positive and finite", nz.PPM)
		}
		for i := range dst {
			dst[i] = nz.PPM * scale
		}
		return nil
	}
	if len(nz.PerBinPPM) != len(dst) {
		return fmt.Errorf("noise: %d per-bin errors for %d bins", len(nz.PerBinPPM), len(dst))
	}
	for i, e := range nz.PerBinPPM {
		if !(e > 0) || math.IsInf(e, 0) {
			return fmt.Errorf("noise: bin %d: error %g ppm: must be positive and finite", i+1, e)
		}
		dst[i] = e * scale
	}
	return nil
}

// AddNoise adds Gaussian noise of standard deviation sigma[i] to depth[i]
// in place, drawing from rng (one normal deviate per bin, in bin order).
func AddNoise(depth, sigma []float64, rng *rand.Rand) {
	if len(depth) != len(sigma) {
		panic("retrieve: AddNoise length mismatch")
	}
	for i := range depth {
		depth[i] += sigma[i] * rng.NormFloat64()
	}
}

// Scenario is an invented planet to observe and fit: a retrieval
// configuration (Config, the schema of chord fit) without [[observations]].
// Its model sections are the truth that Simulate observes, and [spectrum]
// may give the instrument's bins; its [[parameters]] and [sampler] are
// what a plan fits.
type Scenario struct {
	Path   string
	Config config.Config // as decoded, BaseDir set
}

// LoadScenario reads a scenario file. Unknown keys, [[observations]] and
// invalid model sections are errors naming the file and key.
func LoadScenario(path string) (*Scenario, error) {
	s := &Scenario{Path: path}
	if _, err := config.DecodeStrict(path, &s.Config); err != nil {
		return nil, fmt.Errorf("scenario %w", err)
	}
	if len(s.Config.Observations) > 0 {
		return nil, fmt.Errorf("scenario %s: [[observations]] do not belong in a scenario: its observations are simulated", path)
	}
	s.Config.BaseDir = filepath.Dir(path)
	if err := s.Config.ModelConfig.Validate(); err != nil {
		return nil, fmt.Errorf("scenario %s: %w", path, err)
	}
	return s, nil
}

// Bins returns the instrument bins of the scenario's [spectrum], or nil
// when it gives none.
func (s *Scenario) Bins() (*forward.Bins, error) {
	b, err := s.Config.ModelConfig.Bins()
	if err != nil {
		return nil, fmt.Errorf("scenario %s: %w", s.Path, err)
	}
	return b, nil
}

// Spectrum returns the scenario's true transit depth on bins, computed
// with the tables of set.
func (s *Scenario) Spectrum(set *opacity.Set, bins forward.Bins) ([]float64, error) {
	fc, err := s.Config.ModelConfig.ForwardConfig(set, &bins)
	if err != nil {
		return nil, fmt.Errorf("scenario %s: %w", s.Path, err)
	}
	m, err := forward.NewModel(fc)
	if err != nil {
		return nil, fmt.Errorf("scenario %s: %w", s.Path, err)
	}
	st, err := s.Config.ModelConfig.State(m)
	if err != nil {
		return nil, fmt.Errorf("scenario %s: %w", s.Path, err)
	}
	depth := make([]float64, m.OutputLen())
	if err := m.Transit(depth, &st, m.NewWorkspace()); err != nil {
		return nil, fmt.Errorf("scenario %s: the true state: %w", s.Path, err)
	}
	return depth, nil
}

// Options say how to observe a scenario.
type Options struct {
	Noise Noise
	// Scatter draws Gaussian noise with Seed; false writes the noise-free
	// spectrum with its error bars (the usual choice for forecasts).
	Scatter bool
	Seed    uint64
}

// Simulate observes the scenario on bins: its true spectrum, error bars
// from the noise model and, with Scatter, Gaussian noise drawn from a PCG
// generator seeded with (Seed, 0).
func (s *Scenario) Simulate(set *opacity.Set, bins forward.Bins, opt Options) (*obs.Observation, error) {
	depth, err := s.Spectrum(set, bins)
	if err != nil {
		return nil, err
	}
	sigma := make([]float64, len(depth))
	if err := opt.Noise.Errors(sigma); err != nil {
		return nil, err
	}
	o := &obs.Observation{Lo: bins.Lo, Hi: bins.Hi, Depth: depth, Sigma: sigma}
	name := s.Config.Planet.Name
	if name == "" {
		name = "the planet"
	}
	o.Header = append(o.Header, fmt.Sprintf("simulated by chord %s from scenario %s (%s)", version.Version, s.Path, name))
	o.Header = append(o.Header, "noise: "+opt.Noise.String())
	if opt.Scatter {
		AddNoise(o.Depth, sigma, rand.New(rand.NewPCG(opt.Seed, 0)))
		o.Header = append(o.Header, fmt.Sprintf("Gaussian noise drawn with seed %d", opt.Seed))
	} else {
		o.Header = append(o.Header, "noise-free: the depths are the true model, the errors are the noise model's")
	}
	if set.Demo {
		o.Header = append(o.Header, "demo opacity tables: NOT FOR SCIENCE")
	}
	return o, nil
}

// String describes the noise model, e.g. "60 ppm per bin for one transit,
// / sqrt(4 transits) = 30 ppm".
func (nz Noise) String() string {
	n := max(nz.Transits, 1)
	var s string
	if nz.PerBinPPM != nil {
		s = fmt.Sprintf("per-bin errors (median %.4g ppm) for one transit", obs.NoiseLevel(nz.PerBinPPM))
	} else {
		s = fmt.Sprintf("%.4g ppm per bin for one transit", nz.PPM)
	}
	if n > 1 {
		s += fmt.Sprintf(", / sqrt(%d transits)", n)
		if nz.PerBinPPM == nil {
			s += fmt.Sprintf(" = %.4g ppm", nz.PPM/math.Sqrt(float64(n)))
		}
	}
	return s
}

// FitConfig returns the retrieval configuration that fits the scenario to
// the observation file obsPath: the scenario's sections with the bins
// removed from [spectrum] (a fit takes the observation's), relative paths
// made absolute, and one [[observations]] table.
func (s *Scenario) FitConfig(obsPath string) (*config.Config, error) {
	c := s.Config
	sp := &c.Spectrum
	sp.BinEdgesUm, sp.BinCentresUm, sp.BinWidthsUm, sp.BinResolvingPower = nil, nil, nil, nil
	if c.Opacity.Dir != "" {
		c.Opacity.Dir = c.Abs(c.Opacity.Dir)
	}
	abs, err := filepath.Abs(obsPath)
	if err != nil {
		return nil, err
	}
	c.Observations = []config.ObservationConfig{{File: abs}}
	c.BaseDir = filepath.Dir(abs)
	return &c, nil
}

// ObservingSpec is how chord simulate and chord plan are told to observe:
// the bins (a bins file; or a wavelength range with a resolving power; or,
// when neither is given, the noise file's bins or else the scenario's
// [spectrum] bins) and the noise (a constant, or the error_ppm column of a
// noise file, for one transit, divided by sqrt(Transits)).
type ObservingSpec struct {
	BinsFile       string
	RangeUm        [2]float64 // wavelength range, um; with ResolvingPower
	ResolvingPower float64
	NoiseFile      string  // a bins file with an error_ppm column
	NoisePPM       float64 // constant single-transit error, ppm; with no NoiseFile
	Transits       int     // 0 means 1
}

// Resolve returns the bins and the noise model of spec for the scenario,
// or an error naming the option or file at fault.
func (spec ObservingSpec) Resolve(sc *Scenario) (forward.Bins, Noise, error) {
	var bins *forward.Bins
	ways := 0
	if spec.BinsFile != "" {
		ways++
		b, _, err := obs.ReadBins(spec.BinsFile)
		if err != nil {
			return forward.Bins{}, Noise{}, err
		}
		bins = &b
	}
	if spec.RangeUm != [2]float64{} || spec.ResolvingPower != 0 {
		ways++
		if spec.ResolvingPower == 0 || spec.RangeUm == [2]float64{} {
			return forward.Bins{}, Noise{}, errors.New("a wavelength range needs a resolving power, and a resolving power a wavelength range")
		}
		b, err := forward.ResolvingPowerBins(spec.RangeUm[0]*forward.Micron, spec.RangeUm[1]*forward.Micron, spec.ResolvingPower)
		if err != nil {
			return forward.Bins{}, Noise{}, err
		}
		bins = &b
	}
	if ways > 1 {
		return forward.Bins{}, Noise{}, errors.New("give the bins one way: a bins file, or a wavelength range with a resolving power")
	}
	nz := Noise{PPM: spec.NoisePPM, Transits: spec.Transits}
	if spec.Transits < 0 {
		return forward.Bins{}, Noise{}, fmt.Errorf("%d transits: must be at least 1", spec.Transits)
	}
	switch {
	case spec.NoiseFile != "" && spec.NoisePPM != 0:
		return forward.Bins{}, Noise{}, errors.New("give the noise one way: a constant in ppm or a noise file")
	case spec.NoiseFile != "":
		nb, errs, err := obs.ReadBins(spec.NoiseFile)
		if err != nil {
			return forward.Bins{}, Noise{}, err
		}
		if errs == nil {
			return forward.Bins{}, Noise{}, fmt.Errorf("%s: no error_ppm column: a noise file gives the single-transit error of each bin", spec.NoiseFile)
		}
		if bins == nil {
			bins = &nb
		} else if err := sameBins(*bins, nb); err != nil {
			return forward.Bins{}, Noise{}, fmt.Errorf("%s: %w", spec.NoiseFile, err)
		}
		nz.PerBinPPM = errs
	case !(spec.NoisePPM > 0) || math.IsInf(spec.NoisePPM, 0):
		return forward.Bins{}, Noise{}, fmt.Errorf("noise %g ppm: must be positive and finite", spec.NoisePPM)
	}
	if bins == nil {
		b, err := sc.Bins()
		if err != nil {
			return forward.Bins{}, Noise{}, err
		}
		if b == nil {
			return forward.Bins{}, Noise{}, fmt.Errorf("no bins: give a bins file, a wavelength range with a resolving power, or bins in the scenario's [spectrum] (%s)", sc.Path)
		}
		bins = b
	}
	if err := nz.Errors(make([]float64, bins.Len())); err != nil {
		return forward.Bins{}, Noise{}, err
	}
	return *bins, nz, nil
}

// sameBins checks that a noise file's bins are those being observed (to a
// part in 1e9 of the bin width).
func sameBins(want, got forward.Bins) error {
	if want.Len() != got.Len() {
		return fmt.Errorf("%d bins with errors, but %d bins are observed", got.Len(), want.Len())
	}
	for i := range want.Lo {
		tol := 1e-9 * (want.Hi[i] - want.Lo[i])
		if math.Abs(want.Lo[i]-got.Lo[i]) > tol || math.Abs(want.Hi[i]-got.Hi[i]) > tol {
			return fmt.Errorf("bin %d is %g-%g um, but the observed bin is %g-%g um", i+1, got.Lo[i]/forward.Micron, got.Hi[i]/forward.Micron, want.Lo[i]/forward.Micron, want.Hi[i]/forward.Micron)
		}
	}
	return nil
}
