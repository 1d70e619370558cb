package main

import (
	"errors"
	"fmt"
	"io/fs"
	"path/filepath"

	"chord/campaign"

	"github.com/urfave/cli/v2"
)

// compareCommand returns the compare command.
func compareCommand() *cli.Command {
	return &cli.Command{
		Name:      "compare",
		Usage:     "compare posterior widths (and, for nested runs, evidences) of runs side by side",
		ArgsUsage: "RUNDIR...",
		Description: "For every free parameter the runs have in common: the 68% width (84th-16th\n" +
			"percentile) and the 95% width (97.5th-2.5th) in each run, their ratio to the first\n" +
			"run's, each run's noise level (the median error of its observations, ppm) and the gas\n" +
			"verdicts (detected with sigma, constrained, upper limit). Parameters missing from some\n" +
			"runs are dropped and named. Runs made by nested sampling also get their ln Z, and each\n" +
			"pair of them that fits the same observations its ln Bayes factor with its error, sigma\n" +
			"and strength (docs/evidence.md). Reads each run's summary.json (chord report makes it).",
		Flags: []cli.Flag{
			&cli.BoolFlag{Name: "json", Usage: "write the comparison as JSON instead of a table"},
			&cli.StringFlag{Name: "plot", Usage: "draw the 68% width against noise (log-log, with the width-proportional-to-noise line) to `FILE`.png (and FILE.svg)"},
			&cli.StringFlag{Name: "marginals", Usage: "overlay the runs' marginal posteriors, one panel per shared parameter, in `FILE`.png (and FILE.svg)"},
		},
		Action: runCompare,
	}
}

func runCompare(c *cli.Context) error {
	if c.NArg() == 0 {
		return fmt.Errorf("compare: give at least one run directory")
	}
	for _, flag := range []string{"plot", "marginals"} {
		if p := c.String(flag); p != "" && filepath.Ext(p) != ".png" {
			return fmt.Errorf("compare: --%s %s: the plot is a PNG file (with an SVG beside it); name it FILE.png", flag, p)
		}
	}
	cmp, err := campaign.CompareDirs(c.Args().Slice())
	if errors.Is(err, fs.ErrNotExist) {
		return fmt.Errorf("%w (chord report RUNDIR writes a run's summary)", err)
	}
	if err != nil {
		return err
	}
	if c.Bool("json") {
		err = cmp.WriteJSON(c.App.Writer)
	} else {
		err = cmp.WriteTable(c.App.Writer)
	}
	if err != nil {
		return err
	}
	if p := c.String("plot"); p != "" {
		if err := cmp.WritePlot(p); err != nil {
			return err
		}
		fmt.Fprintf(c.App.ErrWriter, "chord compare: plot written to %s\n", p)
	}
	if p := c.String("marginals"); p != "" {
		if err := campaign.PlotMarginalsDirs(p, c.Args().Slice(), cmp); err != nil {
			return err
		}
		fmt.Fprintf(c.App.ErrWriter, "chord compare: marginal posteriors drawn to %s\n", p)
	}
	return nil
}
