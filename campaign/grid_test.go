package campaign

import (
	"bytes"
	"context"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"chord/config"
	"chord/internal/testenv"
	"chord/retrieve"

	"github.com/parquet-go/parquet-go"
)

// gridScenario is the sub-Neptune fixture with a grey cloud deck at 1 bar
// and a 200-step chain.
func gridScenario(t testing.TB) *testenv.TOML {
	return testenv.Fixture(t, "sub-neptune.toml").Set("clouds.cloud_top_bar", "1.0").Set("sampler.steps", "200")
}

func writeGridFiles(t *testing.T, grid string) string {
	t.Helper()
	dir := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "scenario.toml"), []byte(gridScenario(t).String()), 0o644); err != nil {
		t.Fatal(err)
	}
	p := filepath.Join(dir, "grid.toml")
	if err := os.WriteFile(p, []byte(grid), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

const grid3x4 = `
base = "scenario.toml"
[observe]
transits = 1
[[axes]]
key = "observe.noise_ppm"
values = [30, 60, 120]
[[axes]]
key = "clouds.cloud_top_bar"
values = [1e-3, 1e-2, 0.1, 1]
`

// snapshot maps every file under dir to its contents.
func snapshot(t *testing.T, dir string) map[string]string {
	t.Helper()
	m := map[string]string{}
	filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err == nil && !d.IsDir() {
			b, _ := os.ReadFile(p)
			r, _ := filepath.Rel(dir, p)
			m[r] = string(b)
		}
		return nil
	})
	return m
}

// A 3 x 4 grid gives 12 distinct run directories; expanding it again
// changes nothing, and expanding it elsewhere gives the same points.
func TestGridExpand3x4(t *testing.T) {
	spec := writeGridFiles(t, grid3x4)
	dir := filepath.Join(t.TempDir(), "grid")
	g, err := CreateGrid(spec, dir, GridOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(g.Points) != 12 {
		t.Fatalf("%d points, want 12", len(g.Points))
	}
	fits := map[string]bool{}
	for i := range g.Points {
		b, err := os.ReadFile(filepath.Join(g.PointDir(i), "fit.toml"))
		if err != nil {
			t.Fatal(err)
		}
		if fits[string(b)] {
			t.Errorf("point %d: same configuration as another point", i)
		}
		fits[string(b)] = true
		r, err := config.Load(filepath.Join(g.PointDir(i), "fit.toml"))
		if err != nil {
			t.Fatalf("point %d: %v", i, err)
		}
		// Last axis fastest: point 5 is noise 60 ppm, cloud top 0.01 bar.
		if i == 5 && (*r.Config.Clouds.CloudTopBar != 1e-2 || r.Datasets[0].NoisePPM() != 60) {
			t.Errorf("point 5: cloud top %g bar, noise %g ppm; want 0.01 bar, 60 ppm", *r.Config.Clouds.CloudTopBar, r.Datasets[0].NoisePPM())
		}
	}
	idx, err := os.ReadFile(filepath.Join(dir, "index.csv"))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(idx)), "\n")
	if len(lines) != 13 || lines[0] != "point,dir,observe.noise_ppm,clouds.cloud_top_bar,sampler_seed,noise_ppm" {
		t.Fatalf("index.csv:\n%s", idx)
	}
	if !strings.HasPrefix(lines[6], "5,points/p0005,60,0.01,") || !strings.HasSuffix(lines[6], ",60") {
		t.Errorf("index row of point 5: %s", lines[6])
	}
	if _, err := os.Stat(filepath.Join(dir, "index.parquet")); err != nil {
		t.Error(err)
	}
	before := snapshot(t, dir)
	g2, err := CreateGrid(spec, dir, GridOptions{})
	if err != nil {
		t.Fatalf("same grid again: %v", err)
	}
	if g2.Identity() != g.Identity() {
		t.Error("identity changed")
	}
	after := snapshot(t, dir)
	if len(after) != len(before) {
		t.Errorf("%d files, then %d", len(before), len(after))
	}
	for k, v := range before {
		if after[k] != v {
			t.Errorf("%s changed on expanding the same grid again", k)
		}
	}
	// Reproducible: another directory gets the same points (paths aside).
	other := filepath.Join(t.TempDir(), "again")
	if _, err := CreateGrid(spec, other, GridOptions{}); err != nil {
		t.Fatal(err)
	}
	again := snapshot(t, other)
	for k, v := range before {
		if w := strings.ReplaceAll(again[k], other, dir); w != v {
			t.Errorf("%s differs between two expansions of the same grid", k)
		}
	}
}

