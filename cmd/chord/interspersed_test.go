package main

import (
	"fmt"
	"os"
	"strings"
	"testing"

	"github.com/urfave/cli/v2"
)

// interspersed reorders flags that follow positional arguments, for a
// command and for a subcommand alike, and leaves an argument after "--"
// positional even when it looks like a flag.
func TestInterspersed(t *testing.T) {
	var got string
	record := func(c *cli.Context) error {
		got = fmt.Sprintf("n=%d b=%v args=%s", c.Int("n"), c.Bool("b"), strings.Join(c.Args().Slice(), ","))
		return nil
	}
	flags := func() []cli.Flag { return []cli.Flag{&cli.IntFlag{Name: "n"}, &cli.BoolFlag{Name: "b"}} }
	app := &cli.App{Name: "chord", ExitErrHandler: func(*cli.Context, error) {}, Commands: []*cli.Command{{
		Name: "top", Flags: flags(), Action: interspersed(record),
		Subcommands: []*cli.Command{{Name: "sub", Flags: flags(), Action: interspersed(record)}},
	}}}
	saved := os.Args
	defer func() { os.Args = saved }()
	for _, tc := range []struct{ argv, want string }{
		{"chord top x --n 3 y -b", "n=3 b=true args=x,y"},
		{"chord top x --n=4", "n=4 b=false args=x"},
		{"chord top sub x -n 5 -b y", "n=5 b=true args=x,y"},
		{"chord top -n 6 x", "n=6 b=false args=x"},
		{"chord top x -- -weird", "n=0 b=false args=x,-weird"},
		{"chord top sub -- -weird -n 7", "n=0 b=false args=-weird,-n,7"},
	} {
		os.Args = strings.Fields(tc.argv)
		got = ""
		if err := app.Run(os.Args); err != nil {
			t.Errorf("%s: %v", tc.argv, err)
		}
		if got != tc.want {
			t.Errorf("%s: action saw %q, want %q", tc.argv, got, tc.want)
		}
	}
}
