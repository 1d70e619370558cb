package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"chord/internal/testenv"
)

func runCmd(t *testing.T, args ...string) (string, string, error) {
	t.Helper()
	app := newApp()
	var out, errOut bytes.Buffer
	app.Writer, app.ErrWriter = &out, &errOut
	err := runApp(app, append([]string{"chord"}, args...))
	return out.String(), errOut.String(), err
}

// planTestScenario is greySubNeptune binned at R = 15, with two free
// parameters and a short fixed chain.
func planTestScenario(t *testing.T) *testenv.TOML {
	return greySubNeptune(t).Set("spectrum.bin_resolving_power", "15").
		Set("parameters[2].high", "1200").Set("sampler.seed", "5").Set("sampler.steps", "60")
}

func TestSimulatePlanCompareCommands(t *testing.T) {
	dir := t.TempDir()
	sc := filepath.Join(dir, "s.toml")
	if err := os.WriteFile(sc, []byte(planTestScenario(t).String()), 0o644); err != nil {
		t.Fatal(err)
	}
	obs, fit := filepath.Join(dir, "o.csv"), filepath.Join(dir, "fit.toml")
	_, errOut, err := runCmd(t, "simulate", "-c", sc, "-o", obs, "--noise-ppm", "50", "--transits", "4", "--no-scatter", "--fit-config", fit)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(errOut, "= 25 ppm") {
		t.Errorf("simulate said %q", errOut)
	}
	rows := readCSV(t, obs)
	if rows[0][0] != "edge_low_um" || rows[1][3] != "25" {
		t.Fatalf("observation %v", rows[:2])
	}
	plan := filepath.Join(dir, "plan")
	out, _, err := runCmd(t, "plan", "-c", sc, "-o", plan, "--noise-ppm", "40,80")
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(out, "temperature_k") || !strings.Contains(out, "noise-0080ppm") {
		t.Fatalf("plan table:\n%s", out)
	}
	// Running it again keeps everything and prints the same table.
	again, _, err := runCmd(t, "plan", "-o", plan)
	if err != nil || again != out {
		t.Fatalf("resumed finished plan: %v\n%s", err, again)
	}
	png := filepath.Join(dir, "w.png")
	out, _, err = runCmd(t, "compare", "--plot", png, filepath.Join(plan, "noise-0040ppm", "run"), filepath.Join(plan, "noise-0080ppm", "run"))
	if err != nil || !strings.Contains(out, "radius_rearth") {
		t.Fatalf("compare: %v\n%s", err, out)
	}
	if _, err := os.Stat(png); err != nil {
		t.Fatal(err)
	}
}

func TestPlanningCommandErrors(t *testing.T) {
	dir := t.TempDir()
	sc := filepath.Join(dir, "s.toml")
	if err := os.WriteFile(sc, []byte(planTestScenario(t).String()), 0o644); err != nil {
		t.Fatal(err)
	}
	bad := filepath.Join(dir, "bad.toml")
	if err := os.WriteFile(bad, []byte(planTestScenario(t).Set("planet.moon.mass", "1").String()), 0o644); err != nil {
		t.Fatal(err)
	}
	o := filepath.Join(dir, "o.csv")
	for i, c := range []struct {
		args []string
		want string
	}{
		{[]string{"simulate", "-c", sc, "-o", o, "--noise-ppm", "50"}, "give --noise-seed N"},
		{[]string{"simulate", "-c", sc, "-o", o, "--noise-ppm", "50", "--noise-seed", "1", "--no-scatter"}, "give --noise-seed N"},
		{[]string{"simulate", "-c", sc, "-o", o, "--noise-ppm", "0", "--no-scatter"}, "--noise-ppm 0"},
		{[]string{"simulate", "-c", sc, "-o", o, "--noise-ppm", "-3", "--no-scatter"}, "must be positive"},
		{[]string{"simulate", "-c", sc, "-o", o, "--no-scatter"}, "give the noise"},
		{[]string{"simulate", "-c", sc, "-o", o, "--noise-ppm", "5", "--transits", "0", "--no-scatter"}, "--transits 0"},
		{[]string{"simulate", "-c", bad, "-o", o, "--noise-ppm", "5", "--no-scatter"}, "planet.moon: unknown key"},
		{[]string{"simulate", "-c", sc, "-o", o, "--noise-ppm", "5", "--no-scatter", "--wavelength-range-um", "1"}, "--wavelength-range-um"},
		{[]string{"simulate", "-c", sc, "-o", o, "--noise-ppm", "5", "--no-scatter", "--wavelength-range-um", "1:2"}, "needs a resolving power"},
		{[]string{"simulate", "-o", o, "--noise-ppm", "5", "--no-scatter"}, "give the scenario"},
		{[]string{"plan", "-c", sc, "-o", filepath.Join(dir, "p1"), "--noise-ppm", "30,0"}, "noise level 0 ppm"},
		{[]string{"plan", "-c", sc, "-o", filepath.Join(dir, "p2"), "--noise-ppm", "30,x"}, "--noise-ppm"},
		{[]string{"plan", "-c", sc, "-o", filepath.Join(dir, "p3"), "--transits", "1,4"}, "single-transit noise"},
		{[]string{"plan", "-c", sc, "-o", filepath.Join(dir, "p4"), "--transits", "1,4", "--noise-ppm", "30,60"}, "one single-transit level"},
		{[]string{"plan", "-o", filepath.Join(dir, "p5"), "--noise-ppm", "30"}, "without -c"},
		{[]string{"plan", "-c", bad, "-o", filepath.Join(dir, "p6"), "--noise-ppm", "30"}, "planet.moon: unknown key"},
		{[]string{"compare"}, "at least one run directory"},
		{[]string{"compare", "--plot", "w.pdf", dir}, "PNG"},
		{[]string{"compare", dir, "--json"}, "summary.json"}, // the option after the run directory is taken
		{[]string{"compare", dir}, "summary.json"},
	} {
		if _, _, err := runCmd(t, c.args...); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("case %d %v: %v, want %q", i, c.args, err, c.want)
		}
	}
}
