package main

import (
	"errors"
	"fmt"
	"io/fs"
	"math"
	"strconv"
	"strings"

	"github.com/urfave/cli/v2"
)

// flagIfSet returns the value of the flag name read by get (c.Int,
// c.Uint64, ...) when the command line gives it, else nil: the "not given,
// use the default" of an option.
func flagIfSet[T any](c *cli.Context, name string, get func(string) T) *T {
	if !c.IsSet(name) {
		return nil
	}
	v := get(name)
	return &v
}

// firstSet returns the first of the flags names that the command line
// gives, for refusing flags that do not go with others.
func firstSet(c *cli.Context, names ...string) (string, bool) {
	for _, n := range names {
		if c.IsSet(n) {
			return n, true
		}
	}
	return "", false
}

// forceAdvice adds the --force advice to an error saying an output file
// exists.
func forceAdvice(err error) error {
	if errors.Is(err, fs.ErrExist) {
		return fmt.Errorf("%w (use --force to replace it)", err)
	}
	return err
}

// flagHelp is the line of a flag in chord's help (cli.FlagStringer):
// names with the placeholder, the usage, and the default once. A default
// is shown when the flag states it (DefaultText) or when its value is not
// the zero value: a zero value means "not given" and the usage says what
// that does. A switch (a boolean flag) is off unless given, so no default
// is shown for it.
func flagHelp(f cli.Flag) string {
	d, ok := f.(cli.DocGenerationFlag)
	if !ok {
		return strings.Join(f.Names(), ", ")
	}
	placeholder, usage := "", d.GetUsage()
	if i := strings.Index(usage, "`"); i >= 0 {
		if j := strings.Index(usage[i+1:], "`"); j >= 0 {
			placeholder = usage[i+1 : i+1+j]
			usage = usage[:i] + placeholder + usage[i+2+j:]
		}
	}
	if d.TakesValue() && placeholder == "" {
		placeholder = "VALUE"
	}
	var names []string
	for _, n := range d.Names() {
		s := "--" + n
		if len(n) == 1 {
			s = "-" + n
		}
		if placeholder != "" {
			s += " " + placeholder
		}
		names = append(names, s)
	}
	line := strings.Join(names, ", ")
	if s, ok := f.(cli.DocGenerationSliceFlag); ok && s.IsSliceFlag() && !strings.Contains(usage, "repeat") {
		usage += " (repeatable)"
	}
	if def := shownDefault(d); def != "" {
		usage += " (default: " + def + ")"
	}
	return line + "\t" + usage
}

// shownDefault is the default flagHelp shows, "" for none.
func shownDefault(d cli.DocGenerationFlag) string {
	if b, ok := d.(*cli.BoolFlag); ok {
		return b.DefaultText
	}
	switch t := d.GetDefaultText(); t {
	case "", "0", "0s", `""`, "[]":
		return ""
	default:
		if u, err := strconv.Unquote(t); err == nil && strings.HasPrefix(t, `"`) {
			return u // a string's default, without Go's quotes
		}
		return t
	}
}

// parseSpan reads the range "LO:HI" of the flag name (every range flag of
// chord takes this form; its spacing, where it has one, is a flag of its
// own: --resolving-power, --wavenumber-step, --pressure-points, ...).
func parseSpan(name, s string) (lo, hi float64, err error) {
	a, b, ok := strings.Cut(s, ":")
	if ok {
		lo, err = strconv.ParseFloat(strings.TrimSpace(a), 64)
	}
	if ok && err == nil {
		hi, err = strconv.ParseFloat(strings.TrimSpace(b), 64)
	}
	if !ok || err != nil || math.IsNaN(lo) || math.IsNaN(hi) || math.IsInf(lo, 0) || math.IsInf(hi, 0) {
		return 0, 0, fmt.Errorf("--%s %q: give LO:HI, two numbers separated by a colon", name, s)
	}
	return lo, hi, nil
}

// demoCacheFlag is --demo-cache, of every command that may load the demo
// opacity tables.
func demoCacheFlag() cli.Flag {
	return &cli.StringFlag{Name: "demo-cache", Usage: "`DIR` caching the demo opacity tables", DefaultText: "the user cache directory"}
}
