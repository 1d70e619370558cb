package main

import (
	"fmt"
	"io"
	"os"
	"slices"
	"strings"

	"github.com/urfave/cli/v2"
)

// runApp runs the command line argv (argv[0] is the program) through
// app after normalizeArgs. main and the tests run chord this way.
func runApp(app *cli.App, argv []string) error {
	var warn io.Writer = os.Stderr
	if app.ErrWriter != nil {
		warn = app.ErrWriter
	}
	return app.Run(normalizeArgs(app, argv, warn))
}

// normalizeArgs lets options go anywhere on the line, for every command
// and subcommand alike, and accepts the renamed flags of renamedFlags by
// their old names with a warning to warn.
//
// urfave/cli v2 stops parsing a command's flags at its first positional
// argument. So the line is walked the way urfave/cli walks it, from the
// program to the (sub)command it names, and at each level the command's
// flags (with their values) are moved before its positional arguments;
// "--" then separates the two when a positional argument looks like a flag
// (the user wrote it after "--"). A positional argument is the name of a
// subcommand only when it comes first, as for urfave/cli; a first one of a
// command with subcommands that names none of them ends the rewriting
// (the command refuses it, naming the nearest subcommand).
func normalizeArgs(app *cli.App, argv []string, warn io.Writer) []string {
	if len(argv) == 0 {
		return argv
	}
	out := []string{argv[0]}
	flags, cmds := app.Flags, app.Commands
	var path []string
	rest := argv[1:]
	for {
		var fl, pos []string
		var next *cli.Command
		k := 0
	scan:
		for ; k < len(rest); k++ {
			a := rest[k]
			switch {
			case a == "--":
				pos = append(pos, rest[k+1:]...)
				k = len(rest)
				break scan
			case strings.HasPrefix(a, "-") && a != "-":
				if args, consumed := renamed(path, a, rest[k+1:], warn); len(args) > 1 {
					fl = append(fl, args...)
					k += consumed
					continue
				} else if len(args) == 1 {
					a = args[0] // the same flag by its new name
				}
				fl = append(fl, a)
				if name, _, hasValue := strings.Cut(strings.TrimLeft(a, "-"), "="); !hasValue && takesValue(flags, name) && k+1 < len(rest) {
					fl = append(fl, rest[k+1])
					k++
				}
			case len(pos) == 0 && command(cmds, a) != nil:
				next = command(cmds, a)
				k++
				break scan
			case len(pos) == 0 && len(cmds) > 0:
				// Not one of the subcommands: left as it is, for the
				// command to refuse with the nearest name.
				return append(append(out, fl...), rest[k:]...)
			default:
				pos = append(pos, a)
			}
		}
		out = append(out, fl...)
		if next != nil {
			out = append(out, rest[k-1])
			flags, cmds, path, rest = next.Flags, next.Subcommands, append(path, next.Name), rest[k:]
			continue
		}
		if slices.ContainsFunc(pos, func(a string) bool { return strings.HasPrefix(a, "-") && a != "-" }) {
			out = append(out, "--")
		}
		return append(out, pos...)
	}
}

// command returns the command of cmds named name, or nil.
func command(cmds []*cli.Command, name string) *cli.Command {
	for _, c := range cmds {
		if c.HasName(name) {
			return c
		}
	}
	return nil
}

// takesValue reports whether the flag name of flags takes a value (an
// unknown flag is left for urfave/cli to refuse).
func takesValue(flags []cli.Flag, name string) bool {
	for _, f := range flags {
		if slices.Contains(f.Names(), name) {
			d, ok := f.(cli.DocGenerationFlag)
			return ok && d.TakesValue()
		}
	}
	return false
}

// renamedFlag is a flag of this release's vocabulary (docs/cli.md,
// "Renamed flags") accepted by its old name, with a warning, for this
// release only.
type renamedFlag struct {
	cmd, old, new string
	// split, when not nil, rewrites an old value into the new flags and
	// values (an old LO:HI:N range into a range and its count).
	split func(v string) ([]string, error)
}

