package main

import (
	"fmt"
	"path/filepath"

	"chord/campaign"
	"chord/report"

	"github.com/urfave/cli/v2"
)

// demoCommand returns the demo command.
func demoCommand() *cli.Command {
	return &cli.Command{
		Name:      "demo",
		Usage:     "simulate an invented planet's spectrum, fit it and report (a few minutes)",
		ArgsUsage: " ",
		Description: "Simulates the transmission spectrum of the invented warm sub-Neptune Ossery b\n" +
			"(around the invented M dwarf Ossery) with a fixed seed, fits it with the demo\n" +
			"opacities and writes a run directory with its report. The demo opacities are made\n" +
			"up by chord itself: they are for trying the program, not for science. The retrieval\n" +
			"configuration and observation file are left in DIR, ready for `chord fit -c`.",
		Flags: []cli.Flag{
			&cli.StringFlag{Name: "output", Aliases: []string{"o"}, Value: "chord-demo", Usage: "`DIR` for the configuration, observation and run directory"},
			&cli.IntFlag{Name: "workers", Usage: "`N` goroutines evaluating the posterior", DefaultText: "one per core"},
			&cli.BoolFlag{Name: "force", Usage: "replace an earlier demo in DIR"},
			demoCacheFlag(),
			&cli.BoolFlag{Name: "no-html", Usage: "do not write report.html"},
		},
		Action: runDemo,
	}
}

func runDemo(c *cli.Context) error {
	if c.NArg() > 0 {
		return fmt.Errorf("demo: unexpected argument %q", c.Args().First())
	}
	ctx, cancel, prog := session(c)
	defer cancel()
	w := c.App.ErrWriter
	fmt.Fprintln(w, "chord demo: "+report.DemoWarning)
	opt := campaign.DemoOptions{Dir: c.String("output"), Force: c.Bool("force"), DemoCache: c.String("demo-cache"), Progress: prog, Log: w, HTML: !c.Bool("no-html")}
	opt.Workers = flagIfSet(c, "workers", c.Int)
	rep, err := campaign.Demo(ctx, opt)
	if err := finishRun(c, rep, err); err != nil {
		return err
	}
	if opt.HTML {
		fmt.Fprintf(w, "chord demo: the report is %s\n", filepath.Join(rep.Dir, report.HTMLFile))
	}
	fmt.Fprintf(w, "chord demo: the configuration %s and observation %s are in %s; try  chord fit -c %s -o another-run\n",
		rep.ConfigFile, rep.ObservationFile, opt.Dir, rep.ConfigFile)
	fmt.Fprintln(w, "chord demo: "+report.DemoWarning)
	return nil
}