// Bad grids are refused with a clear error and leave nothing behind;
// a directory holding another grid is left as it is.
func TestGridBadInput(t *testing.T) {
	spec := writeGridFiles(t, grid3x4)
	base := filepath.Dir(spec)
	cases := []struct {
		grid, want string
	}{
		{"base = \"scenario.toml\"\n[observe]\nnoise_ppm = 30\n[[axes]]\nkey = \"clouds.log10_pressure_bar\"\nvalues = [1, 2]\n", `unknown key: clouds has no key "log10_pressure_bar"`},
		{"base = \"scenario.toml\"\n[observe]\nnoise_ppm = 30\n[[axes]]\nkey = \"clouds.cloud_top_bar\"\nvalues = []\n", "empty axis"},
		{"base = \"scenario.toml\"\n[observe]\nnoise_ppm = 30\n", "no [[axes]]"},
		{"base = \"scenario.toml\"\n[observe]\nnoise_ppm = 30\n[[axes]]\nkey = \"clouds.cloud_top_bar\"\nvalues = [\"high\"]\n", "want a number"},
		{"base = \"scenario.toml\"\n[observe]\nnoise_ppm = 30\n[[axes]]\nkey = \"clouds.cloud_top_bar\"\nvalues = [1, \"x\"]\n", "different types"},
		{"base = \"scenario.toml\"\n[observe]\nnoise_ppm = 30\n[[axes]]\nkey = \"clouds\"\nvalues = [1]\n", "a table"},
		{"base = \"scenario.toml\"\n[observe]\nnoise_ppm = 30\n[[axes]]\nkey = \"parameters.low\"\nvalues = [1]\n", "array of tables"},
		{"base = \"scenario.toml\"\n[[axes]]\nkey = \"observe.noise_ppm\"\nvalues = [30, -1]\n", "must be a positive number"},
		{"base = \"scenario.toml\"\n[[axes]]\nkey = \"observe.noise_ppm\"\nvalues = [30, 30]\n", "given twice"},
		{"base = \"scenario.toml\"\n[[axes]]\nkey = \"observe.colour\"\nvalues = [1]\n", "unknown observation axis"},
		{"base = \"scenario.toml\"\n[[axes]]\nkey = \"clouds.cloud_top_bar\"\nvalues = [0.1]\n", "noise 0 ppm"},
		{"base = \"scenario.toml\"\n[observe]\nnoise_ppm = 30\n[[axes]]\nkey = \"clouds.cloud_top_bar\"\nvalues = [-0.1]\n", "clouds.cloud_top_bar"},
		{"base = \"missing.toml\"\n[[axes]]\nkey = \"observe.noise_ppm\"\nvalues = [30]\n", "missing.toml"},
		{"base = \"scenario.toml\"\ncolour = 1\n[[axes]]\nkey = \"observe.noise_ppm\"\nvalues = [30]\n", "colour: unknown key"},
		{"base = \"scenario.toml\"\n[set]\n\"sampler.stepz\" = 1\n[[axes]]\nkey = \"observe.noise_ppm\"\nvalues = [30]\n", `sampler has no key "stepz"`},
		{"base = \"scenario.toml\"\n[set]\n\"sampler.walkers\" = 3\n[[axes]]\nkey = \"observe.noise_ppm\"\nvalues = [30]\n", "walkers"},
		{"base = \"scenario.toml\"\n[slurm]\ntime = \"two hours\"\n[[axes]]\nkey = \"observe.noise_ppm\"\nvalues = [30]\n", "slurm.time"},
	}
	for i, c := range cases {
		p := filepath.Join(base, "bad.toml")
		if err := os.WriteFile(p, []byte(c.grid), 0o644); err != nil {
			t.Fatal(err)
		}
		out := filepath.Join(t.TempDir(), "g")
		_, err := CreateGrid(p, out, GridOptions{})
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("case %d: %v, want %q", i, err, c.want)
		}
		if _, serr := os.Stat(out); serr == nil {
			t.Errorf("case %d: a refused grid left %s", i, out)
		}
	}
	// An observation axis on a retrieval configuration (which has its
	// observations) is refused.
	obs := filepath.Join(base, "obs.csv")
	os.WriteFile(obs, []byte("wavelength_um,width_um,depth_ppm,error_ppm\n1.0,0.1,5000,50\n1.2,0.1,5010,50\n1.4,0.1,5005,50\n"), 0o644)
	os.WriteFile(filepath.Join(base, "fit.toml"), []byte(gridScenario(t).Append("[[observations]]\nfile = \"obs.csv\"").String()), 0o644)
	os.WriteFile(filepath.Join(base, "bad.toml"), []byte("base = \"fit.toml\"\n[[axes]]\nkey = \"observe.noise_ppm\"\nvalues = [30]\n"), 0o644)
	if _, err := CreateGrid(filepath.Join(base, "bad.toml"), filepath.Join(t.TempDir(), "g"), GridOptions{}); err == nil || !strings.Contains(err.Error(), "need a scenario base") {
		t.Errorf("observation axis on a retrieval base: %v", err)
	}

	// A directory holding another grid is refused and left unchanged.
	dir := filepath.Join(t.TempDir(), "grid")
	if _, err := CreateGrid(spec, dir, GridOptions{}); err != nil {
		t.Fatal(err)
	}
	before := snapshot(t, dir)
	os.WriteFile(filepath.Join(base, "other.toml"), []byte(strings.Replace(grid3x4, "[30, 60, 120]", "[30, 60, 240]", 1)), 0o644)
	if _, err := CreateGrid(filepath.Join(base, "other.toml"), dir, GridOptions{}); err == nil || !strings.Contains(err.Error(), "holds a different grid") {
		t.Errorf("different grid: %v", err)
	}
	// So is a grid whose base changed since.
	os.WriteFile(filepath.Join(base, "scenario.toml"), []byte(gridScenario(t).Set("atmosphere.temperature.temperature_k", "650").String()), 0o644)
	if _, err := CreateGrid(spec, dir, GridOptions{}); err == nil || !strings.Contains(err.Error(), "holds a different grid") {
		t.Errorf("changed base: %v", err)
	}
	after := snapshot(t, dir)
	for k, v := range before {
		if after[k] != v {
			t.Errorf("%s changed by a refused grid", k)
		}
	}
	if len(after) != len(before) {
		t.Errorf("a refused grid added files")
	}
	// A non-empty directory that holds no grid is refused.
	if _, err := CreateGrid(spec, base, GridOptions{}); err == nil || !strings.Contains(err.Error(), "holds no grid") {
		t.Errorf("non-empty directory: %v", err)
	}
	if _, err := OpenGrid(base); err == nil || !strings.Contains(err.Error(), "holds no grid") {
		t.Errorf("OpenGrid of a non-grid: %v", err)
	}
}

