package main

import (
	"encoding/csv"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"chord/config"
	"chord/forward"
	"chord/forward/opacity"
	"chord/forward/opacity/hitran"
	"chord/forward/opacity/lbl"
	"chord/internal/testenv"
)

// resolvedConfig is a hot hydrogen atmosphere with CO (1000 K isothermal,
// 1e-6 to 10 bar in 40 layers) binned at R = 100 over the CO 1-0 band and its sides.
const resolvedConfig = `
[star]
name = "Pellucid"
radius_rsun = 0.92
[planet]
name = "Pellucid c"
radius_rjup = 1.27
mass_mjup = 0.75
reference_pressure_bar = 10
[atmosphere]
top_pressure_bar = 1e-6
bottom_pressure_bar = 10
layers = 40
[atmosphere.gases]
CO = 1e-3
[atmosphere.temperature]
temperature_k = 1000
[opacity]
rayleigh = []
[spectrum]
wavelength_min_um = 4.0
wavelength_max_um = 5.3
bin_resolving_power = 100
`

// readSpectrumCSV returns the depth column of a chord spectrum CSV, as a
// fraction.
func readSpectrumCSV(t *testing.T, path string) []float64 {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var lines []string
	for _, l := range strings.Split(string(b), "\n") {
		if l != "" && !strings.HasPrefix(l, "#") {
			lines = append(lines, l)
		}
	}
	recs, err := csv.NewReader(strings.NewReader(strings.Join(lines, "\n"))).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	col, scale := -1, 1.0
	for i, h := range recs[0] {
		if strings.HasPrefix(strings.TrimSpace(h), "depth") {
			col = i
		}
		if strings.TrimSpace(h) == "depth_ppm" {
			scale = 1e-6
		}
	}
	if col < 0 {
		t.Fatalf("no depth column in %v", recs[0])
	}
	var out []float64
	for _, r := range recs[1:] {
		v, err := strconv.ParseFloat(strings.TrimSpace(r[col]), 64)
		if err != nil {
			t.Fatal(err)
		}
		out = append(out, v*scale)
	}
	return out
}

// TestSpectrumResolved: `chord spectrum --resolved` computes a
// configuration line by line from the HITRAN CO list in ../shared/data;
// its spectrum agrees with the k-table spectrum of the same configuration
// (tables built by lbl.BuildK from the same lines on the configuration's
// bins) within 10 ppm, the k path's measured accuracy at R = 100
// (docs/opacity-accuracy.md), and the band shows (fact of the trade: CO
// absorbs at 4.7 um).
func TestSpectrumResolved(t *testing.T) {
	if testing.Short() {
		t.Skip("line by line over the CO band")
	}
	lines := testenv.SharedData(t, "hitran-lines", "05_hit12_CO_full.par")
	part := testenv.SharedData(t, "partition")
	dir := t.TempDir()
	cfgPath := filepath.Join(dir, "co.toml")
	if err := os.WriteFile(cfgPath, []byte(resolvedConfig), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "resolved.csv")
	_, stderr, err := runSpectrumCmd(t, "-c", cfgPath, "-o", out, "--resolved", "CO="+lines,
		"--molparam", filepath.Join(part, "molparam_hitran.txt"), "--tips", filepath.Join(part, "parsum2011_tips.dat"),
		"--partition", filepath.Join(part, "q26_CO_26_tips2021_hapi.txt"))
	if err != nil {
		t.Fatalf("%v\n%s", err, stderr)
	}
	res := readSpectrumCSV(t, out)

	// The same configuration with a k-table of the same lines.
	cfg, err := config.LoadModel(cfgPath)
	if err != nil {
		t.Fatal(err)
	}
	bins, _ := cfg.Bins()
	iso, err := hitran.ReadMolParam(filepath.Join(part, "molparam_hitran.txt"))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := hitran.ReadTIPSTable(filepath.Join(part, "parsum2011_tips.dat"), iso); err != nil {
		t.Fatal(err)
	}
	q, err := hitran.ReadQFile(filepath.Join(part, "q26_CO_26_tips2021_hapi.txt"))
	if err != nil {
		t.Fatal(err)
	}
	iso[lbl.IsoKey{Mol: 5, Iso: 1}].Q = q
	ls, err := hitran.ReadLineFile(lines, hitran.LineFilter{NuMin: 1e4/5.3 - 25, NuMax: 1e4/4.0 + 25})
	if err != nil {
		t.Fatal(err)
	}
	var logP []float64
	for v := -1.0 - 1.0/6; v <= 6.2; v += 1.0 / 6 {
		logP = append(logP, v)
	}
	kt, err := lbl.BuildK(ls, iso, &lbl.KSettings{Gas: "CO", Log10P: logP, T: []float64{1000}, Lo: bins.Lo, Hi: bins.Hi})
	if err != nil {
		t.Fatal(err)
	}
	m, st, err := cfg.Build(&opacity.Set{K: map[string]*opacity.KTable{"CO": kt}})
	if err != nil {
		t.Fatal(err)
	}
	kd := make([]float64, m.OutputLen())
	if err := m.Transit(kd, &st, m.NewWorkspace()); err != nil {
		t.Fatal(err)
	}
	if len(kd) != len(res) {
		t.Fatalf("%d resolved bins, %d k-table bins", len(res), len(kd))
	}
	worst, lo, hi := 0.0, math.Inf(1), math.Inf(-1)
	for i := range kd {
		worst = math.Max(worst, math.Abs(kd[i]-res[i])*1e6)
		lo, hi = math.Min(lo, res[i]), math.Max(hi, res[i])
	}
	t.Logf("%d bins: resolved vs k-table max %.2f ppm; band contrast %.0f ppm", len(kd), worst, (hi-lo)*1e6)
	if worst > 10 {
		t.Errorf("resolved and k-table spectra differ by %.2f ppm, want at most 10", worst)
	}
	if (hi-lo)*1e6 < 100 {
		t.Errorf("band contrast %.1f ppm: the CO band does not show", (hi-lo)*1e6)
	}
	_ = forward.Bar
}
