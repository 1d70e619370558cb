package report

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mathext"
)

// Benneke & Seager (2013, Table 2; from memory) tabulate the calibration of
// Sellke, Bayarri & Berger (2001, Am. Stat. 55, 62): each row's B is
// -1/(e p ln p) at its p, its ln B the log of that, its sigma the two-sided
// Gaussian significance of p (gonum's mathext.NormalQuantile), all to the
// table's two printed digits; and SigmaFromLnB at the row's ln B gives the
// row's sigma to the rounding of that ln B.
func TestBennekeSeagerTable(t *testing.T) {
	for i, r := range BennekeSeager2013 {
		b := -1 / (math.E * r.P * math.Log(r.P))
		if math.Abs(b-r.B)/r.B > 0.03 {
			t.Errorf("row %d: B %g, the calibration at p = %g gives %.3g", i, r.B, r.P, b)
		}
		if math.Abs(math.Log(b)-r.LnB) > math.Max(0.06, 0.05*r.LnB) { // two printed digits
			t.Errorf("row %d: ln B %g, the calibration gives %.3f", i, r.LnB, math.Log(b))
		}
		if s := -mathext.NormalQuantile(r.P / 2); math.Abs(s-r.Sigma) > 0.05 {
			t.Errorf("row %d: sigma %g, p = %g is %.3f sigma", i, r.Sigma, r.P, s)
		}
		if s := SigmaFromLnB(r.LnB); math.Abs(s-r.Sigma) > 0.1 {
			t.Errorf("row %d: SigmaFromLnB(%g) = %.3f, the table says %g", i, r.LnB, s, r.Sigma)
		}
	}
	for _, c := range []struct {
		lnB   float64
		label string
		sigma float64
	}{
		{-3, "not significant", 2.1}, {0.99, "not significant", 2.1}, {1, "weak detection", 2.1},
		{2.49, "weak detection", 2.1}, {2.5, "moderate detection", 2.7}, {4.99, "moderate detection", 2.7},
		{5, "strong detection", 3.6}, {40, "strong detection", 3.6},
	} {
		if l, _, s := Strength(c.lnB); l != c.label || s != c.sigma {
			t.Errorf("Strength(%g) = %q, %g sigma; want %q, %g", c.lnB, l, s, c.label, c.sigma)
		}
	}
	if got := StrengthText(7.2); got != "strong detection (ln B >= 5, 3.6 sigma in Benneke & Seager 2013, Table 2)" {
		t.Errorf("StrengthText(7.2) = %q", got)
	}
	if got := StrengthText(0.4); !strings.HasPrefix(got, "not significant (ln B < 1, below 2.1 sigma") {
		t.Errorf("StrengthText(0.4) = %q", got)
	}
}

func nestedSummary(lnZ, err float64, data string, params ...ColumnSummary) *Summary {
	s := summaryWith(params...)
	s.Method = MethodNested
	s.Evidence = &Evidence{LogZ: lnZ, LogZErr: err, Information: 9, Finished: true, Data: data, LivePoints: 100}
	return s
}

// chord compare: ln B = ln Z_a - ln Z_b with error sqrt(e_a^2 + e_b^2)
// (independent estimates), only between runs of the same data.
func TestCompareBayesFactors(t *testing.T) {
	runs := []CompareRun{
		{Label: "full", NoisePPM: 30, Summary: nestedSummary(-100, 0.3, "d1", col("T", 500, 10, 20))},
		{Label: "noH2O", NoisePPM: 30, Summary: nestedSummary(-112.5, 0.4, "d1", col("T", 520, 15, 30))},
		{Label: "other", NoisePPM: 60, Summary: nestedSummary(-50, 0.2, "d2", col("T", 500, 20, 40))},
		{Label: "ensemble", NoisePPM: 30, Summary: summaryWith(col("T", 500, 10, 20))},
	}
	c, err := Compare(runs)
	if err != nil {
		t.Fatal(err)
	}
	if len(c.Evidence) != 3 || len(c.BayesFactors) != 1 {
		t.Fatalf("evidence %+v, Bayes factors %+v", c.Evidence, c.BayesFactors)
	}
	f := c.BayesFactors[0]
	if f.A != "full" || f.B != "noH2O" || f.LnB != 12.5 || f.LnBErr != 0.5 || f.Favours != "full" || f.Strength != "strong" || f.Sigma != SigmaFromLnB(12.5) {
		t.Errorf("Bayes factor %+v", f)
	}
	var tab bytes.Buffer
	if err := c.WriteTable(&tab); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"full  noH2O  12.50  ± 0.50  full", "run ensemble has no evidence", "not comparable", "-112.50"} {
		if !strings.Contains(tab.String(), want) {
			t.Errorf("table lacks %q:\n%s", want, tab.String())
		}
	}
}

