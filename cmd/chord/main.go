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
	"strings"

	"github.com/urfave/cli/v2"
)

// Exit codes (a stable interface; documented in docs/cli.md).
const (
	exitOK          = 0
	exitError       = 1 // bad input or a failed run
	exitInterrupted = 3 // stopped by SIGINT/SIGTERM after a checkpoint was written
)

// errInterrupted is returned by commands that stopped cleanly on a signal.
var errInterrupted = errors.New("interrupted")

func newApp() *cli.App {
	cmds := []*cli.Command{
		compareCommand(), demoCommand(), detectCommand(), fitCommand(), gridCommand(), opacityCommand(),
		planCommand(), reportCommand(), resumeCommand(), simulateCommand(), spectrumCommand(), versionCommand(),
	}
	cli.FlagStringer = flagHelp
	app := &cli.App{
		Name:      "chord",
		Usage:     "retrieve exoplanet atmospheres from transmission spectra",
		Commands:  cmds,
		Action:    subcommands(nil),
		Writer:    os.Stdout,
		ErrWriter: os.Stderr,
		// Errors are printed once, by main.
		ExitErrHandler: func(*cli.Context, error) {},
	}
	forEachCommand(cmds, func(c *cli.Command, _ string) {
		if len(c.Subcommands) > 0 {
			c.Action = subcommands(c.Action)
		}
	})
	return app
}

// forEachCommand calls f with every command of cmds and their
// subcommands, and the path of each ("grid resubmit").
func forEachCommand(cmds []*cli.Command, f func(c *cli.Command, path string)) {
	var walk func(cmds []*cli.Command, prefix string)
	walk = func(cmds []*cli.Command, prefix string) {
		for _, c := range cmds {
			f(c, prefix+c.Name)
			walk(c.Subcommands, prefix+c.Name+" ")
		}
	}
	walk(cmds, "")
}

// subcommands is the action of chord and of a command with subcommands:
// a first argument that names no subcommand is refused with the nearest
// name; without arguments it is action, or the help when action is nil.
func subcommands(action cli.ActionFunc) cli.ActionFunc {
	return func(c *cli.Context) error {
		if c.NArg() > 0 {
			subs, what := c.App.Commands, ""
			if !isRoot(c) {
				subs, what = c.Command.Subcommands, c.Command.FullName()+": "
			}
			var names []string
			for _, s := range subs {
				if s.Name != "help" {
					names = append(names, s.Name)
				}
			}
			arg := c.Args().First()
			guess := ""
			if n := nearest(names, arg); n != "" {
				guess = fmt.Sprintf("; did you mean %q?", n)
			}
			return fmt.Errorf("%sno command %q%s (commands: %s)", what, arg, guess, strings.Join(names, ", "))
		}
		if action != nil {
			return action(c)
		}
		if isRoot(c) {
			return cli.ShowAppHelp(c)
		}
		return cli.ShowSubcommandHelp(c)
	}
}

func isRoot(c *cli.Context) bool {
	return c.Command == nil || len(c.Lineage()) <= 2 && c.Command.Name == c.App.Name
}

// nearest returns the name of names nearest to s in edit distance
// (insertions, deletions, substitutions and swaps of neighbours), or ""
// when none is within a third of its length (at least 2 edits).
func nearest(names []string, s string) string {
	best, bestD := "", 0
	for _, n := range names {
		if d := editDistance(n, s); d <= max(2, len(n)/3) && (best == "" || d < bestD) {
			best, bestD = n, d
		}
	}
	return best
}

// editDistance is the optimal-string-alignment distance of a and b
// (Levenshtein with transpositions of neighbours; fact of the trade).
func editDistance(a, b string) int {
	d := make([][]int, len(a)+1)
	for i := range d {
		d[i] = make([]int, len(b)+1)
		d[i][0] = i
	}
	for j := range d[0] {
		d[0][j] = j
	}
	for i := 1; i <= len(a); i++ {
		for j := 1; j <= len(b); j++ {
			cost := 1
			if a[i-1] == b[j-1] {
				cost = 0
			}
			d[i][j] = min(d[i-1][j]+1, d[i][j-1]+1, d[i-1][j-1]+cost)
			if i > 1 && j > 1 && a[i-1] == b[j-2] && a[i-2] == b[j-1] {
				d[i][j] = min(d[i][j], d[i-2][j-2]+1)
			}
		}
	}
	return d[len(a)][len(b)]
}

func main() {
	err := runApp(newApp(), os.Args)
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
