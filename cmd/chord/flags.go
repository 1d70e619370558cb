package main

import (
	"errors"
	"fmt"
	"io/fs"

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
