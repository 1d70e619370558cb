package main

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"text/tabwriter"

	"chord/campaign"
	"chord/internal/runlock"

	"github.com/urfave/cli/v2"
)

// slurmFlags are the resources of each array task; they override the
// grid file's [slurm].
var slurmFlags = []cli.Flag{
	&cli.StringFlag{Name: "time", Usage: "time limit per task, Slurm's `FORM` (minutes, H:MM:SS or D-HH:MM:SS)"},
	&cli.IntFlag{Name: "cpus-per-task", Usage: "`N` cores per task (the fit's workers)"},
	&cli.StringFlag{Name: "memory", Usage: "memory per task, Slurm's `SIZE` (e.g. 2G, 500M)"},
	&cli.StringFlag{Name: "partition", Usage: "Slurm `PARTITION`"},
	&cli.IntFlag{Name: "max-running", Usage: "at most `N` tasks at once"},
	&cli.BoolFlag{Name: "submit", Usage: "submit the script with sbatch and print the job id"},
}

// gridCommand returns the grid command.
func gridCommand() *cli.Command {
	return &cli.Command{
		Name:      "grid",
		Usage:     "expand a grid of fits (scenarios or configurations x axes) and run it here or as a Slurm job array",
		ArgsUsage: " ",
		Description: "Expands the grid file (-c) into GRIDDIR (-o): one run directory per point of the\n" +
			"axes' cartesian product, an index (index.csv, index.parquet) and the grid's identity.\n" +
			"Running it again with the same grid changes nothing; a different grid is refused.\n" +
			"Then --local runs the points here (--jobs at a time, sharing the opacity tables), or\n" +
			"--slurm writes a job-array script (one task per point, each running\n" +
			"`chord grid run-point GRIDDIR INDEX`, which fits the point or resumes it from its\n" +
			"checkpoint) and --submit submits it. GRIDDIR must be on a filesystem the compute nodes\n" +
			"share. Follow with `chord grid status`, `chord grid resubmit` and `chord grid collect`.",
		Flags: append([]cli.Flag{
			&cli.StringFlag{Name: "config", Aliases: []string{"c"}, Usage: "grid `FILE` (TOML); omit it to run a grid already in GRIDDIR"},
			&cli.StringFlag{Name: "output", Aliases: []string{"o"}, Usage: "grid `DIR` (required)"},
			&cli.BoolFlag{Name: "local", Usage: "run the unfinished points on this machine"},
			&cli.IntFlag{Name: "jobs", Value: 1, Usage: "with --local, `N` points at once"},
			&cli.IntFlag{Name: "workers", Usage: "with --local, `N` workers per fit", DefaultText: "the cores divided among the jobs"},
			&cli.BoolFlag{Name: "slurm", Usage: "write a Slurm job-array script for every point"},
			demoCacheFlag(),
		}, slurmFlags...),
		Action: runGrid,
		Subcommands: []*cli.Command{
			{
				Name: "run-point", Usage: "fit one point of a grid, or resume it from its checkpoint (what each array task runs)",
				ArgsUsage: "GRIDDIR INDEX",
				Description: "Does nothing when the point is done. Workers: --workers, else $SLURM_CPUS_PER_TASK,\n" +
					"else the configuration's. SIGTERM (a time limit, scancel) writes a checkpoint and\n" +
					"exits with code 3.",
				Flags: []cli.Flag{
					&cli.IntFlag{Name: "workers", Usage: "`N` goroutines evaluating the posterior"},
					demoCacheFlag(),
				},
				Action: runGridPoint,
			},
			{
				Name: "status", Usage: "show each point's state: not started, running, stopped with a checkpoint at step k, done",
				ArgsUsage: "GRIDDIR", Action: runGridStatus,
			},
			{
				Name: "resubmit", Usage: "write (and with --submit submit) a job array of the unfinished points, continuing from their checkpoints",
				ArgsUsage: "GRIDDIR", Flags: slurmFlags, Action: runGridResubmit,
			},
			{
				Name: "collect", Usage: "one summary table (summary.csv, summary.parquet) of every point, and the width-against-noise comparison",
				ArgsUsage: "GRIDDIR", Action: runGridCollect,
			},
		},
	}
}

