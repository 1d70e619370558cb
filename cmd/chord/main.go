// Command chord retrieves exoplanet atmospheres from transmission spectra.
//
// Each subcommand lives in its own file, which defines a function making
// it; newApp lists them. No physics lives here.
package main

import (
	"context"
	"errors"
	"fmt"
	"os"
	"sort"

	"github.com/urfave/cli/v2"
)

// commands holds the commands that register themselves in an init
// function (opacity.go, whose rewrite is under way elsewhere); the others
// are listed in newApp.
var commands []*cli.Command

// Exit codes (a stable interface; documented in docs/cli.md).
const (
	exitOK          = 0
	exitError       = 1 // bad input or a failed run
	exitInterrupted = 3 // stopped by SIGINT/SIGTERM after a checkpoint was written
)

// errInterrupted is returned by commands that stopped cleanly on a signal.
var errInterrupted = errors.New("interrupted")

func newApp() *cli.App {
	cmds := append([]*cli.Command{
		compareCommand(), demoCommand(), detectCommand(), fitCommand(), gridCommand(), planCommand(),
		reportCommand(), resumeCommand(), simulateCommand(), spectrumCommand(), versionCommand(),
	}, commands...)
	sort.Slice(cmds, func(i, j int) bool { return cmds[i].Name < cmds[j].Name })
	return &cli.App{
		Name:     "chord",
		Usage:    "retrieve exoplanet atmospheres from transmission spectra",
		Commands: cmds,
		// Errors are printed once, by main.
		ExitErrHandler: func(*cli.Context, error) {},
	}
}

func main() {
	err := newApp().Run(os.Args)
	switch {
	case err == nil:
		os.Exit(exitOK)
	case errors.Is(err, errInterrupted):
		os.Exit(exitInterrupted)
	case errors.Is(err, context.Canceled):
		// Stopped by a signal before anything needed saving.
		fmt.Fprintln(os.Stderr, "chord:", err)
		os.Exit(exitInterrupted)
	default:
		fmt.Fprintln(os.Stderr, "chord:", err)
		os.Exit(exitError)
	}
}
