package campaign

import (
	"bytes"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"time"

	"chord/internal/atomicfile"
	"chord/internal/filehash"
	"chord/internal/version"
)

// Grids on Slurm: a job-array batch script, one array task per point,
// each running `chord grid run-point GRIDDIR INDEX`, which fits the point
// or resumes it from its checkpoint. The script names the chord binary
// and the grid directory by absolute path, so the grid directory must be
// on a filesystem shared by the submitting host and the compute nodes.
// When Slurm stops a task (time limit, scancel) it sends SIGTERM: chord
// finishes the current step, writes a checkpoint and exits with code 3;
// the point is then "stopped" and chord grid resubmit continues it.

// SlurmSettings are the resources of each array task ([slurm] of a grid
// file, or flags). Empty fields leave the cluster's defaults.
type SlurmSettings struct {
	Time        string `toml:"time,omitempty"`          // time limit per task, Slurm's form: "90" (min), "2:00:00", "1-12:00:00"
	CPUsPerTask int    `toml:"cpus_per_task,omitempty"` // cores per task (the fit's workers); default 1
	Memory      string `toml:"memory,omitempty"`        // memory per task, e.g. "2G", "500M"
	Partition   string `toml:"partition,omitempty"`     // partition (queue) name
	MaxRunning  int    `toml:"max_running,omitempty"`   // at most this many tasks at once (array "%N"); 0 no limit
}

var (
	slurmTimeRE = regexp.MustCompile(`^(\d+-)?\d+(:\d{1,2}){0,2}$|^\d+-\d+$`)
	slurmMemRE  = regexp.MustCompile(`^\d+[KMGT]?$`)
	slurmNameRE = regexp.MustCompile(`^[A-Za-z0-9_.,-]+$`)
)

func (s *SlurmSettings) check() error {
	switch {
	case s.Time != "" && !slurmTimeRE.MatchString(s.Time):
		return fmt.Errorf("slurm.time %q: give minutes, H:MM:SS or D-HH:MM:SS", s.Time)
	case s.Memory != "" && !slurmMemRE.MatchString(s.Memory):
		return fmt.Errorf("slurm.memory %q: give a size such as 2G or 500M", s.Memory)
	case s.Partition != "" && !slurmNameRE.MatchString(s.Partition):
		return fmt.Errorf("slurm.partition %q: not a partition name", s.Partition)
	case s.CPUsPerTask < 0:
		return fmt.Errorf("slurm.cpus_per_task %d: must be positive", s.CPUsPerTask)
	case s.MaxRunning < 0:
		return fmt.Errorf("slurm.max_running %d: must not be negative", s.MaxRunning)
	}
	return nil
}

// Merge returns s with the set fields of o replacing its own.
func (s SlurmSettings) Merge(o SlurmSettings) SlurmSettings {
	if o.Time != "" {
		s.Time = o.Time
	}
	if o.CPUsPerTask != 0 {
		s.CPUsPerTask = o.CPUsPerTask
	}
	if o.Memory != "" {
		s.Memory = o.Memory
	}
	if o.Partition != "" {
		s.Partition = o.Partition
	}
	if o.MaxRunning != 0 {
		s.MaxRunning = o.MaxRunning
	}
	return s
}

// arraySpec writes sorted point indices as Slurm's array ranges,
// e.g. "0-3,7,9-10".
func arraySpec(pts []int) string {
	var b strings.Builder
	for i := 0; i < len(pts); {
		j := i
		for j+1 < len(pts) && pts[j+1] == pts[j]+1 {
			j++
		}
		if b.Len() > 0 {
			b.WriteByte(',')
		}
		if j > i {
			fmt.Fprintf(&b, "%d-%d", pts[i], pts[j])
		} else {
			b.WriteString(strconv.Itoa(pts[i]))
		}
		i = j + 1
	}
	return b.String()
}