// A detection by evidence: ln B, its Sellke-Bayarri-Berger sigma and
// Benneke & Seager strength, the class by the rules of ClassifyGas, the
// full run's Savage-Dickey verdict beside it, and the caution of the gas
// in the full run's atmosphere (methane in a cool hydrogen-rich one: the
// chemistry note).
func TestDetectByEvidence(t *testing.T) {
	ch4 := col("log10_vmr_CH4", -3, 0.2, 0.4)
	ch4.Gas = &GasVerdict{Gas: "CH4", Class: Detected, SigmaIsBound: true, EdgeMeansAbsent: true, Verdict: "detected, > 3.8 sigma (lower bound); too few samples"}
	ch4.Prior = "uniform(-12, -1)"
	co := col("log10_vmr_CO", -4, 1, 2)
	co.Gas = &GasVerdict{Gas: "CO", Class: Constrained, EdgeMeansAbsent: false, Verdict: "constrained, 2.2 sigma"}
	co.Prior = "uniform(-6, -1)"
	full := nestedSummary(-100, 0.3, "d", col("temperature_k", 600, 20, 40), ch4, co)
	full.Atmosphere = &Atmosphere{HydrogenRich: true, TemperatureColumn: "temperature_k"}
	red := map[string]DetectRun{
		"CH4": {Dir: "without-CH4", Summary: nestedSummary(-130, 0.4, "d")},
		"CO":  {Dir: "without-CO", Summary: nestedSummary(-101.5, 0.4, "d")},
	}
	var tab DetectionTable
	if err := tab.DetectByEvidence("", DetectRun{Dir: "full", Summary: full}, []string{"CH4", "CO"}, red); err != nil {
		t.Fatal(err)
	}
	d := tab.Detections
	if len(d) != 2 || d[0].LnB != 30 || d[0].LnBErr != 0.5 || d[0].Class != Detected || d[0].Strength != "strong detection" ||
		d[0].Sigma != SigmaFromLnB(30) || !strings.HasPrefix(d[0].SavageDickey, "detected, > 3.8") {
		t.Fatalf("CH4: %+v", d[0])
	}
	// ln B = 1.5: weak, under 3 sigma, and CO's edge (1e-6) does not mean absent.
	if d[1].Class != UpperLimit && d[1].Class != Constrained || d[1].Strength != "weak detection" || d[1].EdgeMeansAbsent {
		t.Errorf("CO: %+v", d[1])
	}
	if len(tab.Cautions) != 1 || tab.Cautions[0] != MethaneChemistryNote {
		t.Errorf("cautions %q", tab.Cautions)
	}
	var txt, js bytes.Buffer
	if err := tab.WriteText(&txt); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"CH4", "30.00", "± 0.50", "strong detection", "detected, > 3.8 sigma (lower bound)", "1e-6) is not low enough to mean absent"} {
		if !strings.Contains(txt.String(), want) {
			t.Errorf("text lacks %q:\n%s", want, txt.String())
		}
	}
	if err := tab.WriteJSON(&js); err != nil {
		t.Fatal(err)
	}
	var back DetectionTable
	if err := json.Unmarshal(js.Bytes(), &back); err != nil || back.Detections[0].LnB != 30 {
		t.Errorf("JSON round trip: %v %+v", err, back)
	}

	// Runs of other data, or without an evidence, are errors.
	red["CO"] = DetectRun{Dir: "without-CO", Summary: nestedSummary(-101.5, 0.4, "other")}
	if err := (&DetectionTable{}).DetectByEvidence("", DetectRun{Dir: "full", Summary: full}, []string{"CO"}, red); err == nil {
		t.Error("runs of different data compared")
	}
	if err := (&DetectionTable{}).DetectByEvidence("", DetectRun{Dir: "full", Summary: summaryWith()}, []string{"CO"}, red); err == nil {
		t.Error("an ensemble run compared")
	}
}