func runGrid(c *cli.Context) error {
	if c.Bool("local") && c.Bool("slurm") {
		return errors.New("grid: give --local or --slurm, not both")
	}
	if !c.Bool("slurm") {
		if f, ok := firstSet(c, "time", "cpus-per-task", "memory", "partition", "max-running", "submit"); ok {
			return fmt.Errorf("grid: --%s belongs with --slurm", f)
		}
	}
	if !c.Bool("local") && (c.IsSet("jobs") || c.IsSet("workers")) {
		return errors.New("grid: --jobs and --workers belong with --local")
	}
	dir := c.String("output")
	if dir == "" {
		return errors.New("grid: give the grid directory with -o GRIDDIR (and a grid file with -c to expand one)")
	}
	var g *campaign.Grid
	var err error
	if c.IsSet("config") {
		g, err = campaign.CreateGrid(c.String("config"), dir, campaign.GridOptions{DemoCache: c.String("demo-cache"), Log: c.App.ErrWriter})
		if err == nil {
			fmt.Fprintf(c.App.ErrWriter, "chord grid: %d points in %s (identity %s); index in index.csv\n", len(g.Points), g.Dir, g.Identity()[:12])
		}
	} else {
		g, err = campaign.OpenGrid(dir)
	}
	if err != nil {
		return gridAdvice(err, dir)
	}
	switch {
	case c.Bool("local"):
		if c.Int("jobs") < 1 {
			return fmt.Errorf("grid: --jobs %d: must be at least 1", c.Int("jobs"))
		}
		opt := campaign.LocalOptions{Jobs: c.Int("jobs"), DemoCache: c.String("demo-cache"), Log: c.App.ErrWriter}
		opt.OnPoint = newPointsProgress(c.App.ErrWriter, "chord grid", "points").update
		if c.IsSet("workers") {
			w := c.Int("workers")
			if w < 1 {
				return fmt.Errorf("grid: --workers %d: must be at least 1", w)
			}
			opt.Workers = &w
		}
		ctx, cancel, _ := session(c)
		defer cancel()
		rep, err := g.RunLocal(ctx, opt)
		if err != nil {
			return err
		}
		fmt.Fprintf(c.App.ErrWriter, "chord grid: %d points done, %d stopped, %d failed\n", len(rep.Done), len(rep.Stopped), len(rep.Failed))
		if len(rep.Failed) > 0 {
			return fmt.Errorf("grid: %d points failed (chord grid status %s lists them); first: %w", len(rep.Failed), g.Dir, rep.Errors[0])
		}
		if len(rep.Stopped) > 0 || ctx.Err() != nil {
			fmt.Fprintf(c.App.ErrWriter, "chord: continue with:  chord grid -o %s --local\n", g.Dir)
			return errInterrupted
		}
		fmt.Fprintf(c.App.ErrWriter, "chord grid: collect the results with:  chord grid collect %s\n", g.Dir)
	case c.Bool("slurm"):
		return writeSlurm(c, g, nil)
	}
	return nil
}

// slurmSettings are the grid file's [slurm] with the flags applied.
func slurmSettings(c *cli.Context, g *campaign.Grid) campaign.SlurmSettings {
	return g.Slurm().Merge(campaign.SlurmSettings{Time: c.String("time"), CPUsPerTask: c.Int("cpus-per-task"),
		Memory: c.String("memory"), Partition: c.String("partition"), MaxRunning: c.Int("max-running")})
}

// chordBinary is the absolute path of this chord binary, which the array
// tasks run.
func chordBinary() (string, error) {
	exe, err := os.Executable()
	if err != nil {
		return "", fmt.Errorf("grid: cannot find the chord binary: %w", err)
	}
	if r, err := filepath.EvalSymlinks(exe); err == nil {
		exe = r
	}
	return filepath.Abs(exe)
}

func writeSlurm(c *cli.Context, g *campaign.Grid, points []int) error {
	exe, err := chordBinary()
	if err != nil {
		return err
	}
	script, err := g.WriteSlurmScript(points, slurmSettings(c, g), exe)
	if err != nil {
		return err
	}
	fmt.Fprintf(c.App.ErrWriter, "chord grid: job-array script %s\n", script)
	if !c.Bool("submit") {
		fmt.Fprintf(c.App.ErrWriter, "chord grid: submit it with:  sbatch %s\n", script)
		return nil
	}
	id, err := g.SubmitSlurm(script)
	if err != nil {
		return err
	}
	fmt.Fprintln(c.App.Writer, id)
	fmt.Fprintf(c.App.ErrWriter, "chord grid: submitted job %s; follow it with:  chord grid status %s\n", id, g.Dir)
	return nil
}

