package main

import (
	"bytes"
	"fmt"
	"slices"
	"strings"
	"testing"

	"github.com/urfave/cli/v2"
)

// normalizeArgs moves flags before positional arguments, for a command
// and for a subcommand alike, and leaves an argument after "--"
// positional even when it looks like a flag.
func TestNormalizeArgs(t *testing.T) {
	var got string
	record := func(c *cli.Context) error {
		got = fmt.Sprintf("n=%d b=%v args=%s", c.Int("n"), c.Bool("b"), strings.Join(c.Args().Slice(), ","))
		return nil
	}
	flags := func() []cli.Flag { return []cli.Flag{&cli.IntFlag{Name: "n"}, &cli.BoolFlag{Name: "b"}} }
	// A new app for each line, as main makes one (urfave/cli keeps state
	// in a command between runs).
	newApp := func() *cli.App {
		return &cli.App{Name: "chord", ExitErrHandler: func(*cli.Context, error) {}, Commands: []*cli.Command{
			{Name: "top", Flags: flags(), Action: record},
			{Name: "group", Flags: flags(), Action: record, Subcommands: []*cli.Command{
				{Name: "sub", Flags: flags(), Action: record},
				{Name: "other", Action: record},
			}},
		}}
	}
	for _, tc := range []struct{ argv, want string }{
		{"chord top x --n 3 y -b", "n=3 b=true args=x,y"},
		{"chord top x --n=4", "n=4 b=false args=x"},
		{"chord group sub x -n 5 -b y", "n=5 b=true args=x,y"},
		{"chord group -b sub x -n 5", "n=5 b=false args=x"}, // -b is group's, not sub's
		{"chord top -n 6 x", "n=6 b=false args=x"},
		{"chord top x -- -weird", "n=0 b=false args=x,-weird"},
		{"chord group sub -- -weird -n 7", "n=0 b=false args=-weird,-n,7"},
		{"chord group sub x other", "n=0 b=false args=x,other"}, // a subcommand's name only when first
	} {
		got = ""
		if err := runApp(newApp(), strings.Fields(tc.argv)); err != nil {
			t.Errorf("%s: %v", tc.argv, err)
		}
		if got != tc.want {
			t.Errorf("%s: action saw %q, want %q", tc.argv, got, tc.want)
		}
	}
}

// Every command and subcommand of chord takes its flags anywhere on the
// line: for each, the line with every flag after a positional argument
// parses to the same flags and arguments as the line with the flags
// first. The command's action is replaced by one that records what it
// was given, so nothing runs.
func TestEveryCommandTakesFlagsAnywhere(t *testing.T) {
	n := 0
	forEachCommand(newApp().Commands, func(_ *cli.Command, path string) {
		n++
		var got []string
		record := func(c *cli.Context) error {
			got = []string{strings.Join(c.Args().Slice(), ",")}
			for _, f := range c.Command.Flags {
				if c.IsSet(f.Names()[0]) {
					got = append(got, f.Names()[0]+"="+fmt.Sprint(c.Value(f.Names()[0])))
				}
			}
			return nil
		}
		run := func(args []string) []string {
			app := newApp()
			var out bytes.Buffer
			app.Writer, app.ErrWriter = &out, &out
			forEachCommand(app.Commands, func(c *cli.Command, p string) {
				if p == path {
					c.Action, c.Subcommands = record, nil
				}
			})
			got = nil
			argv := append(append([]string{"chord"}, strings.Fields(path)...), args...)
			if err := runApp(app, argv); err != nil {
				t.Errorf("%s: %v\n%s", strings.Join(argv, " "), err, out.String())
			}
			return got
		}
		// One value for every flag of the command, by its type.
		var flags []string
		app := newApp()
		forEachCommand(app.Commands, func(c *cli.Command, p string) {
			if p != path {
				return
			}
			for _, f := range c.Flags {
				name := "--" + f.Names()[0]
				switch f.(type) {
				case *cli.BoolFlag:
					flags = append(flags, name)
				case *cli.IntFlag, *cli.Uint64Flag, *cli.Float64Flag:
					flags = append(flags, name, "3")
				case *cli.DurationFlag:
					flags = append(flags, name, "3m")
				default:
					flags = append(flags, name, "v-"+f.Names()[0])
				}
			}
		})
		first := run(append(slices.Clone(flags), "POS1", "POS2"))
		after := run(append(append([]string{"POS1"}, flags...), "POS2"))
		if len(first) == 0 || !slices.Equal(first, after) {
			t.Errorf("chord %s: flags first gave %q, flags after a positional argument %q", path, first, after)
		}
	})
	if n < 15 {
		t.Errorf("walked %d commands; chord has more", n)
	}
}

