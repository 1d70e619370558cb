package main

import (
	"errors"
	"fmt"
	"strconv"

	"github.com/urfave/cli/v2"

	"chord/report"
	"chord/retrieve"
)

// reportCommand returns the report command.
func reportCommand() *cli.Command {
	return &cli.Command{
		Name:      "report",
		Usage:     "recompute a run's summaries and plots from its chains",
		ArgsUsage: "RUNDIR",
		Description: "Reads the checkpointed chain of RUNDIR and writes summary.json, summary.txt and the\n" +
			"plots (spectrum, temperature, gases, traces, corner; each PNG and SVG); with --html also\n" +
			"report.html, one self-contained page with all of it. --burn auto drops 3\n" +
			"autocorrelation times (at most half the chain). The run is verified first, as resume\n" +
			"does (checkpoint and every chain part are this run's); in a directory it cannot write,\n" +
			"the summary goes to standard output and the command fails saying so.",
		Flags: []cli.Flag{
			&cli.StringFlag{Name: "burn", Value: "auto", Usage: "burn-in: `N` steps, or auto"},
			&cli.IntFlag{Name: "thin", Value: 1, Usage: "keep every `N`-th step for the intervals and plots"},
			demoCacheFlag(),
			&cli.BoolFlag{Name: "html", Usage: "also write report.html, the whole report on one self-contained page"},
		},
		Action: runReport,
	}
}

func runReport(c *cli.Context) error {
	if c.NArg() != 1 {
		return fmt.Errorf("report: give one run directory (got %d arguments)", c.NArg())
	}
	opt := retrieve.ReportRunOptions{Thin: c.Int("thin"), DemoCache: c.String("demo-cache"), HTML: c.Bool("html")}
	if b := c.String("burn"); b == "auto" {
		opt.BurnAuto = true
	} else {
		n, err := strconv.Atoi(b)
		if err != nil || n < 0 {
			return fmt.Errorf("--burn %q: give a number of steps >= 0, or auto", b)
		}
		opt.Burn = n
	}
	if opt.Thin < 1 {
		return fmt.Errorf("--thin %d: must be at least 1", opt.Thin)
	}
	s, text, err := retrieve.Report(c.Args().First(), opt)
	var we *report.WriteError
	if errors.As(err, &we) && s != nil {
		// A run this user cannot write (read-only, someone else's): the
		// summary still goes to standard output.
		fmt.Fprint(c.App.Writer, text)
		return fmt.Errorf("report: the summary above is not saved: %w", err)
	}
	if err != nil {
		return err
	}
	fmt.Fprint(c.App.Writer, text)
	return nil
}
