// Command gen-retrieval-example writes the simulated observations of
// retrieval-example.toml: the model of that configuration at the truth
// below, binned onto the two invented instruments' bins, plus seeded
// Gaussian noise. Run from the repository root:
//
//	go run ./testdata/gen-retrieval-example
package main

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"

	"chord/config"
	"chord/forward"
	"chord/retrieve"
)

// truth is the scenario, in the parameter order of retrieval-example.toml
// (the values of spectrum-example.toml's Quillon b, with an offset of the
// optical instrument and no error inflation).
var truth = []float64{
	-3,               // log10 H2O
	-5,               // log10 CH4
	math.Log10(5e-4), // log10 CO
	-6,               // log10 CO2
	1300,             // t_irr_k
	1.05,             // radius_rjup
	-2,               // log10 cloud top (0.01 bar)
	0.6,              // cloud fraction
	math.Log10(5),    // log10 haze strength
	120,              // optical offset, ppm
	0,                // error inflation of the infrared, ppm
}

const (
	opticalPPM  = 80 // error per optical bin, ppm of depth
	infraredPPM = 45 // error per infrared bin, ppm
	seed        = 42
)

func main() {
	if err := run(); err != nil {
		fmt.Fprintln(os.Stderr, "gen-retrieval-example:", err)
		os.Exit(1)
	}
}

func run() error {
	dir := "testdata"
	// Bins: 10 optical bins of resolving power 20 from 0.6 um; infrared
	// bins of constant resolving power 40 from 1.0 to 11 um (both with
	// edges on the grid exp(k/R) um, so that they are unions of the demo
	// k-tables' R = 200 bins).
	ob, err := forward.ResolvingPowerBins(0.6e-6, 1.0e-6, 20)
	if err != nil {
		return err
	}
	var optLo, optHi []float64
	for i := range ob.Lo {
		optLo = append(optLo, ob.Lo[i]*1e6)
		optHi = append(optHi, ob.Hi[i]*1e6)
	}
	ir, err := forward.ResolvingPowerBins(1.0e-6, 11e-6, 40)
	if err != nil {
		return err
	}
	irLo, irHi := make([]float64, ir.Len()), make([]float64, ir.Len())
	for i := range irLo {
		irLo[i], irHi[i] = ir.Lo[i]*1e6, ir.Hi[i]*1e6
	}
	// Placeholder files with the bins, so the configuration loads.
	write := func(opt, inf []float64) error {
		var b strings.Builder
		b.WriteString("# Simulated (invented) optical transit spectrum of Quillon b: Rp/Rs per bin.\n")
		b.WriteString("# Demo opacities, NOT FOR SCIENCE. Written by testdata/gen-retrieval-example.\n")
		b.WriteString("wavelength_um, width_um, radius_ratio, error\n")
		for i := range optLo {
			k := math.Sqrt(opt[i])
			fmt.Fprintf(&b, "%.9f, %.9f, %.6f, %.6f\n", (optLo[i]+optHi[i])/2, optHi[i]-optLo[i], k, opticalPPM*1e-6/(2*k))
		}
		if err := os.WriteFile(filepath.Join(dir, "retrieval-example-optical.csv"), []byte(b.String()), 0o644); err != nil {
			return err
		}
		b.Reset()
		b.WriteString("# Simulated (invented) infrared transit spectrum of Quillon b.\n")
		b.WriteString("# Demo opacities, NOT FOR SCIENCE. Written by testdata/gen-retrieval-example.\n")
		b.WriteString("edge_low_um  edge_high_um  depth_ppm  error_ppm\n")
		for i := range irLo {
			fmt.Fprintf(&b, "%.5f  %.5f  %.1f  %.1f\n", irLo[i], irHi[i], inf[i]*1e6, float64(infraredPPM))
		}
		return os.WriteFile(filepath.Join(dir, "retrieval-example-infrared.txt"), []byte(b.String()), 0o644)
	}
	flat := func(n int) []float64 {
		v := make([]float64, n)
		for i := range v {
			v[i] = 0.019
		}
		return v
	}
	if err := write(flat(len(optLo)), flat(len(irLo))); err != nil {
		return err
	}
	r, err := config.Load(filepath.Join(dir, "retrieval-example.toml"))
	if err != nil {
		return err
	}
	set, err := r.Config.LoadOpacity("", os.Stderr)
	if err != nil {
		return err
	}
	p, err := retrieve.NewProblem(r, set)
	if err != nil {
		return err
	}
	model := make([]float64, p.Model().OutputLen())
	if err := p.NewPosteriorEvaluator().Spectrum(model, truth); err != nil {
		return err
	}
	rng := rand.New(rand.NewPCG(seed, 0))
	opt, inf := model[:len(optLo)], model[len(optLo):]
	for i := range opt {
		opt[i] += opticalPPM * 1e-6 * rng.NormFloat64()
	}
	for i := range inf {
		inf[i] += infraredPPM * 1e-6 * rng.NormFloat64()
	}
	return write(opt, inf)
}
