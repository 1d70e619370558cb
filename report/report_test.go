package report

import (
	"bytes"
	"image/png"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"chord/chains"
)

// A small run for the report's tests: a model of two data sets, "blue"
// (error inflation fitted) and "red" (offset fitted), depth = 2000 + 100 a
// + 50 b exp(-(lambda - 1.4)^2 / 0.01) + 40 w exp(-(lambda - 2.7)^2 / 0.02)
// ppm with parameters a (log10 X mixing ratio, here a gas "H2O"), b (a gas
// "CO2" whose band sits at 1.4 µm), temperature T (= 800 + 100 a K at every
// pressure), the red set's offset and the blue set's inflation.

type testModel struct{}

func (testModel) Datasets() []Dataset {
	rng := rand.New(rand.NewPCG(3, 4))
	var d [2]Dataset
	d[0].Name, d[1].Name = "blue", "red"
	for i := range 60 {
		k := 0
		wl := 0.8 + 0.04*float64(i)
		if i >= 30 {
			k = 1
		}
		d[k].Wavelength = append(d[k].Wavelength, wl)
		d[k].HalfWidth = append(d[k].HalfWidth, 0.02)
		truth := modelDepth(wl, -3, -4.5) + 40*float64(k)
		d[k].Depth = append(d[k].Depth, truth+25*rng.NormFloat64())
		d[k].Sigma = append(d[k].Sigma, 20)
	}
	return d[:]
}

func modelDepth(wl, logH2O, logCO2 float64) float64 {
	return 2000 + 100*(logH2O+3) + 50*math.Pow(10, logCO2+4.5)*math.Exp(-(wl-1.4)*(wl-1.4)/0.01) + 40*math.Exp(-(wl-2.7)*(wl-2.7)/0.02)*math.Pow(10, logH2O+3)
}

func (testModel) Pressures() []float64 { return []float64{1e-5, 1e-4, 1e-3, 1e-2, 0.1, 1} }
func (testModel) Gases() []string      { return []string{"H2O", "CO2"} }

func (m testModel) Evaluate(v *SampleView, x []float64) error {
	i := 0
	for _, d := range m.Datasets() {
		for _, wl := range d.Wavelength {
			v.Depth[i] = modelDepth(wl, x[0], x[1])
			i++
		}
	}
	v.Offset[0], v.Offset[1] = 0, x[3]
	v.Inflation[0], v.Inflation[1] = x[4], 0
	for j := range v.Temperature {
		v.Temperature[j] = x[2] - 30*math.Log10(m.Pressures()[j])
	}
	return nil
}

func (m testModel) Without(dst, x []float64, gas string) error {
	y := append([]float64(nil), x...)
	if gas == "H2O" {
		y[0] = -12
	} else {
		y[1] = -12
	}
	v := &SampleView{Depth: dst, Offset: make([]float64, 2), Inflation: make([]float64, 2), Temperature: make([]float64, 6)}
	return m.Evaluate(v, y)
}