// A nested run's summary is made from its equal-weight samples as
// independent draws: no autocorrelation time, acceptance or R-hat; the
// evidence in the overview; the Savage-Dickey verdicts with the samples
// as effective size; and, where a verdict is only a lower bound, the
// advice to detect by evidence naming the configuration.
func TestSummarizeNested(t *testing.T) {
	c := syntheticChains(1, 4000, -1, 3)
	c.EffectiveSize = 4100.5
	e := &Evidence{LogZ: -42.25, LogZErr: 0.19, Information: 14.3, LivePoints: 400, DeadPoints: 9000, Evaluations: 123456, Finished: true, Tolerance: 0.1}
	s, err := Summarize(c, SummaryOptions{Evidence: e, ConfigFile: "/x/fit.toml", Gases: []GasParam{
		{Column: "log_ch4", Gas: "CH4", Low: -12, High: -1},
		{Column: "log_h2o", Gas: "H2O", Low: -12, High: -1},
	}})
	if err != nil {
		t.Fatal(err)
	}
	if s.Method != MethodNested || s.Evidence != e || !s.Converged || s.Walkers != 0 || s.Samples != 4000 || !math.IsNaN(float64(s.MaxTau)) {
		t.Errorf("summary %+v", s)
	}
	for _, p := range s.Parameters {
		if !math.IsNaN(float64(p.Tau)) || float64(p.ESS) != 4100.5 || !math.IsNaN(float64(p.RHat)) {
			t.Errorf("%s: tau %v ESS %v R-hat %v", p.Name, p.Tau, p.ESS, p.RHat)
		}
	}
	h2o := s.Parameters[3].Gas
	if h2o == nil || h2o.Class != Detected || !h2o.SigmaIsBound {
		t.Fatalf("H2O verdict %+v", h2o)
	}
	var txt bytes.Buffer
	if err := s.WriteText(&txt); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"ln Z = -42.25 ± 0.19", "H = 14.3 nats", "nested sampling, 400 live points", "4000 equal-weight posterior samples",
		"chord detect -c /x/fit.toml -o DETECTDIR --gas H2O"} {
		if !strings.Contains(txt.String(), want) {
			t.Errorf("summary.txt lacks %q:\n%s", want, txt.String())
		}
	}
	if strings.Contains(txt.String(), "autocorrelation") || strings.Contains(txt.String(), "R-hat") {
		t.Errorf("summary.txt of a nested run speaks of autocorrelation:\n%s", txt.String())
	}
	var js bytes.Buffer
	if err := s.WriteJSON(&js); err != nil {
		t.Fatal(err)
	}
	back := &Summary{}
	if err := json.Unmarshal(js.Bytes(), back); err != nil || back.Evidence == nil || back.Evidence.LogZ != -42.25 {
		t.Errorf("summary.json round trip: %v %+v", err, back.Evidence)
	}

	// Unfinished: not converged, and said so; burn-in is refused.
	e2 := *e
	e2.Finished = false
	s, err = Summarize(c, SummaryOptions{Evidence: &e2})
	if err != nil {
		t.Fatal(err)
	}
	if s.Converged || !strings.Contains(strings.Join(s.Warnings, " "), "not finished") {
		t.Errorf("unfinished run: converged %v, warnings %q", s.Converged, s.Warnings)
	}
	if _, err := Summarize(c, SummaryOptions{Evidence: e, Burn: 10}); err == nil {
		t.Error("burn-in accepted for equal-weight samples")
	}
}

// report.html of a nested run: an Evidence section with ln Z in place of
// the convergence section and its autocorrelation table.
func TestReportHTMLNested(t *testing.T) {
	dir := t.TempDir()
	s := nestedSummary(-42.25, 0.19, "d", col("T", 500, 10, 20))
	s.Samples = 1000
	if err := WriteHTML(dir, s, &RunDetails{}); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(filepath.Join(dir, HTMLFile))
	if err != nil {
		t.Fatal(err)
	}
	page := string(b)
	for _, want := range []string{"<h2>Evidence</h2>", "ln Z = -42.25 ± 0.19", "Finished"} {
		if !strings.Contains(page, want) {
			t.Errorf("report.html lacks %q", want)
		}
	}
	if strings.Contains(page, "tau (steps)") {
		t.Error("report.html of a nested run has the autocorrelation table")
	}
}
