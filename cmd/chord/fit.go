package main

import (
	"context"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"os/signal"
	"syscall"
	"time"

	"github.com/urfave/cli/v2"
	"golang.org/x/term"

	"chord/config"
	"chord/retrieve"
	"chord/sampler"
	"chord/simulate"
)

// stopFlags are the stopping-rule options shared by fit, resume and plan.
var stopFlags = []cli.Flag{
	&cli.IntFlag{Name: "steps", Usage: "stop when the chain holds `N` steps in total"},
	&cli.DurationFlag{Name: "budget", Usage: "stop when the run has sampled for `DURATION` in total (e.g. 8h, 90m)"},
	&cli.BoolFlag{Name: "until-converged", Usage: fmt.Sprintf("stop when the chain is longer than %g autocorrelation times, tau stable to %g%% (the rule when neither a flag nor the configuration gives one)", sampler.DefaultConvergedTaus, 100*sampler.DefaultTauRelChange)},
}

// runFlags are the options of a run's session shared by fit and resume.
var runFlags = []cli.Flag{
	workersFlag(),
	&cli.IntFlag{Name: "checkpoint-every", Usage: "write a checkpoint every `N` steps", DefaultText: "about one a minute"},
	&cli.BoolFlag{Name: "html", Usage: "also write report.html, the whole report on one self-contained page"},
}

// fitCommand returns the fit command.
func fitCommand() *cli.Command {
	return &cli.Command{
		Name:      "fit",
		Usage:     "sample the posterior of a retrieval configuration into a run directory",
		ArgsUsage: " ",
		Description: "Validates the configuration, observations, opacities, priors and initial walkers,\n" +
			"then samples, writing chains, checkpoints and, at the end, summary.json, summary.txt\n" +
			"and the plots (spectrum, temperature, gases, traces, corner; PNG and SVG) to the run\n" +
			"directory. --truth names the scenario an observation was simulated from, so that the\n" +
			"plots mark the true values. Progress goes to stderr.\n" +
			"--check stops after the validation, writing nothing. A configuration without a stopping\n" +
			"rule samples until converged, which may take days for a slow posterior: bound it with\n" +
			"--budget or --steps.\n" +
			"SIGINT or SIGTERM stops at the next safe point (during sampling: the current step is\n" +
			"finished and a checkpoint written) and exits with code 3; continue with\n" +
			"`chord resume RUNDIR`. A second signal stops at once. The run directory is locked\n" +
			"while the fit runs (docs/runs.md).",
		Flags: append([]cli.Flag{
			&cli.StringFlag{Name: "config", Aliases: []string{"c"}, Usage: "retrieval configuration `FILE` (TOML)", Required: true},
			&cli.StringFlag{Name: "output", Aliases: []string{"o"}, Usage: "run `DIR` to create (must be empty or absent); required unless --check"},
			&cli.BoolFlag{Name: "check", Usage: "only check: load the configuration, observations, opacity tables and priors, build the problem, evaluate the posterior once at a draw from the prior, say what was checked and stop; nothing is written"},
			&cli.Uint64Flag{Name: "seed", Usage: "random seed `N`", DefaultText: "the configuration's, else a fresh one, recorded"},
			&cli.BoolFlag{Name: "force", Usage: "replace the chord run in DIR (only a directory with a run.toml; only chord's files are removed)"},
			demoCacheFlag(),
			&cli.StringFlag{Name: "truth", Usage: "scenario or model configuration `FILE` the observation was simulated from (its values are marked in the plots)"},
			&cli.StringSliceFlag{Name: "without", Usage: "fit the reduced model: hold `GAS`'s log10 mixing ratio at its prior's lower edge (repeatable; compare the evidences with chord compare, or use chord detect)"},
		}, append(stopFlags, runFlags...)...),
		Action: runFit,
	}
}

// workersFlag is --workers of the commands that fit.
func workersFlag() cli.Flag {
	return &cli.IntFlag{Name: "workers", Usage: "`N` goroutines evaluating the posterior", DefaultText: "the configuration's, else one per core"}
}