// renamed rewrites the flag a (with its value, taken from after when it
// is not given as --old=value) if it is a renamed flag of the command
// path, warning about it; it returns nil when a is not renamed, and how
// many arguments of after it consumed.
func renamed(path []string, a string, after []string, warn io.Writer) (args []string, consumed int) {
	cmd := strings.Join(path, " ")
	name, value, hasValue := strings.Cut(strings.TrimLeft(a, "-"), "=")
	for _, r := range renamedFlags {
		if r.cmd != cmd || r.old != name {
			continue
		}
		if !hasValue && r.split != nil {
			if len(after) == 0 {
				return nil, 0 // urfave/cli says the value is missing
			}
			value, hasValue, consumed = after[0], true, 1
		}
		if r.split == nil {
			args = []string{"--" + r.new}
			if hasValue {
				args[0] += "=" + value
			}
			fmt.Fprintf(warn, "chord: warning: chord %s --%s is now --%s; the old name is accepted in this release only\n", cmd, r.old, r.new)
			return args, 0
		}
		args, err := r.split(value)
		if err != nil {
			// Left to the new flags' own checks: pass the value as given.
			args = []string{"--" + r.new, value}
		}
		fmt.Fprintf(warn, "chord: warning: chord %s --%s %s is now %s; the old form is accepted in this release only\n", cmd, r.old, value, strings.Join(args, " "))
		return args, consumed
	}
	return nil, 0
}

// renamedFlags are the flags this release renamed (issue 13: one
// vocabulary), by command.
var renamedFlags = []renamedFlag{
	{cmd: "simulate", old: "seed", new: "noise-seed"},
	{cmd: "simulate", old: "noise", new: "noise-ppm"},
	{cmd: "simulate", old: "bins", new: "bins-file"},
	{cmd: "simulate", old: "wavelength-range", new: "wavelength-range-um", split: commaRange("wavelength-range-um")},
	{cmd: "plan", old: "seed", new: "noise-seed"},
	{cmd: "plan", old: "noise", new: "noise-ppm"},
	{cmd: "plan", old: "bins", new: "bins-file"},
	{cmd: "plan", old: "wavelength-range", new: "wavelength-range-um", split: commaRange("wavelength-range-um")},
	{cmd: "grid", old: "mem", new: "memory"},
	{cmd: "grid resubmit", old: "mem", new: "memory"},
	{cmd: "spectrum", old: "fine-resolution", new: "fine-resolving-power"},
	{cmd: "opacity build", old: "resolution", new: "fine-resolving-power"},
	{cmd: "opacity build", old: "bins-from", new: "bins-file"},
	{cmd: "opacity build", old: "bins", new: "wavelength-range-um", split: thirdField("wavelength-range-um", "resolving-power")},
	{cmd: "opacity build", old: "wavelength", new: "wavelength-range-um", split: thirdField("wavelength-range-um", "resolving-power", "--cross-sections")},
	{cmd: "opacity build", old: "wavenumber", new: "wavenumber-range", split: thirdField("wavenumber-range", "wavenumber-step")},
	{cmd: "opacity build", old: "pressure", new: "pressure-range-bar", split: thirdField("pressure-range-bar", "pressure-points")},
	{cmd: "opacity build", old: "temperature", new: "temperatures-k", split: func(v string) ([]string, error) {
		if strings.Contains(v, ":") {
			return thirdField("temperature-range-k", "temperature-points")(v)
		}
		return []string{"--temperatures-k", v}, nil
	}},
}

// commaRange rewrites an old "LO,HI" into --flag LO:HI.
func commaRange(flag string) func(string) ([]string, error) {
	return func(v string) ([]string, error) {
		return []string{"--" + flag, strings.Replace(v, ",", ":", 1)}, nil
	}
}

// thirdField rewrites an old "LO:HI:X" into --rangeFlag LO:HI --xFlag X
// and the extra arguments.
func thirdField(rangeFlag, xFlag string, extra ...string) func(string) ([]string, error) {
	return func(v string) ([]string, error) {
		f := strings.Split(v, ":")
		if len(f) != 3 {
			return nil, fmt.Errorf("not LO:HI:X")
		}
		return append([]string{"--" + rangeFlag, f[0] + ":" + f[1], "--" + xFlag, f[2]}, extra...), nil
	}
}
