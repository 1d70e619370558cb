package main

import (
	"errors"
	"fmt"
	"strconv"
	"strings"

	"github.com/urfave/cli/v2"

	"chord/campaign"
	"chord/config"
	"chord/internal/version"
	"chord/obs"
	"chord/simulate"
)

// observingFlags are the bin and noise options shared by simulate and plan.
var observingFlags = []cli.Flag{
	&cli.StringFlag{Name: "bins-file", Usage: "instrument bins from `FILE` (columns edge_low_um, edge_high_um or wavelength_um, width_um; optional error_ppm)"},
	&cli.StringFlag{Name: "wavelength-range-um", Usage: "bins between `LO:HI` um at constant resolving power (with --resolving-power)"},
	&cli.Float64Flag{Name: "resolving-power", Usage: "resolving power `R` = lambda/delta-lambda of the bins (with --wavelength-range-um)"},
	&cli.StringFlag{Name: "noise-file", Usage: "single-transit error per bin from the error_ppm column of `FILE` (its bins are used unless others are given, which must match)"},
	demoCacheFlag(),
}

// simulateCommand returns the simulate command.
func simulateCommand() *cli.Command {
	return &cli.Command{
		Name:      "simulate",
		Usage:     "simulate an observation of a scenario's true spectrum",
		ArgsUsage: " ",
		Description: "Computes the scenario's true transmission spectrum on the instrument bins and\n" +
			"writes it as an observation file (edge_low_um, edge_high_um, depth_ppm, error_ppm) that\n" +
			"chord fit reads. Bins come from --bins-file, or --wavelength-range-um with\n" +
			"--resolving-power, or the --noise-file, or else the scenario's [spectrum]. The error of\n" +
			"each bin is --noise-ppm or the --noise-file's error_ppm for one transit, divided by\n" +
			"sqrt(--transits N).\n\n" +
			"--no-scatter writes the noise-free spectrum with its error bars: the usual choice\n" +
			"for forecasts, since the posterior is then centred on the truth and its width is the\n" +
			"expected one, without the luck of one noise draw. --noise-seed N instead adds Gaussian\n" +
			"noise drawn with seed N (the same seed gives the same file).",
		Flags: append([]cli.Flag{
			&cli.StringFlag{Name: "config", Aliases: []string{"c"}, Usage: "scenario `FILE` (TOML; see testdata/scenarios)"},
			&cli.BoolFlag{Name: "demo", Usage: "observe the demo's scenario, the invented warm sub-Neptune Ossery b (demo opacities: not for science)"},
			&cli.StringFlag{Name: "output", Aliases: []string{"o"}, Usage: "observation `FILE` to write (CSV)", Required: true},
			&cli.Float64Flag{Name: "noise-ppm", Usage: "single-transit error per bin, `PPM` of transit depth"},
			&cli.IntFlag{Name: "transits", Value: 1, Usage: "number of transits `N`: errors are divided by sqrt(N)"},
			&cli.Uint64Flag{Name: "noise-seed", Usage: "add Gaussian noise drawn with seed `N`"},
			&cli.BoolFlag{Name: "no-scatter", Usage: "write the noise-free spectrum with error bars (the usual choice for forecasts)"},
			&cli.StringFlag{Name: "fit-config", Usage: "also write to `FILE` the retrieval configuration that fits this observation with the scenario's parameters"},
			&cli.BoolFlag{Name: "force", Usage: "replace existing output files"},
		}, observingFlags...),
		Action: runSimulate,
	}
}

// observingSpec reads the bin and noise flags.
func observingSpec(c *cli.Context) (simulate.ObservingSpec, error) {
	spec := simulate.ObservingSpec{
		BinsFile: c.String("bins-file"), NoiseFile: c.String("noise-file"),
		ResolvingPower: c.Float64("resolving-power"),
	}
	if c.IsSet("resolving-power") && !(spec.ResolvingPower > 0) {
		return spec, fmt.Errorf("--resolving-power %g: must be positive", spec.ResolvingPower)
	}
	if s := c.String("wavelength-range-um"); s != "" {
		lo, hi, err := parseSpan("wavelength-range-um", s)
		if err != nil {
			return spec, fmt.Errorf("%w in um, e.g. 0.6:12", err)
		}
		spec.RangeUm = [2]float64{lo, hi}
	}
	return spec, nil
}

