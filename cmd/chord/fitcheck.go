package main

import (
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"path/filepath"
	"strings"
	"time"

	"github.com/urfave/cli/v2"

	"chord/config"
	"chord/report"
	"chord/retrieve"
	"chord/sampler"
)

// unboundedWarning warns, when neither a flag nor the configuration at
// path gives a stopping rule, that an ensemble run then goes on until
// converged, which has no bound in time. A configuration that does not
// decode is left to the fit to report.
func unboundedWarning(w io.Writer, path string, flagGiven bool) {
	if flagGiven {
		return
	}
	c, err := retrieve.DecodeConfig(path, nil)
	if err != nil {
		return
	}
	s := c.Sampler
	if s.Method == config.MethodNested || s.Steps != nil || s.Budget != "" || s.UntilConverged != nil {
		return
	}
	fmt.Fprintf(w, "chord: warning: %s gives no stopping rule, so the run samples until converged (%g autocorrelation times, tau stable to %g%%): "+
		"for a slow posterior that may take days. Bound it with --budget DURATION (e.g. --budget 8h) or --steps N, "+
		"or sampler.budget or sampler.steps in the configuration; a run stopped by its budget continues with chord resume RUNDIR --budget LONGER.\n",
		path, sampler.DefaultConvergedTaus, 100*sampler.DefaultTauRelChange)
}

// checkFit is chord fit --check: it loads and checks everything a fit
// needs (the configuration, its observations, the opacity tables, the
// priors), builds the problem and evaluates the posterior once, at a draw
// from the prior made with the run's seed, then says what it checked.
// Nothing is written.
func checkFit(c *cli.Context, stop config.StopRule) error {
	path := c.String("config")
	cfg, err := retrieve.DecodeConfig(path, c.StringSlice("without"))
	if err != nil {
		return err
	}
	r, err := cfg.Resolve()
	if err != nil {
		return config.InFile(path, err)
	}
	if stop != (config.StopRule{}) {
		r.Stop = stop
	}
	seed := r.Seed
	if c.IsSet("seed") {
		seed = c.Uint64("seed")
	}
	log := c.App.ErrWriter
	set, err := r.Config.LoadOpacity(c.String("demo-cache"), log)
	if err != nil {
		return config.InFile(path, err)
	}
	prob, err := retrieve.NewProblem(r, set)
	if err != nil {
		return config.InFile(path, err)
	}
	x := make([]float64, prob.Dim())
	if err := prob.DrawPrior(x, rand.New(rand.NewPCG(seed, 0))); err != nil {
		return fmt.Errorf("%s: no starting point: %w", path, err)
	}
	extra := make([]float64, prob.NumExtra())
	lp := prob.NewPosteriorEvaluator().LogProb(x, extra)

	w := c.App.Writer
	fmt.Fprintf(w, "configuration: %s: valid\n", path)
	if r.Method == config.MethodNested {
		fmt.Fprintf(w, "sampler:       nested sampling, %d live points, seed %d\n", r.LivePoints, seed)
	} else {
		fmt.Fprintf(w, "sampler:       ensemble of %d walkers (%s move), seed %d, stopping rule: %s\n", r.Walkers, r.Move, seed, stopText(r.Stop))
	}
	for i, d := range r.Datasets {
		label := "observations:"
		if i > 0 {
			label = ""
		}
		fmt.Fprintf(w, "%-14s %s: %d bins, %.4g-%.4g um (%s)\n", label, d.Name, d.Len(), minOf(d.Lo)*1e6, maxOf(d.Hi)*1e6, d.Path)
	}
	fmt.Fprintf(w, "opacity:       %s\n", opacityText(set.Files, set.Demo))
	for i, p := range r.Free {
		label := "priors:"
		if i > 0 {
			label = ""
		}
		fmt.Fprintf(w, "%-14s %s ~ %v\n", label, p.Name, p.Prior)
	}
	fmt.Fprintf(w, "problem:       %d free parameters, %d fixed\n", prob.Dim(), len(r.Fixed))
	var at []string
	for i, p := range r.Free {
		at = append(at, fmt.Sprintf("%s = %.4g", p.Name, x[i]))
	}
	fmt.Fprintf(w, "posterior:     ln posterior %.6g, ln likelihood %.6g at a draw from the prior (seed %d): %s\n", lp, extra[0], seed, strings.Join(at, ", "))
	if math.IsInf(lp, 0) || math.IsNaN(lp) {
		return fmt.Errorf("%s: the posterior is %v at a draw from the prior", path, lp)
	}
	for _, n := range r.Notes {
		fmt.Fprintln(log, "chord: note:", n)
	}
	for _, wn := range r.Warnings {
		fmt.Fprintln(log, "chord: warning:", wn)
	}
	for _, n := range prob.Notes() {
		fmt.Fprintln(log, "chord: note:", n)
	}
	if set.Demo {
		fmt.Fprintln(log, "chord: "+report.DemoWarning)
	}
	fmt.Fprintf(log, "chord fit --check: everything loads and the posterior is finite; nothing was written. Start the run with: chord fit -c %s -o RUNDIR\n", path)
	return nil
}

// stopText describes a stopping rule as the flags give it.
func stopText(s config.StopRule) string {
	switch {
	case s.Steps > 0:
		return fmt.Sprintf("%d steps", s.Steps)
	case s.Budget > 0:
		return fmt.Sprintf("a budget of %v", time.Duration(s.Budget*float64(time.Second)))
	}
	return "until converged"
}

func opacityText(files []string, demo bool) string {
	if len(files) == 0 {
		return "no table files"
	}
	var names []string
	for _, f := range files {
		names = append(names, filepath.Base(f))
	}
	s := fmt.Sprintf("%d table files, read and checked: %s", len(files), strings.Join(names, ", "))
	if demo {
		s += " (demo tables: not for science)"
	}
	return s
}

func minOf(v []float64) float64 {
	m := math.Inf(1)
	for _, x := range v {
		m = math.Min(m, x)
	}
	return m
}

func maxOf(v []float64) float64 {
	m := math.Inf(-1)
	for _, x := range v {
		m = math.Max(m, x)
	}
	return m
}