const grid2 = `
base = "scenario.toml"
seed = 40
[set]
"sampler.steps" = 300
[[axes]]
key = "observe.noise_ppm"
values = [30, 60]
`

// A grid whose point was stopped mid-run and then resumed collects to the
// very table of an uninterrupted run of the same grid (same seeds): the
// resumed chain is the same chain (the runs' bit-for-bit resume).
func TestGridStoppedAndResumedEqualsUninterrupted(t *testing.T) {
	if testing.Short() {
		t.Skip("fits four small retrievals")
	}
	spec := writeGridFiles(t, grid2)
	whole := filepath.Join(t.TempDir(), "whole")
	g, err := CreateGrid(spec, whole, GridOptions{})
	if err != nil {
		t.Fatal(err)
	}
	var calls []string
	rep, err := g.RunLocal(context.Background(), LocalOptions{Jobs: 2, OnPoint: func(done, total int) { calls = append(calls, fmt.Sprintf("%d/%d", done, total)) }})
	if err != nil || len(rep.Done) != 2 {
		t.Fatalf("local run: %+v %v", rep, err)
	}
	if got := strings.Join(calls, " "); got != "0/2 1/2 2/2" {
		t.Errorf("points progress %q, want 0/2 1/2 2/2", got)
	}
	if truth, err := retrieve.ReadTruth(g.RunDir(1)); err != nil || len(truth) == 0 {
		t.Errorf("a scenario point's truth: %v %v", truth, err)
	}
	want, err := g.CollectGrid()
	if err != nil {
		t.Fatal(err)
	}
	if want.Rows != 4 || len(want.Groups) != 1 {
		t.Fatalf("collection: %d rows, %d groups", want.Rows, len(want.Groups))
	}
	// The width against noise: 30 ppm and 60 ppm, compared.
	if r := want.Groups[0].Comparison.Runs; len(r) != 2 || r[0].NoisePPM != 30 || r[1].NoisePPM != 60 {
		t.Errorf("comparison runs %+v", r)
	}

	cut := filepath.Join(t.TempDir(), "cut")
	g2, err := CreateGrid(spec, cut, GridOptions{})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	w := &cancelOnProgress{cancel: cancel}
	r, err := g2.RunPoint(ctx, 1, PointOptions{Progress: retrieve.Progress{Writer: w, LogInterval: time.Millisecond}})
	cancel()
	if err != nil {
		t.Fatal(err)
	}
	if r.Summary != nil {
		t.Fatalf("point 1 was not stopped; log:\n%s", w.log.String())
	}
	st, err := g2.Status()
	if err != nil {
		t.Fatal(err)
	}
	if st[0].State != PointNotStarted || st[1].State != PointStopped || st[1].Step < 1 || st[1].Step >= 300 || st[1].Steps != 300 {
		t.Fatalf("status after the stop: %v, %v", st[0], st[1])
	}
	k := st[1].Step
	if un, _ := g2.Unfinished(); len(un) != 2 {
		t.Errorf("unfinished %v, want both points", un)
	}
	if _, err := g2.CollectGrid(); err == nil || !strings.Contains(err.Error(), "not done") {
		t.Errorf("collect of an unfinished grid: %v", err)
	}
	if rep, err = g2.RunLocal(context.Background(), LocalOptions{Jobs: 2}); err != nil || len(rep.Done) != 2 {
		t.Fatalf("resumed local run: %+v %v", rep, err)
	}
	logText, _ := os.ReadFile(filepath.Join(g2.PointDir(1), "log.txt"))
	if !strings.Contains(string(logText), "resuming") {
		t.Errorf("point 1 was not resumed:\n%s", logText)
	}
	// The resumed session's first part starts right after the checkpoint.
	ck, err := retrieve.ReadCheckpoint(filepath.Join(g2.RunDir(1), retrieve.CheckpointFile))
	if err != nil {
		t.Fatal(err)
	}
	cont := false
	for _, p := range ck.Parts {
		cont = cont || p.FirstStep == k+1
	}
	if !cont {
		t.Errorf("no chain part starts at step %d after the checkpoint at %d: %+v", k+1, k, ck.Parts)
	}
	got, err := g2.CollectGrid()
	if err != nil {
		t.Fatal(err)
	}
	a, _ := os.ReadFile(filepath.Join(whole, "summary.csv"))
	b, _ := os.ReadFile(filepath.Join(cut, "summary.csv"))
	if !bytes.Equal(a, b) || len(a) == 0 {
		t.Errorf("summary tables differ:\n%s\n----\n%s", a, b)
	}
	if got.Table != want.Table {
		t.Errorf("comparisons differ")
	}
	// The Parquet table holds the CSV's columns and rows.
	pf, err := os.Open(filepath.Join(cut, "summary.parquet"))
	if err != nil {
		t.Fatal(err)
	}
	defer pf.Close()
	fi, _ := pf.Stat()
	pq, err := parquet.OpenFile(pf, fi.Size())
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, f := range pq.Schema().Fields() {
		names = append(names, f.Name())
	}
	header, _, _ := strings.Cut(string(b), "\n")
	if strings.Join(names, ",") != header || pq.NumRows() != 4 {
		t.Errorf("summary.parquet: %d rows, columns %v; CSV header %s", pq.NumRows(), names, header)
	}
	rows := make([]parquet.Row, 4)
	if n, _ := pq.RowGroups()[0].Rows().ReadRows(rows); n != 4 || rows[3][0].Int64() != 1 || rows[3][7].String() != "temperature_k" {
		t.Errorf("summary.parquet rows: %d, last %v", n, rows[3])
	}
	for _, f := range []string{"summary.parquet", "comparison.json", "widths.png"} {
		if _, err := os.Stat(filepath.Join(cut, f)); err != nil {
			t.Error(err)
		}
	}
}