func runSimulate(c *cli.Context) error {
	if c.NArg() > 0 {
		return fmt.Errorf("simulate: unexpected argument %q", c.Args().First())
	}
	scatter, noScatter := c.IsSet("noise-seed"), c.Bool("no-scatter")
	if scatter == noScatter {
		return errors.New("simulate: give --noise-seed N (Gaussian noise) or --no-scatter (the noise-free spectrum, the usual choice for forecasts)")
	}
	if !c.IsSet("noise-ppm") && !c.IsSet("noise-file") {
		return errors.New("simulate: give the noise: --noise-ppm PPM or --noise-file FILE")
	}
	if c.IsSet("noise-ppm") && !(c.Float64("noise-ppm") > 0) {
		return fmt.Errorf("simulate: --noise-ppm %g: must be positive", c.Float64("noise-ppm"))
	}
	if n := c.Int("transits"); n < 1 {
		return fmt.Errorf("simulate: --transits %d: must be at least 1", n)
	}
	spec, err := observingSpec(c)
	if err != nil {
		return fmt.Errorf("simulate: %w", err)
	}
	spec.NoisePPM, spec.Transits = c.Float64("noise-ppm"), c.Int("transits")
	var sc *simulate.Scenario
	switch {
	case c.Bool("demo") && c.IsSet("config"):
		return errors.New("simulate: give -c SCENARIO or --demo, not both")
	case c.Bool("demo"):
		sc, err = campaign.DemoScenario()
	case c.IsSet("config"):
		sc, err = simulate.LoadScenario(c.String("config"))
	default:
		return errors.New("simulate: give the scenario: -c SCENARIO or --demo")
	}
	if err != nil {
		return err
	}
	for _, w := range sc.Config.Renamed {
		fmt.Fprintf(c.App.ErrWriter, "chord simulate: warning: %s: %s\n", sc.Path, w)
	}
	bins, noise, err := spec.Resolve(sc)
	if err != nil {
		return fmt.Errorf("simulate: %w", err)
	}
	set, err := sc.Config.LoadOpacity(c.String("demo-cache"), c.App.ErrWriter)
	if err != nil {
		return err
	}
	o, err := sc.Simulate(set, bins, simulate.Options{Noise: noise, Scatter: scatter, Seed: c.Uint64("noise-seed")})
	if err != nil {
		return err
	}
	out := c.String("output")
	if err := obs.WriteObservation(out, o, c.Bool("force")); err != nil {
		return fmt.Errorf("simulate: %w", forceAdvice(err))
	}
	fmt.Fprintf(c.App.ErrWriter, "chord simulate: %d bins, %s, written to %s\n", bins.Len(), noise, out)
	if set.Demo {
		fmt.Fprintln(c.App.ErrWriter, "chord simulate: computed with the demo opacity tables: not for science")
	}
	if p := c.String("fit-config"); p != "" {
		fc, err := sc.FitConfig(out)
		if err != nil {
			return fmt.Errorf("simulate: %w", err)
		}
		hdr := []string{fmt.Sprintf("Retrieval configuration written by chord %s simulate: scenario %s fitted to %s.", version.Version, sc.Path, out)}
		if err := config.Write(p, fc, hdr, c.Bool("force")); err != nil {
			return fmt.Errorf("simulate: %w", forceAdvice(err))
		}
		fmt.Fprintf(c.App.ErrWriter, "chord simulate: fit it with: chord fit -c %s -o RUNDIR\n", p)
	}
	return nil
}

// floatList parses "a,b,c".
func floatList(s string) ([]float64, error) {
	var out []float64
	for _, f := range strings.Split(s, ",") {
		v, err := strconv.ParseFloat(strings.TrimSpace(f), 64)
		if err != nil {
			return nil, err
		}
		out = append(out, v)
	}
	return out, nil
}
