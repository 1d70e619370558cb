package main

import (
	"errors"
	"fmt"
	"strconv"
	"strings"

	"chord/campaign"

	"github.com/urfave/cli/v2"
)

// planCommand returns the plan command.
func planCommand() *cli.Command {
	return &cli.Command{
		Name:      "plan",
		Usage:     "simulate, fit and compare a scenario at several noise levels or numbers of transits",
		ArgsUsage: " ",
		Description: "For each level, simulates the scenario's observation, fits it into a normal run\n" +
			"directory (PLANDIR/<level>/run, which chord resume can continue) and finally compares\n" +
			"the posterior widths (PLANDIR/comparison.txt, comparison.json, widths.png; the table\n" +
			"also goes to stdout). --noise-ppm 30,60,120 gives one fit per noise level (ppm per\n" +
			"bin); --transits 1,4,16 one fit per number of transits, with the single-transit noise\n" +
			"from --noise-ppm PPM or --noise-file. Observations are noise-free with error bars unless --noise-seed\n" +
			"N asks for Gaussian noise (level i drawn with seed N+i). The fits run one after\n" +
			"another with every worker and share one load of the opacity tables. --detect H2O,CH4\n" +
			"also fits at each level the model without each gas (the scenario's [sampler] must say\n" +
			"method = \"nested\") and reports ln B, its sigma and strength per level and gas\n" +
			"(PLANDIR/detection.txt, detection.json): on noise-free observations, the expected\n" +
			"detection significance at that noise level.\n\n" +
			"A plan stopped by SIGINT/SIGTERM (exit code 3), killed, or cut by a power loss resumes\n" +
			"where it stopped: run `chord plan -o PLANDIR` (or the same command again).",
		Flags: append(append([]cli.Flag{
			&cli.StringFlag{Name: "config", Aliases: []string{"c"}, Usage: "scenario `FILE` (TOML; see testdata/scenarios); omit it to resume the plan in PLANDIR"},
			&cli.BoolFlag{Name: "demo", Usage: "plan with the demo's scenario, the invented warm sub-Neptune Ossery b (demo opacities: not for science)"},
			&cli.StringFlag{Name: "output", Aliases: []string{"o"}, Usage: "plan `DIR`", Required: true},
			&cli.StringFlag{Name: "noise-ppm", Usage: "noise levels `PPM,...` (one fit each), or with --transits the one single-transit level"},
			&cli.StringFlag{Name: "transits", Usage: "numbers of transits `N,...` (one fit each)"},
			&cli.Uint64Flag{Name: "noise-seed", Usage: "draw Gaussian noise, level i with seed `N`+i", DefaultText: "noise-free observations"},
			&cli.StringFlag{Name: "detect", Usage: "also report at each level the detection by evidence of `GAS,...` (the scenario's fits must be nested sampling; docs/evidence.md)"},
			workersFlag(),
		}, observingFlags...), stopFlags...),
		Action: runPlan,
	}
}

func runPlan(c *cli.Context) error {
	if c.NArg() > 0 {
		return fmt.Errorf("plan: unexpected argument %q", c.Args().First())
	}
	stop, err := stopRule(c)
	if err != nil {
		return err
	}
	opt := campaign.PlanOptions{Dir: c.String("output"), ScenarioPath: c.String("config"), DemoCache: c.String("demo-cache")}
	if c.Bool("demo") {
		if opt.ScenarioPath != "" {
			return errors.New("plan: give -c SCENARIO or --demo, not both")
		}
		opt.Demo = true
	}
	if opt.ScenarioPath == "" && !opt.Demo {
		if f, ok := firstSet(c, "noise-ppm", "transits", "noise-seed", "bins-file", "wavelength-range-um", "resolving-power", "noise-file", "steps", "budget", "until-converged", "detect"); ok {
			return fmt.Errorf("plan: --%s without -c or --demo: a plan is resumed as it was asked (its plan.toml); give -c SCENARIO to start a new plan", f)
		}
	} else {
		obs, err := observingSpec(c)
		if err != nil {
			return fmt.Errorf("plan: %w", err)
		}
		spec := campaign.PlanSpec{
			BinsFile: obs.BinsFile, RangeUm: obs.RangeUm, ResolvingPower: obs.ResolvingPower, NoiseFile: obs.NoiseFile,
			Scatter: c.IsSet("noise-seed"), NoiseSeed: c.Uint64("noise-seed"),
			Steps: stop.Steps, Budget: stop.Budget, UntilConverged: stop.UntilConverged,
		}
		if c.IsSet("detect") {
			for _, g := range strings.Split(c.String("detect"), ",") {
				if g = strings.TrimSpace(g); g == "" {
					return fmt.Errorf("plan: --detect %q: give gases separated by commas, e.g. H2O,CH4", c.String("detect"))
				}
				spec.Detect = append(spec.Detect, strings.TrimSpace(g))
			}
		}
		noise, err := floatList(c.String("noise-ppm"))
		if c.IsSet("noise-ppm") && err != nil {
			return fmt.Errorf("plan: --noise-ppm %q: give ppm values separated by commas, e.g. 30,60,120", c.String("noise-ppm"))
		}
		if c.IsSet("transits") {
			for _, f := range strings.Split(c.String("transits"), ",") {
				n, err := strconv.Atoi(strings.TrimSpace(f))
				if err != nil {
					return fmt.Errorf("plan: --transits %q: give whole numbers separated by commas, e.g. 1,4,16", c.String("transits"))
				}
				spec.Transits = append(spec.Transits, n)
			}
			if len(noise) > 1 {
				return errors.New("plan: with --transits, --noise-ppm is the one single-transit level")
			}
			if len(noise) == 1 {
				spec.SingleNoisePPM = noise[0]
			}
		} else if c.IsSet("noise-ppm") {
			spec.NoisePPM = noise
		}
		switch {
		case !c.IsSet("noise-ppm") && !c.IsSet("transits"):
			return errors.New("plan: give the noise levels (--noise-ppm 30,60,120) or the numbers of transits (--transits 1,4,16)")
		case c.IsSet("transits") && !c.IsSet("noise-ppm") && !c.IsSet("noise-file"):
			return errors.New("plan: a plan over transits needs the single-transit noise (--noise-ppm PPM or --noise-file FILE)")
		case !c.IsSet("transits") && c.IsSet("noise-file"):
			return errors.New("plan: noise levels and a noise file exclude each other; with --noise-file, plan over --transits")
		}
		opt.Spec = spec
	}
	opt.Workers = flagIfSet(c, "workers", c.Int)
	ctx, cancel, prog := session(c)
	defer cancel()
	opt.Progress = prog
	opt.OnLevel = newPointsProgress(c.App.ErrWriter, "chord plan", "levels").update
	rep, err := campaign.RunPlan(ctx, opt)
	if errors.Is(err, campaign.ErrOtherPlan) {
		return fmt.Errorf("%w; resume it with chord plan -o %s alone, or choose another directory", err, opt.Dir)
	}
	if err != nil {
		return err
	}
	if rep.Interrupted {
		fmt.Fprintf(c.App.ErrWriter, "chord: plan interrupted; every finished step is saved.\nchord: continue it with:  chord plan -o %s\n", rep.Dir)
		return errInterrupted
	}
	fmt.Fprint(c.App.Writer, rep.Table)
	fmt.Fprintf(c.App.ErrWriter, "chord plan: comparison.txt, comparison.json and widths.png written to %s\n", rep.Dir)
	if rep.Detections != nil {
		fmt.Fprintf(c.App.ErrWriter, "chord plan: detection.txt and detection.json written to %s\n", rep.Dir)
	}
	return nil
}
