package main

import (
	"context"
	"os"
	"slices"
	"strings"

	"github.com/urfave/cli/v2"
)

// reorderedKey marks the context of a command line interspersed has
// already reordered, so that a positional argument that looks like a flag
// (after "--") cannot reorder it again, and again.
type reorderedKey struct{}

// interspersed lets a command or subcommand take flags after its
// positional arguments (chord report RUNDIR --burn auto, chord grid
// run-point GRIDDIR 3 --workers 2): urfave/cli v2 stops parsing flags at
// the first argument, so when flags follow it the command's arguments are
// reordered, flags first, then "--" and the positional arguments, and the
// command line up to the command's name is run again.
func interspersed(action cli.ActionFunc) cli.ActionFunc {
	return func(c *cli.Context) error {
		if c.Command == nil || c.Context.Value(reorderedKey{}) != nil ||
			!slices.ContainsFunc(c.Args().Slice(), func(a string) bool { return strings.HasPrefix(a, "-") && a != "-" }) {
			return action(c)
		}
		// The command's own arguments: everything after its name in os.Args.
		i := slices.Index(os.Args, c.Command.Name)
		if i < 0 {
			return action(c)
		}
		boolFlag := map[string]bool{}
		for _, f := range c.Command.Flags {
			if _, ok := f.(*cli.BoolFlag); ok {
				for _, n := range f.Names() {
					boolFlag[n] = true
				}
			}
		}
		var flags, pos []string
		args := os.Args[i+1:]
		for k := 0; k < len(args); k++ {
			a := args[k]
			switch {
			case a == "--":
				pos = append(pos, args[k+1:]...)
				k = len(args)
			case !strings.HasPrefix(a, "-") || a == "-":
				pos = append(pos, a)
			default:
				flags = append(flags, a)
				if name := strings.TrimLeft(a, "-"); !strings.Contains(name, "=") && !boolFlag[name] && k+1 < len(args) {
					flags = append(flags, args[k+1])
					k++
				}
			}
		}
		argv := append(slices.Clone(os.Args[:i+1]), flags...)
		argv = append(append(argv, "--"), pos...)
		return c.App.RunContext(context.WithValue(c.Context, reorderedKey{}, true), argv)
	}
}
