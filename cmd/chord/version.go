package main

import (
	"fmt"

	"chord/internal/version"

	"github.com/urfave/cli/v2"
)

// versionCommand returns the version command.
func versionCommand() *cli.Command {
	return &cli.Command{
		Name:  "version",
		Usage: "print the program version",
		Action: func(c *cli.Context) error {
			fmt.Fprintln(c.App.Writer, "chord", version.Version)
			return nil
		},
	}
}