func runGridPoint(c *cli.Context) error {
	if c.NArg() != 2 {
		return fmt.Errorf("grid run-point: give GRIDDIR and INDEX (got %d arguments)", c.NArg())
	}
	g, err := campaign.OpenGrid(c.Args().Get(0))
	if err != nil {
		return gridAdvice(err, c.Args().Get(0))
	}
	i, err := strconv.Atoi(c.Args().Get(1))
	if err != nil {
		return fmt.Errorf("grid run-point: INDEX %q: give a point number", c.Args().Get(1))
	}
	ctx, cancel, prog := session(c)
	defer cancel()
	what := "chord grid run-point"
	if j := os.Getenv("SLURM_ARRAY_JOB_ID"); j != "" {
		what += fmt.Sprintf(", Slurm job %s_%s", j, os.Getenv("SLURM_ARRAY_TASK_ID"))
	}
	holder := runlock.Holder(what)
	opt := campaign.PointOptions{DemoCache: c.String("demo-cache"), Progress: prog, Log: c.App.ErrWriter, Holder: holder}
	w, set := 0, false
	if c.IsSet("workers") {
		w, set = c.Int("workers"), true
	} else if s := os.Getenv("SLURM_CPUS_PER_TASK"); s != "" {
		if n, err := strconv.Atoi(s); err == nil && n > 0 {
			w, set = n, true
		}
	}
	if set {
		opt.Workers = &w
	}
	fmt.Fprintf(c.App.ErrWriter, "chord grid: point %d of %s (%s)\n", i, g.Dir, settingsOrEmpty(g, i))
	rep, err := g.RunPoint(ctx, i, opt)
	if err != nil {
		return err
	}
	if rep.Outcome == nil {
		return nil // done before; kept
	}
	return finishRun(c, rep, nil)
}

func settingsOrEmpty(g *campaign.Grid, i int) string {
	if i < 0 || i >= len(g.Points) {
		return "no such point"
	}
	return g.Settings(i)
}

func oneGridDir(c *cli.Context, cmd string) (*campaign.Grid, error) {
	if c.NArg() != 1 {
		return nil, fmt.Errorf("grid %s: give one grid directory (got %d arguments)", cmd, c.NArg())
	}
	g, err := campaign.OpenGrid(c.Args().First())
	return g, gridAdvice(err, c.Args().First())
}

// gridAdvice adds to a grid's error what to do next with chord.
func gridAdvice(err error, dir string) error {
	switch {
	case errors.Is(err, campaign.ErrNoGrid):
		return fmt.Errorf("%w: expand one with chord grid -c GRID.toml -o %s", err, dir)
	case errors.Is(err, campaign.ErrNotDone):
		return fmt.Errorf("%w; chord grid status %s lists them", err, dir)
	}
	return err
}

func runGridStatus(c *cli.Context) error {
	g, err := oneGridDir(c, "status")
	if err != nil {
		return err
	}
	st, err := g.Status()
	if err != nil {
		return err
	}
	tw := tabwriter.NewWriter(c.App.Writer, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "point\tdir\tsettings\tstate")
	count := map[campaign.PointState]int{}
	for _, s := range st {
		count[s.State]++
		fmt.Fprintf(tw, "%d\tpoints/%s\t%s\t%s\n", s.Index, g.Points[s.Index].Name, g.Settings(s.Index), s)
	}
	tw.Flush()
	var parts []string
	for _, k := range []campaign.PointState{campaign.PointDone, campaign.PointRunning, campaign.PointQueued, campaign.PointStopped, campaign.PointFailed, campaign.PointNotStarted} {
		if count[k] > 0 {
			parts = append(parts, fmt.Sprintf("%d %s", count[k], k))
		}
	}
	fmt.Fprintf(c.App.Writer, "%d points: %s\n", len(st), strings.Join(parts, ", "))
	return nil
}

func runGridResubmit(c *cli.Context) error {
	g, err := oneGridDir(c, "resubmit")
	if err != nil {
		return err
	}
	pts, err := g.Unfinished()
	if err != nil {
		return err
	}
	if len(pts) == 0 {
		fmt.Fprintf(c.App.ErrWriter, "chord grid: every point of %s is done, running or queued: nothing to resubmit\n", g.Dir)
		return nil
	}
	fmt.Fprintf(c.App.ErrWriter, "chord grid: %d unfinished points: %v\n", len(pts), pts)
	return writeSlurm(c, g, pts)
}

func runGridCollect(c *cli.Context) error {
	g, err := oneGridDir(c, "collect")
	if err != nil {
		return err
	}
	col, err := g.CollectGrid()
	if err != nil {
		return gridAdvice(err, g.Dir)
	}
	fmt.Fprint(c.App.Writer, col.Table)
	fmt.Fprintf(c.App.ErrWriter, "chord grid: summary.csv and summary.parquet (%d rows), comparison.txt and comparison.json written to %s\n", col.Rows, g.Dir)
	return nil
}
