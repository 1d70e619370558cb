package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// The example grid expands, writes a job-array script whose resources
// come from the grid file and the flags, and refuses bad requests.
func TestGridCommands(t *testing.T) {
	example, err := filepath.Abs("../../testdata/grid/noise-clouds.toml")
	if err != nil {
		t.Fatal(err)
	}
	dir := filepath.Join(t.TempDir(), "grid")
	_, errOut, err := runCmd(t, "grid", "-c", example, "-o", dir, "--slurm", "--cpus-per-task", "3", "--partition", "short")
	if err != nil {
		t.Fatalf("%v\n%s", err, errOut)
	}
	if !strings.Contains(errOut, "12 points in "+dir) {
		t.Errorf("stderr:\n%s", errOut)
	}
	script, err := os.ReadFile(filepath.Join(dir, "slurm", "array-001.sh"))
	if err != nil {
		t.Fatal(err)
	}
	exe, _ := chordBinary()
	for _, want := range []string{"#SBATCH --array=0-11\n", "#SBATCH --time=0:30:00\n", "#SBATCH --cpus-per-task=3\n", "#SBATCH --mem=1G\n",
		"#SBATCH --partition=short\n", "#SBATCH --output=" + filepath.Join(dir, "slurm", "logs", "%A_%a.out") + "\n",
		"exec '" + exe + "' grid run-point '" + dir + "' \"$SLURM_ARRAY_TASK_ID\"\n"} {
		if !strings.Contains(string(script), want) {
			t.Errorf("script lacks %q:\n%s", want, script)
		}
	}
	out, _, err := runCmd(t, "grid", "status", dir)
	if err != nil || !strings.Contains(out, "12 points: 12 not started") || !strings.Contains(out, "observe.noise_ppm=60 clouds.cloud_top_bar=0.01") {
		t.Errorf("status: %v\n%s", err, out)
	}
	// Resubmitting a fresh grid means every point.
	if _, errOut, err = runCmd(t, "grid", "resubmit", "--time", "10", dir); err != nil || !strings.Contains(errOut, "12 unfinished points") {
		t.Errorf("resubmit: %v\n%s", err, errOut)
	}
	if b, _ := os.ReadFile(filepath.Join(dir, "slurm", "array-002.sh")); !strings.Contains(string(b), "--array=0-11\n") || !strings.Contains(string(b), "--time=10\n") {
		t.Errorf("resubmit script:\n%s", b)
	}
	for i, c := range []struct {
		args []string
		want string
	}{
		{[]string{"grid", "-o", dir, "--local", "--slurm"}, "not both"},
		{[]string{"grid", "-o", dir, "--submit"}, "--submit belongs with --slurm"},
		{[]string{"grid", "-o", dir, "--jobs", "2"}, "belong with --local"},
		{[]string{"grid", "-o", dir, "--slurm", "--time", "soon"}, "slurm.time"},
		{[]string{"grid", "-c", example}, "-o GRIDDIR"},
		{[]string{"grid", "-o", t.TempDir()}, "holds no grid"},
		{[]string{"grid", "-o", dir, "--local", "--jobs", "0"}, "--jobs 0"},
		{[]string{"grid", "run-point", dir, "12"}, "points 0 to 11"},
		{[]string{"grid", "run-point", dir, "first"}, "give a point number"},
		{[]string{"grid", "run-point", dir}, "GRIDDIR and INDEX"},
		{[]string{"grid", "collect", dir}, "12 of 12 points are not done"},
		{[]string{"grid", "status"}, "one grid directory"},
		{[]string{"grid", "stat", dir}, `did you mean "status"`},
	} {
		if _, _, err := runCmd(t, c.args...); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("case %d %v: %v, want %q", i, c.args, err, c.want)
		}
	}
}

// A small grid run here, two points at once, then collected.
func TestGridLocalCommand(t *testing.T) {
	if testing.Short() {
		t.Skip("fits two small retrievals")
	}
	base, err := filepath.Abs("../../testdata/grid/marrow-d.toml")
	if err != nil {
		t.Fatal(err)
	}
	spec := filepath.Join(t.TempDir(), "small.toml")
	os.WriteFile(spec, []byte("base = \""+base+"\"\nseed = 3\n[set]\n\"sampler.steps\" = 150\n[[axes]]\nkey = \"observe.noise_ppm\"\nvalues = [40, 80]\n"), 0o644)
	dir := filepath.Join(t.TempDir(), "grid")
	if _, errOut, err := runCmd(t, "grid", "-c", spec, "-o", dir, "--local", "--jobs", "2"); err != nil || !strings.Contains(errOut, "2 points done, 0 stopped, 0 failed") {
		t.Fatalf("%v\n%s", err, errOut)
	}
	out, _, err := runCmd(t, "grid", "status", dir)
	if err != nil || !strings.Contains(out, "2 points: 2 done") || !strings.Contains(out, "done (150 steps)") {
		t.Errorf("status: %v\n%s", err, out)
	}
	out, _, err = runCmd(t, "grid", "collect", dir)
	if err != nil || !strings.Contains(out, "radius_rearth") || !strings.Contains(out, "p0001 observe.noise_ppm=80") {
		t.Errorf("collect: %v\n%s", err, out)
	}
	if _, errOut, err := runCmd(t, "grid", "resubmit", dir); err != nil || !strings.Contains(errOut, "nothing to resubmit") {
		t.Errorf("resubmit of a finished grid: %v\n%s", err, errOut)
	}
	if _, errOut, err := runCmd(t, "grid", "run-point", dir, "1"); err != nil || !strings.Contains(errOut, "is done; kept") {
		t.Errorf("run-point of a done point: %v\n%s", err, errOut)
	}
	// Running the finished grid again does nothing.
	if _, errOut, err := runCmd(t, "grid", "-o", dir, "--local"); err != nil || !strings.Contains(errOut, "0 points done") {
		t.Errorf("local run of a finished grid: %v\n%s", err, errOut)
	}
}