func shellQuote(s string) string { return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'" }

// WriteSlurmScript writes a job-array script for the given points (all
// when nil) to GRIDDIR/slurm/array-NNN.sh and returns its path. chord is
// the absolute path of the chord binary the tasks run.
func (g *Grid) WriteSlurmScript(points []int, s SlurmSettings, chord string) (string, error) {
	if err := s.check(); err != nil {
		return "", err
	}
	if !filepath.IsAbs(chord) {
		return "", fmt.Errorf("slurm: the chord binary %q must be an absolute path", chord)
	}
	if points == nil {
		for i := range g.Points {
			points = append(points, i)
		}
	}
	if len(points) == 0 {
		return "", errors.New("slurm: no points to run")
	}
	points = append([]int(nil), points...)
	sort.Ints(points)
	for _, p := range points {
		if p < 0 || p >= len(g.Points) {
			return "", fmt.Errorf("slurm: point %d: the grid has points 0 to %d", p, len(g.Points)-1)
		}
	}
	sd := filepath.Join(g.Dir, "slurm")
	if err := os.MkdirAll(filepath.Join(sd, "logs"), 0o755); err != nil {
		return "", err
	}
	var path string
	for n := 1; ; n++ {
		path = filepath.Join(sd, fmt.Sprintf("array-%03d.sh", n))
		if _, err := os.Stat(path); errors.Is(err, os.ErrNotExist) {
			break
		}
	}
	arr := arraySpec(points)
	if s.MaxRunning > 0 {
		arr += "%" + strconv.Itoa(s.MaxRunning)
	}
	var b bytes.Buffer
	b.WriteString("#!/bin/bash\n")
	fmt.Fprintf(&b, "#SBATCH --job-name=chord-grid-%s\n", filehash.Short(g.rec.Identity)[:8])
	fmt.Fprintf(&b, "#SBATCH --array=%s\n", arr)
	fmt.Fprintf(&b, "#SBATCH --cpus-per-task=%d\n", max(s.CPUsPerTask, 1))
	if s.Time != "" {
		fmt.Fprintf(&b, "#SBATCH --time=%s\n", s.Time)
	}
	if s.Memory != "" {
		fmt.Fprintf(&b, "#SBATCH --mem=%s\n", s.Memory)
	}
	if s.Partition != "" {
		fmt.Fprintf(&b, "#SBATCH --partition=%s\n", s.Partition)
	}
	fmt.Fprintf(&b, "#SBATCH --output=%s\n", filepath.Join(sd, "logs", "%A_%a.out"))
	b.WriteString("#SBATCH --open-mode=append\n")
	fmt.Fprintf(&b, "#\n# Grid %s (%d points; this array runs %d of them), written by chord %s.\n", g.Dir, len(g.Points), len(points), version.Version)
	b.WriteString("# Each task fits its point, or resumes it from its checkpoint. On SIGTERM (time\n")
	b.WriteString("# limit, scancel) chord writes a checkpoint and exits with code 3; continue the\n")
	fmt.Fprintf(&b, "# unfinished points with: chord grid resubmit %s --submit\n", g.Dir)
	fmt.Fprintf(&b, "exec %s grid run-point %s \"$SLURM_ARRAY_TASK_ID\"\n", shellQuote(chord), shellQuote(g.Dir))
	if err := atomicfile.Write(path, b.Bytes(), false); err != nil {
		return "", err
	}
	return path, os.Chmod(path, 0o755)
}

// SubmitSlurm submits a script with sbatch and returns the job id; the
// submission is recorded in GRIDDIR/slurm/jobs.txt.
func (g *Grid) SubmitSlurm(script string) (string, error) {
	cmd := exec.Command("sbatch", "--parsable", script)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		var ee *exec.Error
		if errors.As(err, &ee) {
			return "", fmt.Errorf("sbatch: %w (is this a Slurm submission host?)", err)
		}
		return "", fmt.Errorf("sbatch %s: %v: %s", script, err, strings.TrimSpace(stderr.String()))
	}
	id, _, _ := strings.Cut(strings.TrimSpace(string(out)), ";")
	if id == "" {
		return "", fmt.Errorf("sbatch %s printed no job id", script)
	}
	f, err := os.OpenFile(filepath.Join(g.Dir, "slurm", "jobs.txt"), os.O_CREATE|os.O_WRONLY|os.O_APPEND, 0o644)
	if err != nil {
		return id, err
	}
	defer f.Close()
	_, err = fmt.Fprintf(f, "%s %s %s\n", id, time.Now().UTC().Format(time.RFC3339), script)
	return id, err
}

// Unfinished lists the points that are neither done, running nor queued
// (not started, stopped or failed).
func (g *Grid) Unfinished() ([]int, error) {
	st, err := g.Status()
	if err != nil {
		return nil, err
	}
	var pts []int
	for _, s := range st {
		if s.State != PointDone && s.State != PointRunning && s.State != PointQueued {
			pts = append(pts, s.Index)
		}
	}
	return pts, nil
}

// queuedPoints asks squeue which array tasks of the grid's submissions
// (slurm/jobs.txt) are still pending or starting, by point (array index
// = point number). Without jobs.txt or a reachable squeue it finds none.
func (g *Grid) queuedPoints() map[int]string {
	b, err := os.ReadFile(filepath.Join(g.Dir, "slurm", "jobs.txt"))
	if err != nil {
		return nil
	}
	q := map[int]string{}
	for _, line := range strings.Split(string(b), "\n") {
		f := strings.Fields(line)
		if len(f) == 0 {
			continue
		}
		// One query per job: squeue refuses a list holding a job it has forgotten.
		out, err := exec.Command("squeue", "-h", "-r", "-j", f[0], "-o", "%i %T").Output()
		if err != nil {
			continue
		}
		for _, l := range strings.Split(string(out), "\n") {
			id, state, ok := strings.Cut(strings.TrimSpace(l), " ")
			if !ok || (state != "PENDING" && state != "CONFIGURING" && state != "RUNNING") {
				continue
			}
			job, task, ok := strings.Cut(id, "_")
			n, err := strconv.Atoi(task)
			if !ok || err != nil || job != f[0] || n < 0 || n >= len(g.Points) {
				continue
			}
			q[n] = fmt.Sprintf("Slurm job %s, %s", id, strings.ToLower(state))
		}
	}
	return q
}