// A mistyped command or subcommand is refused with the nearest name.
func TestMistypedCommandSuggests(t *testing.T) {
	for _, tc := range []struct{ args, want string }{
		{"fti -c x.toml", `did you mean "fit"`},
		{"reprot RUN", `did you mean "report"`},
		{"opacity inof FILE", `opacity: no command "inof"; did you mean "info"`},
		{"grid stauts DIR", `grid: no command "stauts"; did you mean "status"`},
		{"grid colect DIR", `did you mean "collect"`},
	} {
		app := newApp()
		var out bytes.Buffer
		app.Writer, app.ErrWriter = &out, &out
		err := runApp(app, append([]string{"chord"}, strings.Fields(tc.args)...))
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("chord %s: got %v, want an error saying %s", tc.args, err, tc.want)
		}
	}
	// Nothing near: no guess, the list.
	err := runApp(newApp(), []string{"chord", "xyzzyq"})
	if err == nil || strings.Contains(err.Error(), "did you mean") || !strings.Contains(err.Error(), "compare, demo") {
		t.Errorf("chord xyzzyq: %v", err)
	}
	// Edit distance with swaps (optimal string alignment; fact of the trade).
	for _, tc := range []struct {
		a, b string
		d    int
	}{{"fit", "fti", 1}, {"status", "stauts", 1}, {"kitten", "sitting", 3}, {"", "abc", 3}} {
		if d := editDistance(tc.a, tc.b); d != tc.d {
			t.Errorf("editDistance(%q, %q) = %d, want %d", tc.a, tc.b, d, tc.d)
		}
	}
}

// A renamed flag is accepted by its old name with a warning naming the
// new one, and an old LO:HI:N range is split into the new flags.
func TestRenamedFlags(t *testing.T) {
	app := newApp()
	var warn bytes.Buffer
	for _, tc := range []struct{ in, want string }{
		{"chord simulate --demo --seed 7 -o x.csv", "chord simulate --demo --noise-seed 7 -o x.csv"},
		{"chord plan --seed=7 -o p", "chord plan --noise-seed=7 -o p"},
		{"chord grid resubmit G --mem 4G", "chord grid resubmit --memory 4G G"},
		{"chord simulate --wavelength-range 0.6,5 -o x", "chord simulate --wavelength-range-um 0.6:5 -o x"},
		{"chord opacity build --bins 0.6:5.5:1000 -o t", "chord opacity build --wavelength-range-um 0.6:5.5 --resolving-power 1000 -o t"},
		{"chord opacity build --temperature 100:3000:19", "chord opacity build --temperature-range-k 100:3000 --temperature-points 19"},
		{"chord opacity build --temperature 100,200", "chord opacity build --temperatures-k 100,200"},
		{"chord fit --seed 7", "chord fit --seed 7"}, // the sampler seed keeps its name
	} {
		warn.Reset()
		got := strings.Join(normalizeArgs(app, strings.Fields(tc.in), &warn), " ")
		if got != tc.want {
			t.Errorf("%s: became %s, want %s", tc.in, got, tc.want)
		}
		if tc.in != tc.want && !strings.Contains(warn.String(), "accepted in this release only") {
			t.Errorf("%s: no warning (%q)", tc.in, warn.String())
		}
	}
	// Through runApp, as main runs chord, the warning goes to the app's
	// standard error.
	app = newApp()
	var out bytes.Buffer
	app.Writer, app.ErrWriter = &out, &out
	if err := runApp(app, []string{"chord", "grid", "resubmit", "no-such-grid", "--mem", "4G"}); err == nil {
		t.Error("resubmit of no grid: no error")
	}
	if !strings.Contains(out.String(), "--mem is now --memory") {
		t.Errorf("no warning through runApp: %q", out.String())
	}
	// Every renamed flag's new name exists on its command, and its old
	// name no longer does.
	for _, r := range renamedFlags {
		var cmd *cli.Command
		forEachCommand(app.Commands, func(c *cli.Command, p string) {
			if p == r.cmd {
				cmd = c
			}
		})
		if cmd == nil {
			t.Errorf("renamed flag --%s: no command %q", r.old, r.cmd)
			continue
		}
		if !hasFlag(cmd, r.new) || hasFlag(cmd, r.old) {
			t.Errorf("chord %s: --%s should be renamed --%s", r.cmd, r.old, r.new)
		}
	}
}

func hasFlag(c *cli.Command, name string) bool {
	for _, f := range c.Flags {
		if slices.Contains(f.Names(), name) {
			return true
		}
	}
	return false
}