// Grid files never panic: any text either is refused with an error or
// expands into points whose configurations can be built.
func FuzzGridSpec(f *testing.F) {
	f.Add(grid3x4)
	f.Add(grid2)
	f.Add("base = \"scenario.toml\"\n[set]\natmosphere.gases.H2O = 1e-3\n[[axes]]\nkey = \"atmosphere.temperature.temperatures_k\"\nvalues = [[1, 2], [3]]\n")
	f.Add("base = \"scenario.toml\"\n[[axes]]\nkey = \"observe.transits\"\nvalues = [1, 4]\n[[axes]]\nkey = \"sampler.seed\"\nvalues = [1, 2]\n")
	f.Add("base = \"scenario.toml\"\n[[axes]]\nkey = \"opacity.cia\"\nvalues = [[\"H2-H2\"], []]\n")
	dir := f.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "scenario.toml"), []byte(gridScenario(f).String()), 0o644); err != nil {
		f.Fatal(err)
	}
	baseText := []byte(gridScenario(f).String())
	f.Fuzz(func(t *testing.T, text string) {
		p := filepath.Join(t.TempDir(), "grid.toml")
		os.WriteFile(p, []byte(strings.ReplaceAll(text, "scenario.toml", filepath.Join(dir, "scenario.toml"))), 0o644)
		s, err := LoadGridSpec(p)
		if err != nil {
			return
		}
		id, _, _, err := resolveGrid(p, s)
		if err != nil {
			return
		}
		if _, err := id.hash(); err != nil {
			t.Fatalf("identity of a valid grid: %v", err)
		}
		g := &Grid{Dir: dir, rec: gridRecord{gridIdentity: *id}}
		g.Points = expandAxes(id.Axes)
		for i := range min(len(g.Points), 4) {
			g.pointConfig(i, baseText)
			g.Settings(i)
		}
	})
}

