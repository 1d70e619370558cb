package main

import (
	"fmt"

	"github.com/urfave/cli/v2"

	"chord/retrieve"
)

// resumeCommand returns the resume command.
func resumeCommand() *cli.Command {
	return &cli.Command{
		Name:      "resume",
		Usage:     "continue a stopped or killed run from its checkpoint",
		ArgsUsage: "RUNDIR",
		Description: "Continues the very same chain, bit for bit, after an interruption, SIGKILL or power\n" +
			"loss: rows written after the checkpoint are removed and sampled again. Without a\n" +
			"stopping option it carries on toward the run's own rule, and does nothing (exit 0) once\n" +
			"the run has met it; --steps N sets the run's total length and --budget its total sampling\n" +
			"time, as in `chord fit`. The run's checkpoint interval is kept unless --checkpoint-every\n" +
			"is given. A run stopped before its first checkpoint starts again from its seed. The run\n" +
			"directory is locked while resume runs (docs/runs.md).",
		Flags: append([]cli.Flag{
			demoCacheFlag(),
		}, append(stopFlags, runFlags...)...),
		Action: runResume,
	}
}

func runResume(c *cli.Context) error {
	if c.NArg() != 1 {
		return fmt.Errorf("resume: give one run directory (got %d arguments)", c.NArg())
	}
	stop, err := stopRule(c)
	if err != nil {
		return err
	}
	ctx, cancel, prog := session(c)
	defer cancel()
	opt := retrieve.ResumeOptions{Stop: stop, DemoCache: c.String("demo-cache"), Progress: prog, CheckpointSteps: c.Int("checkpoint-every"), HTML: c.Bool("html")}
	opt.Workers = flagIfSet(c, "workers", c.Int)
	rep, err := retrieve.Resume(ctx, c.Args().First(), opt)
	return finishRun(c, rep, err)
}
