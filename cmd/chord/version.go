package main

import (
	"fmt"

	"github.com/urfave/cli/v2"

	"chord/retrieve"
)

func init() {
	commands = append(commands, &cli.Command{
		Name:  "version",
		Usage: "print the program version",
		Action: func(c *cli.Context) error {
			fmt.Fprintln(c.App.Writer, "chord", retrieve.Version)
			return nil
		},
	})
}