// stopRule reads the stopping-rule flags; the zero rule means "not given".
func stopRule(c *cli.Context) (config.StopRule, error) {
	var s config.StopRule
	n := 0
	if c.IsSet("steps") {
		n++
		if s.Steps = c.Int("steps"); s.Steps < 1 {
			return s, fmt.Errorf("--steps %d: must be at least 1", s.Steps)
		}
	}
	if c.IsSet("budget") {
		n++
		d := c.Duration("budget")
		if d <= 0 {
			return s, fmt.Errorf("--budget %v: must be positive", d)
		}
		s.Budget = d.Seconds()
	}
	if c.Bool("until-converged") {
		n++
		s.UntilConverged = true
	}
	if n > 1 {
		return s, fmt.Errorf("give at most one of --steps, --budget and --until-converged")
	}
	if c.Int("checkpoint-every") < 0 {
		return s, fmt.Errorf("--checkpoint-every %d: must be positive", c.Int("checkpoint-every"))
	}
	return s, nil
}

// session holds what fit, resume and demo share: the signal context and
// the progress settings. The first SIGINT or SIGTERM cancels the context
// (the command stops at its next check, saving what it must); after it
// the signals have their default effect again, so a second one ends the
// process at once. That is safe at any instant: every file chord writes
// is replaced atomically, and a run resumes from its last checkpoint.
func session(c *cli.Context) (context.Context, context.CancelFunc, retrieve.Progress) {
	ctx, cancel := context.WithCancel(c.Context)
	sig := make(chan os.Signal, 1)
	signal.Notify(sig, os.Interrupt, syscall.SIGTERM)
	go func() {
		select {
		case s := <-sig:
			signal.Stop(sig) // the default handling again
			fmt.Fprintf(c.App.ErrWriter, "\nchord: %v: stopping at the next safe point (a second signal stops at once; a run resumes from its last checkpoint)\n", s)
			cancel()
		case <-ctx.Done():
			signal.Stop(sig)
		}
	}()
	p := retrieve.Progress{
		Writer:   c.App.ErrWriter,
		Terminal: term.IsTerminal(int(os.Stderr.Fd())) && c.App.ErrWriter == os.Stderr,
	}
	if s := os.Getenv("CHORD_LOG_INTERVAL"); s != "" {
		if d, err := time.ParseDuration(s); err == nil {
			p.LogInterval = d
		}
	}
	return ctx, cancel, p
}

func runFit(c *cli.Context) error {
	if c.NArg() > 0 {
		return fmt.Errorf("fit: unexpected argument %q", c.Args().First())
	}
	stop, err := stopRule(c)
	if err != nil {
		return err
	}
	unboundedWarning(c.App.ErrWriter, c.String("config"), stop != (config.StopRule{}))
	if c.Bool("check") {
		return checkFit(c, stop)
	}
	if c.String("output") == "" {
		return errors.New("fit: give the run directory with -o DIR (or --check to check the configuration only)")
	}
	ctx, cancel, prog := session(c)
	defer cancel()
	opt := retrieve.FitOptions{
		ConfigPath: c.String("config"), RunDir: c.String("output"), Force: c.Bool("force"),
		Stop: stop, DemoCache: c.String("demo-cache"), Progress: prog, CheckpointSteps: c.Int("checkpoint-every"),
		HTML: c.Bool("html"), Without: c.StringSlice("without"),
	}
	opt.Seed, opt.Workers = flagIfSet(c, "seed", c.Uint64), flagIfSet(c, "workers", c.Int)
	if path := c.String("truth"); path != "" {
		sc, err := simulate.LoadScenario(path)
		if err != nil {
			return fmt.Errorf("--truth: %w", err)
		}
		opt.Truth = &sc.Config.ModelConfig
	}
	rep, err := retrieve.Fit(ctx, opt)
	return finishRun(c, rep, err)
}

