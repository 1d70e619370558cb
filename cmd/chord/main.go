// Command chord retrieves exoplanet atmospheres from transmission spectra.
//
// Each subcommand lives in its own file and registers itself in init, so that
// this file does not change when commands are added. No physics lives here.
package main

import (
	"errors"
	"fmt"
	"os"
	"sort"

	"github.com/urfave/cli/v2"
)

// commands is filled by the init functions of the command files.
var commands []*cli.Command

// Exit codes (a stable interface; documented in the README).
const (
	exitOK          = 0
	exitError       = 1 // bad input or a failed run
	exitInterrupted = 3 // stopped by SIGINT/SIGTERM after a checkpoint was written
)

// errInterrupted is returned by commands that stopped cleanly on a signal.
var errInterrupted = errors.New("interrupted")

func newApp() *cli.App {
	sort.Slice(commands, func(i, j int) bool { return commands[i].Name < commands[j].Name })
	return &cli.App{
		Name:     "chord",
		Usage:    "retrieve exoplanet atmospheres from transmission spectra",
		Commands: commands,
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
	default:
		fmt.Fprintln(os.Stderr, "chord:", err)
		os.Exit(exitError)
	}
}