// testRun writes a chain of 32 walkers x 400 steps around the truth
// (log H2O -3, log CO2 -4.5, T 900 K, offset 40 ppm, inflation 10 ppm)
// into dir/chains, its first 60 steps a burn-in drifting in from afar.
func testRun(t *testing.T, dir string) []chains.PartInfo {
	t.Helper()
	l := chains.Layout{Walkers: 32, Dim: 5, NumExtra: 1, Columns: []chains.Column{
		{Name: "log10_vmr_H2O", Role: chains.RoleParameter, Source: 0, Quantity: "log10_vmr of H2O", Prior: "uniform(-10, -1)"},
		{Name: "log10_vmr_CO2", Role: chains.RoleParameter, Source: 1, Quantity: "log10_vmr of CO2", Prior: "uniform(-10, -1)"},
		{Name: "temperature_k", Role: chains.RoleParameter, Source: 2, Quantity: "temperature_k", Unit: "K", Prior: "uniform(300, 2000)"},
		{Name: "offset_ppm_red", Role: chains.RoleParameter, Source: 3, Quantity: "offset_ppm of red", Unit: "ppm", Prior: "normal(0, 100)"},
		{Name: "error_inflation_ppm_blue", Role: chains.RoleParameter, Source: 4, Quantity: "error_inflation_ppm of blue", Unit: "ppm", Prior: "log-uniform(1, 100)"},
		{Name: "log_likelihood", Role: chains.RoleDerived, Source: 0},
	}}
	w, err := chains.Create(filepath.Join(dir, chains.DirName), l)
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(7, 8))
	centre := []float64{-3, -4.5, 900, 40, 10}
	width := []float64{0.3, 0.3, 60, 8, 4}
	pos := make([]float64, 32*5)
	logp, extra := make([]float64, 32), make([]float64, 32)
	for step := 1; step <= 400; step++ {
		drift := math.Max(0, 1-float64(step)/60)
		for k := range 32 {
			lp := 0.0
			for j := range 5 {
				z := rng.NormFloat64()
				pos[k*5+j] = centre[j] + width[j]*(z+3*drift)
				lp -= 0.5 * (z + 3*drift) * (z + 3*drift)
			}
			logp[k], extra[k] = lp, lp+1
		}
		if err := w.WriteStep(step, pos, logp, extra); err != nil {
			t.Fatal(err)
		}
	}
	if _, err := w.Commit(); err != nil {
		t.Fatal(err)
	}
	return w.Committed()
}

// writeTestReport writes the whole report of the test run into dir.
func writeTestReport(t *testing.T, dir string) ([]chains.PartInfo, *Summary) {
	t.Helper()
	parts := testRun(t, dir)
	truth := map[string]float64{"log10_vmr_H2O": -3, "log10_vmr_CO2": -4.5, "temperature_k": 900, "offset_ppm_red": 40, "error_inflation_ppm_blue": 10}
	s, err := Write(dir, parts, Options{
		Burn: 60, Model: testModel{}, Title: "Test b", Truth: truth,
		Fitted:     Fitted{Offset: []bool{false, true}, Inflation: []bool{true, false}},
		Gases:      []GasParam{{Column: "log10_vmr_H2O", Gas: "H2O", Low: -10, High: -1}, {Column: "log10_vmr_CO2", Gas: "CO2", Low: -10, High: -1}},
		Atmosphere: &Atmosphere{HydrogenRich: true, TemperatureColumn: "temperature_k"},
		Fill:       func(s *Summary) { s.DemoOpacities = true; s.Warnings = append(s.Warnings, DemoWarning) },
		HTML:       &RunDetails{Title: "Test b", Config: "[star]\nname = \"<Lumen>\"\n", Inputs: []Input{{Role: "observations", Path: "/data/test.csv", SHA256: strings.Repeat("ab", 32)}}},
	})
	if err != nil {
		t.Fatal(err)
	}
	return parts, s
}