// runAdvice adds to the error of a run what to do next with chord.
func runAdvice(err error) error {
	var se *retrieve.StoppedError
	var ne *retrieve.NotEmptyError
	switch {
	case errors.As(err, &se):
		return fmt.Errorf("%w; fix the cause and continue it with: chord resume %s", err, se.Dir)
	case errors.As(err, &ne) && ne.Entry == retrieve.RunFile:
		return fmt.Errorf("%w: continue it with chord resume %s, choose another directory with -o, or pass --force to replace it", err, ne.Dir)
	case errors.Is(err, fs.ErrExist):
		return fmt.Errorf("%w: choose another directory with -o, or pass --force to replace it", err)
	}
	return err
}

// finishRun prints the end of a fit or resume and maps an interruption to
// errInterrupted.
func finishRun(c *cli.Context, rep *retrieve.RunReport, err error) error {
	if err != nil {
		return runAdvice(err)
	}
	w := c.App.ErrWriter
	out := rep.Outcome
	unit, at, evals := "steps in the chain", "step", float64(out.Steps*rep.Walkers)
	if out.Evidence != nil {
		unit, at, evals = "dead points", "dead point", float64(out.SessionEvaluations)
	}
	switch {
	case out.BeforeStart:
		fmt.Fprintf(w, "chord: interrupted while the starting point and initial walkers (or live points) were being made, before the first checkpoint.\n")
		fmt.Fprintf(w, "chord: continue it with:  chord resume %s   (it starts again from the run's seed)\n", rep.Dir)
		return errInterrupted
	case out.Met && out.Evidence != nil:
		fmt.Fprintf(w, "chord: %s has already met its stopping rule (%v, %d dead points): nothing to do.\n", rep.Dir, out.Stop, out.Step)
		if !out.Evidence.Finished {
			fmt.Fprintf(w, "chord: to sample further, give a new budget: chord resume %s --budget DURATION (a total above the time spent) or --until-converged\n", rep.Dir)
		}
		return nil
	case out.Met:
		fmt.Fprintf(w, "chord: %s has already met its stopping rule (%v, %d steps in the chain): nothing to do.\n", rep.Dir, out.Stop, out.Step)
		fmt.Fprintf(w, "chord: to sample further, give a new rule: chord resume %s --steps N (a total above %d) or --budget DURATION\n", rep.Dir, out.Step)
		return nil
	}
	fmt.Fprintf(w, "chord: %s: %d %s (%d this session, %s, %.0f evaluations/s); stopped: %v\n",
		rep.Dir, out.Step, unit, out.Steps, out.Elapsed.Round(time.Second), evals/max(out.Elapsed.Seconds(), 1e-9), out.Stop)
	if out.Stop == sampler.StopCanceled {
		fmt.Fprintf(w, "chord: interrupted; the chain and a checkpoint at %s %d are saved.\n", at, out.Step)
		fmt.Fprintf(w, "chord: continue it with:  chord resume %s\n", rep.Dir)
		return errInterrupted
	}
	if rep.Summary == nil && rep.SummaryText != "" {
		fmt.Fprintf(w, "chord: %s", rep.SummaryText)
		fmt.Fprintf(w, "chord: continue it with:  chord resume %s\n", rep.Dir)
	}
	if s := rep.Summary; s != nil && s.Evidence != nil {
		e := s.Evidence
		fmt.Fprintf(w, "chord: ln Z = %.2f ± %.2f, information %.1f nats; finished: %v (summary.txt)\n", e.LogZ, e.LogZErr, e.Information, yesNo(e.Finished))
		fmt.Fprintf(c.App.Writer, "%s\n", rep.SummaryText)
		fmt.Fprintf(w, "chord: the summary (summary.txt, summary.json) and plots are in %s\n", rep.Dir)
	} else if s != nil {
		// tau as the summary states it (estimated after the burn-in), so
		// that the last line and summary.txt agree.
		fmt.Fprintf(w, "chord: largest autocorrelation time %.1f steps; the chain is %.1f of them long; converged: %v (summary.txt)\n", float64(s.MaxTau), float64(s.ChainTaus), yesNo(s.Converged))
		fmt.Fprintf(c.App.Writer, "%s\n", rep.SummaryText)
		fmt.Fprintf(w, "chord: the summary (summary.txt, summary.json) and plots are in %s\n", rep.Dir)
	}
	return nil
}

func yesNo(b bool) string {
	if b {
		return "yes"
	}
	return "no"
}
