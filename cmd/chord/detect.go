package main

import (
	"errors"
	"fmt"

	"github.com/urfave/cli/v2"

	"chord/campaign"
)

// detectCommand returns the detect command.
func detectCommand() *cli.Command {
	return &cli.Command{
		Name:      "detect",
		Usage:     "detect gases by evidence: fit the model with and without each gas by nested sampling",
		ArgsUsage: " ",
		Description: "Fits the configuration (whose [sampler] must say method = \"nested\") into DIR/full\n" +
			"and, for each gas, the reduced model with the gas's log10 mixing ratio held at its\n" +
			"prior's lower edge into DIR/without-GAS, then reports for each gas ln B = ln Z(full) -\n" +
			"ln Z(without) with its error, its sigma (Sellke, Bayarri & Berger 2001; no ceiling)\n" +
			"and its strength (Benneke & Seager 2013, Table 2), beside the full run's Savage-Dickey\n" +
			"verdict (DIR/detection.txt, detection.json; the table also goes to stdout). Without\n" +
			"--gas every gas with a free log10 mixing ratio of uniform prior is tested.\n\n" +
			"Each run is an ordinary run directory. A detection stopped by SIGINT/SIGTERM (exit\n" +
			"code 3), killed or cut by a power loss resumes where it stopped: run `chord detect -o\n" +
			"DIR` (or the same command again).",
		Flags: []cli.Flag{
			&cli.StringFlag{Name: "config", Aliases: []string{"c"}, Usage: "retrieval configuration `FILE` (TOML, sampler.method = \"nested\"); omit it to resume the detection in DIR"},
			&cli.StringFlag{Name: "output", Aliases: []string{"o"}, Usage: "detection `DIR`", Required: true},
			&cli.StringSliceFlag{Name: "gas", Usage: "test `GAS` (repeatable; default: every gas with a free log10 mixing ratio of uniform prior)"},
			&cli.DurationFlag{Name: "budget", Usage: "stop each run when it has sampled for `DURATION` in total (it then gives an estimate of ln Z; resume to finish)"},
			&cli.IntFlag{Name: "workers", Usage: "`N` goroutines evaluating the likelihood", DefaultText: "the configuration's, else one per core; the runs do not depend on it"},
			demoCacheFlag(),
		},
		Action: runDetect,
	}
}

func runDetect(c *cli.Context) error {
	if c.NArg() > 0 {
		return fmt.Errorf("detect: unexpected argument %q", c.Args().First())
	}
	stop, err := stopRule(c)
	if err != nil {
		return err
	}
	opt := campaign.DetectOptions{Dir: c.String("output"), ConfigPath: c.String("config"), Gases: c.StringSlice("gas"), Stop: stop, DemoCache: c.String("demo-cache")}
	if opt.ConfigPath == "" && len(opt.Gases) > 0 {
		return errors.New("detect: --gas without -c: a detection is resumed as it was asked (its detect.toml); give -c CONFIG to start a new one")
	}
	opt.Workers = flagIfSet(c, "workers", c.Int)
	ctx, cancel, prog := session(c)
	defer cancel()
	opt.Progress = prog
	opt.OnFit = newPointsProgress(c.App.ErrWriter, "chord detect", "runs").update
	rep, err := campaign.RunDetect(ctx, opt)
	if errors.Is(err, campaign.ErrOtherDetection) {
		return fmt.Errorf("%w; resume it with chord detect -o %s alone, or choose another directory", err, opt.Dir)
	}
	if err != nil {
		return runAdvice(err)
	}
	if rep.Interrupted {
		fmt.Fprintf(c.App.ErrWriter, "chord: detection interrupted; every finished run and each run's last checkpoint are saved.\nchord: continue it with:  chord detect -o %s\n", rep.Dir)
		return errInterrupted
	}
	fmt.Fprint(c.App.Writer, rep.Text)
	fmt.Fprintf(c.App.ErrWriter, "chord detect: detection.txt and detection.json written to %s\n", rep.Dir)
	return nil
}