// A grid over a retrieval configuration (which has its observations)
// varies its keys; the observations are the configuration's, by absolute
// path, and the seeds are the axis's.
func TestGridOverRetrievalConfig(t *testing.T) {
	dir := t.TempDir()
	os.WriteFile(filepath.Join(dir, "obs.csv"), []byte("wavelength_um,width_um,depth_ppm,error_ppm\n1.0,0.1,5000,50\n1.2,0.1,5010,50\n1.4,0.1,5005,50\n"), 0o644)
	fit := gridScenario(t).Delete("spectrum.bin_resolving_power").Append("[[observations]]\nfile = \"obs.csv\"").String()
	os.WriteFile(filepath.Join(dir, "fit.toml"), []byte(fit), 0o644)
	spec := filepath.Join(dir, "grid.toml")
	os.WriteFile(spec, []byte("base = \"fit.toml\"\n[[axes]]\nkey = \"sampler.seed\"\nvalues = [11, 12]\n[[axes]]\nkey = \"atmosphere.layers\"\nvalues = [20, 40]\n"), 0o644)
	g, err := CreateGrid(spec, filepath.Join(dir, "out"), GridOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(g.Points) != 4 {
		t.Fatalf("%d points", len(g.Points))
	}
	r, err := config.Load(filepath.Join(g.PointDir(3), "fit.toml"))
	if err != nil {
		t.Fatal(err)
	}
	if r.Seed != 12 || *r.Config.Atmosphere.Layers != 40 || r.Config.Observations[0].File != filepath.Join(dir, "obs.csv") {
		t.Errorf("point 3: seed %d, layers %d, observations %s", r.Seed, *r.Config.Atmosphere.Layers, r.Config.Observations[0].File)
	}
	if _, err := os.Stat(filepath.Join(g.PointDir(3), "observation.csv")); err == nil {
		t.Error("a retrieval grid simulated an observation")
	}
	idx, _ := os.ReadFile(filepath.Join(g.Dir, "index.csv"))
	if !strings.Contains(string(idx), "3,points/p0003,12,40,12,50\n") {
		t.Errorf("index.csv:\n%s", idx)
	}
	// A bad value of the retrieval's schema is caught before anything is written.
	os.WriteFile(spec, []byte("base = \"fit.toml\"\n[[axes]]\nkey = \"atmosphere.layers\"\nvalues = [20, -1]\n"), 0o644)
	if _, err := CreateGrid(spec, filepath.Join(dir, "bad"), GridOptions{}); err == nil || !strings.Contains(err.Error(), "point 1") {
		t.Errorf("negative layers: %v", err)
	}
	if _, err := os.Stat(filepath.Join(dir, "bad")); err == nil {
		t.Error("a refused grid left files")
	}
	os.WriteFile(spec, []byte("base = \"fit.toml\"\n[observe]\nnoise_ppm = 30\n[[axes]]\nkey = \"sampler.seed\"\nvalues = [1]\n"), 0o644)
	if _, err := CreateGrid(spec, filepath.Join(dir, "bad"), GridOptions{}); err == nil || !strings.Contains(err.Error(), "[observe] belongs to grids over a scenario") {
		t.Errorf("[observe] with a retrieval base: %v", err)
	}
}

// A point whose fit fails is "failed" with its error until an attempt
// succeeds; expanding the grid again restores a deleted observation.
func TestGridFailedPoint(t *testing.T) {
	spec := writeGridFiles(t, strings.Replace(grid2, "300", "40", 1))
	g, err := CreateGrid(spec, filepath.Join(t.TempDir(), "grid"), GridOptions{})
	if err != nil {
		t.Fatal(err)
	}
	obs := filepath.Join(g.PointDir(0), "observation.csv")
	os.Remove(obs)
	if _, err := g.RunPoint(context.Background(), 0, PointOptions{}); err == nil {
		t.Fatal("fit without its observation succeeded")
	}
	st, err := g.Status()
	if err != nil {
		t.Fatal(err)
	}
	if st[0].State != PointFailed || !strings.Contains(st[0].String(), "observation.csv") {
		t.Fatalf("status %v", st[0])
	}
	if un, _ := g.Unfinished(); len(un) != 2 {
		t.Errorf("unfinished %v: a failed point is unfinished", un)
	}
	if _, err := CreateGrid(spec, g.Dir, GridOptions{}); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(obs); err != nil {
		t.Fatal("observation not restored")
	}
	if r, err := g.RunPoint(context.Background(), 0, PointOptions{}); err != nil || r.Summary == nil {
		t.Fatalf("second attempt: %v", err)
	}
	if st, _ := g.Status(); st[0].State != PointDone || st[0].Error != "" {
		t.Errorf("status after success: %v", st[0])
	}
}
