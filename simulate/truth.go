package simulate

import (
	"bytes"
	"fmt"
	"io"
	"math/rand/v2"

	"chord/config"
	"chord/forward"
	"chord/internal/atomicfile"
	"chord/internal/version"
)

// ObserveModel computes the binned transit depth of the model
// configuration truth (with its [spectrum] bins) and writes it as an
// observation table to path, with an error of errPPM per bin and, when
// noisy, Gaussian noise of that size drawn from seed.
func ObserveModel(path string, truth *config.ModelConfig, cache string, log io.Writer, errPPM float64, noisy bool, seed uint64) error {
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
	fmt.Fprintf(&b, "# Simulated observation of %s (invented) made by chord %s with the demo opacities: NOT FOR SCIENCE.\n", truth.Planet.Name, version.Version)
	fmt.Fprintf(&b, "# Truth: %s; error %g ppm per bin; %s.\n", truth.Planet.Name, errPPM, noise)
	b.WriteString("edge_low_um,edge_high_um,depth_ppm,error_ppm\n")
	for i := range depth {
		fmt.Fprintf(&b, "%.8f,%.8f,%.3f,%.3f\n", fc.Bins.Lo[i]/forward.Micron, fc.Bins.Hi[i]/forward.Micron, depth[i]*1e6, sigma[i]*1e6)
	}
	return atomicfile.Write(path, b.Bytes(), true)
}