// TestReportFiles writes a whole report of a small run and checks each
// plot: a PNG of a readable size, and an SVG holding the labels and legend
// entries a reader needs (fact of the trade: a figure without axis units,
// band meanings or a legend cannot be read).
func TestReportFiles(t *testing.T) {
	dir := t.TempDir()
	parts, s := writeTestReport(t, dir)
	if s.Burn != 60 || s.Best.DataPoints != 60 {
		t.Errorf("burn %d, %d data points", s.Burn, s.Best.DataPoints)
	}
	want := map[string][]string{
		"spectrum":    {"Wavelength [µm]", "Transit depth [ppm]", "Residual [σ]", "1σ (68%) band", "2σ (95%) band", "median model", "truth", "blue, errors inflated by", "red, offset +", "demo opacities: not for science"},
		"temperature": {"Temperature [K]", "Pressure [bar]", "median", "1σ (68%) band", "2σ (95%) band", "truth"},
		"gases":       {"Wavelength [µm]", "without H2O", "without CO2", "best fit", "data"},
		"traces":      {"Step", "log posterior", "walker 0", "burn-in (60 steps, dropped)", "log10 H2O mixing ratio", "Temperature [K]", "Offset of red [ppm]", "Error inflation of blue [ppm]"},
		"corner":      {"log10 H2O mixing ratio", "log10 CO2 mixing ratio", "Temperature [K]", "Offset of red [ppm]", "+", "/−", "demo opacities: not for science"},
	}
	for _, name := range PlotNames {
		checkPNG(t, filepath.Join(dir, name+".png"), 600, 500)
		svg, err := os.ReadFile(filepath.Join(dir, name+".svg"))
		if err != nil {
			t.Fatal(err)
		}
		text := svgText(svg)
		for _, w := range want[name] {
			if !strings.Contains(text, w) {
				t.Errorf("%s.svg lacks %q", name, w)
			}
		}
	}
	// Wavelength ticks: 0.8-3.2 µm is a factor 4, so the axis is
	// logarithmic and labelled at least five times.
	spec, _ := os.ReadFile(filepath.Join(dir, "spectrum.svg"))
	n := 0
	for _, l := range []string{">0.8<", ">1<", ">1.5<", ">2<", ">3<"} {
		if bytes.Contains(spec, []byte(l)) {
			n++
		}
	}
	if n < 5 {
		t.Errorf("spectrum.svg: %d of the wavelength labels 0.8, 1, 1.5, 2, 3", n)
	}
	// chord compare's overlay of marginal posteriors.
	c, err := chains.Read(filepath.Join(dir, chains.DirName), parts, 60, 1)
	if err != nil {
		t.Fatal(err)
	}
	marg := filepath.Join(dir, "marginals")
	if err := PlotMarginals(marg, []MarginalRun{{"run-a", c}, {"run-b", c}}, []string{"log10_vmr_H2O", "temperature_k"}); err != nil {
		t.Fatal(err)
	}
	checkPNG(t, marg+".png", 600, 300)
	svg, err := os.ReadFile(marg + ".svg")
	if err != nil {
		t.Fatal(err)
	}
	for _, w := range []string{"run-a", "run-b", "log10 H2O mixing ratio", "Temperature [K]", "posterior density"} {
		if !strings.Contains(svgText(svg), w) {
			t.Errorf("marginals.svg lacks %q", w)
		}
	}
	if err := PlotMarginals(marg, []MarginalRun{{"run-a", c}}, []string{"nope"}); err == nil {
		t.Error("a parameter the run lacks: no error")
	}
	if os.Getenv("CHORD_KEEP_PLOTS") != "" {
		for _, f := range Files() {
			if b, err := os.ReadFile(filepath.Join(dir, f)); err == nil {
				os.WriteFile(filepath.Join(os.Getenv("CHORD_KEEP_PLOTS"), f), b, 0o644)
			}
		}
	}
}

// checkPNG decodes a PNG and checks its size in pixels.
func checkPNG(t *testing.T, path string, minW, minH int) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	if b := img.Bounds(); b.Dx() < minW || b.Dy() < minH {
		t.Errorf("%s: %d x %d pixels, want at least %d x %d", path, b.Dx(), b.Dy(), minW, minH)
	}
}

// svgText is the text of an SVG's <text> elements, one per line, with the
// XML escapes undone.
func svgText(svg []byte) string {
	var b strings.Builder
	s := string(svg)
	for {
		i := strings.Index(s, "<text")
		if i < 0 {
			break
		}
		s = s[i:]
		j := strings.Index(s, ">")
		k := strings.Index(s, "</text>")
		if j < 0 || k < j {
			break
		}
		b.WriteString(s[j+1:k] + "\n")
		s = s[k:]
	}
	r := strings.NewReplacer("&amp;", "&", "&lt;", "<", "&gt;", ">", "&#34;", `"`, "&#39;", "'", "&quot;", `"`)
	return r.Replace(b.String())
}
