package report

import (
	"bytes"
	"encoding/json"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"chord/chains"
)

// syntheticChains builds a chain of known marginals:
//   - offset: i.i.d. N(3, 0.5^2) per step and walker (tau = 1);
//   - ar: an AR(1) series per walker with phi = 0.5, unit innovations
//     (tau = (1+phi)/(1-phi) = 3, standard result);
//   - log_ch4: -12 + Exp(1), truncated at -1 (piled at the prior edge -12);
//   - log_h2o: N(-3, 0.2^2), far above the edge;
//
// walker stuck (if >= 0) changes its parameters only every 50th step.
func syntheticChains(walkers, steps, stuck int, seed uint64) *chains.Chain {
	rng := rand.New(rand.NewPCG(seed, 99))
	cols := []chains.Column{
		{Name: "log_posterior", Role: "log_density"},
		{Name: "log_likelihood", Role: chains.RoleDerived},
		{Name: "offset", Role: chains.RoleParameter, Unit: "ppm"},
		{Name: "ar", Role: chains.RoleParameter},
		{Name: "log_ch4", Role: chains.RoleParameter},
		{Name: "log_h2o", Role: chains.RoleParameter},
	}
	c := &chains.Chain{Walkers: walkers, Columns: cols, Values: make([][]float64, len(cols)), TotalSteps: steps}
	ar := make([]float64, walkers)
	prev := make([]float64, len(cols)*walkers)
	for s := 1; s <= steps; s++ {
		c.Steps = append(c.Steps, s)
		for k := 0; k < walkers; k++ {
			ar[k] = 0.5*ar[k] + rng.NormFloat64()
			ch4 := math.Inf(1)
			for ch4 > -1 {
				ch4 = -12 + rng.ExpFloat64()
			}
			row := []float64{-float64(s + k), 0, 3 + 0.5*rng.NormFloat64(), ar[k], ch4, -3 + 0.2*rng.NormFloat64()}
			if k == stuck && s%50 != 1 {
				for j := range row {
					row[j] = prev[j*walkers+k]
				}
			}
			if s == 123 && k == 4 {
				row[0] = 10 // the best sample
			}
			row[1] = row[0] + 1
			for j, v := range row {
				c.Values[j] = append(c.Values[j], v)
				prev[j*walkers+k] = v
			}
		}
	}
	return c
}

func TestSummarize(t *testing.T) {
	c := syntheticChains(32, 500, 7, 1)
	s, err := Summarize(c, SummaryOptions{Gases: []GasParam{
		{Column: "log_ch4", Gas: "CH4", Low: -12, High: -1},
		{Column: "log_h2o", Gas: "H2O", Low: -12, High: -1},
	}})
	if err != nil {
		t.Fatal(err)
	}
	par := map[string]ColumnSummary{}
	for _, p := range s.Parameters {
		par[p.Name] = p
	}
	// Quantiles of N(3, 0.5): 3 + 0.5 z_p with z = 0, -+0.9945, -+1.9600
	// (normal quantiles, handbook values). Tolerance: 4 standard errors of
	// an empirical quantile, sqrt(p(1-p)/n)/f(q_p) (asymptotic result for
	// sample quantiles), n = 16000 (less the stuck walker's repeats).
	off := par["offset"]
	n := 16000.0 * 31 / 32
	for _, q := range []struct {
		name    string
		got, p  float64
		z, dens float64
	}{
		{"median", off.Median, 0.5, 0, 0.3989},
		{"p16", off.P16, 0.16, -0.9945, 0.2434},
		{"p84", off.P84, 0.84, 0.9945, 0.2434},
		{"p2.5", off.P2_5, 0.025, -1.96, 0.0584},
		{"p97.5", off.P97_5, 0.975, 1.96, 0.0584},
	} {
		want := 3 + 0.5*q.z
		se := math.Sqrt(q.p*(1-q.p)/n) / (q.dens / 0.5)
		if math.Abs(q.got-want) > 4*se {
			t.Errorf("offset %s = %.4f, want %.4f +- %.4f", q.name, q.got, want, 4*se)
		}
	}
	// tau of the AR(1) column: 3 (standard result); the FFT estimate with
	// Sokal's window has relative error about sqrt(2(2M+1)/N), M ~ 5 tau,
	// N = 16000 samples: ~6%; allow 20%.
	if got := float64(par["ar"].Tau); math.Abs(got-3) > 0.6 {
		t.Errorf("tau of AR(1) phi=0.5 = %.2f, want 3", got)
	}
	// Split R-hat of i.i.d. draws is 1 up to sampling noise of order 1/n
	// (Vehtari et al. 2021); here n = 250 per split half.
	if r := float64(par["offset"].RHat); !(r > 0.99 && r < 1.01) {
		t.Errorf("R-hat of i.i.d. draws %v, want about 1", r)
	}
	if got := float64(par["offset"].Tau); got > 1.5 {
		t.Errorf("tau of i.i.d. column = %.2f, want about 1", got)
	}
	// The edge-piled gas is an upper limit at the 95th percentile of
	// -12 + Exp(1): -12 - ln 0.05 = -9.004 (closed form; truncation at -1
	// changes it by e^-11, negligible). SE of the 95% quantile:
	// sqrt(.95*.05/n)/0.05 = 0.035.
	ch4 := par["log_ch4"]
	if ch4.Gas == nil || ch4.Gas.Class != UpperLimit {
		t.Fatalf("log_ch4 verdict %+v, want an upper limit", ch4.Gas)
	}
	if math.Abs(ch4.Gas.Upper95-(-9.004)) > 0.14 {
		t.Errorf("CH4 upper limit %.3f, want -9.004", ch4.Gas.Upper95)
	}
	h2o := par["log_h2o"]
	if h2o.Gas == nil || h2o.Gas.Class != Detected {
		t.Errorf("log_h2o verdict %+v, want detected", h2o.Gas)
	}
	if s.Best.Step != 123 || s.Best.Walker != 4 || s.Best.LogPosterior != 10 || s.Best.LogLikelihood != 11 {
		t.Errorf("best sample %+v, want step 123 walker 4", s.Best)
	}
	if off.MaxPost != c.Column("offset")[122*32+4] {
		t.Errorf("max-posterior offset %v", off.MaxPost)
	}
	// Acceptance: every walker moves at every step except the stuck one,
	// which moves at steps 51, 101, ..., 451: 9 of 499.
	if len(s.Acceptance.Stuck) != 1 || s.Acceptance.Stuck[0] != 7 || s.Acceptance.Median != 1 || math.Abs(s.Acceptance.Min-9.0/499) > 1e-12 {
		t.Errorf("acceptance %+v, want walker 7 stuck", s.Acceptance)
	}
	if len(s.Checks) == 0 || s.Checks[0].Kind != CheckModes || !strings.Contains(s.Checks[0].Message, "multimodal or not mixed: ") || !strings.Contains(s.Checks[0].Message, "1 stuck walker(s) [7]") {
		t.Errorf("no stuck-walker check: %v", s.Checks)
	}
	if len(s.Cautions) != 0 {
		t.Errorf("caution without a detected life-associated gas: %v", s.Cautions)
	}

	s.DemoOpacities = true
	s.SetChiSquare(150, 100)
	if got := float64(s.Best.ReducedChiSquare); got != 150.0/96 {
		t.Errorf("reduced chi-square %v, want 150/96", got)
	}
	var txt bytes.Buffer
	if err := s.WriteText(&txt); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"NOT FOR SCIENCE", "upper limit, log10 < -9.0", "log_h2o", "32 walkers x 500 steps", "reduced 1.562", UpperLimitNote} {
		if !strings.Contains(txt.String(), want) {
			t.Errorf("summary.txt lacks %q:\n%s", want, txt.String())
		}
	}
	var js bytes.Buffer
	s.MaxTau = Float(math.NaN())
	if err := s.WriteJSON(&js); err != nil {
		t.Fatal(err)
	}
	var back Summary
	if err := json.Unmarshal(js.Bytes(), &back); err != nil {
		t.Fatal(err)
	}
	if !math.IsNaN(float64(back.MaxTau)) || back.Parameters[0].Median != off.Median || back.Parameters[2].Gas.Class != UpperLimit {
		t.Errorf("JSON round trip: %+v", back.Parameters[2])
	}
}

func TestSummarizeShortChain(t *testing.T) {
	c := syntheticChains(8, 30, -1, 2)
	s, err := Summarize(c, SummaryOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if s.Converged || !strings.Contains(strings.Join(s.Warnings, " "), "not converged") {
		t.Errorf("30-step chain reported converged: %v", s.Warnings)
	}
	if b := AutoBurn(c); b < 3 || b > 15 {
		t.Errorf("auto burn-in %d, want 3 tau (about 9) and at most half of 30", b)
	}
	c.Steps = c.Steps[:1]
	if _, err := Summarize(c, SummaryOptions{}); err == nil {
		t.Error("one step: no error")
	}
}

// summary.txt's layout: columns aligned, one interval convention stated,
// the prior beside each parameter, short verdicts with numbered notes, the
// upper-limit note only when an upper limit exists, lower bounds rounded
// down, the demo banner once.
func TestSummaryTextLayout(t *testing.T) {
	gas := func(class GasClass, sigma float64, bound bool, verdict string) *GasVerdict {
		return &GasVerdict{Gas: "H2O", Class: class, Sigma: Float(sigma), SigmaIsBound: bound, LnB10: 6, Upper95: -5.321, Verdict: verdict}
	}
	s := &Summary{
		Program: "chord test", DemoOpacities: true, Walkers: 32, Steps: 1000, Thin: 1, Samples: 32000, MaxTau: 10, ChainTaus: 100, Converged: true,
		Warnings: []string{DemoWarning, "a warning from the fit"},
		Parameters: []ColumnSummary{
			{Name: "log10_vmr_H2O", Prior: "uniform(-10, -1)", Median: -3.4312, P16: -3.9712, P84: -2.9201, P2_5: -4.51, P97_5: -2.41,
				Gas: gas(Detected, 3.8656, true, "detected, > 3.8 sigma (lower bound); too few samples near the prior edge")},
			{Name: "temperature_k", Unit: "K", Prior: "uniform(300, 2000)", Median: 978.7, P16: 916.8, P84: 1038.9, P2_5: 862.3, P97_5: 1099},
			{Name: "radius_rjup", Unit: "R_jup", Prior: "uniform(0.8, 1.3)", Median: 1.04951, P16: 1.04343, P84: 1.05503, P2_5: 1.038, P97_5: 1.059},
		},
	}
	var b bytes.Buffer
	if err := s.WriteText(&b); err != nil {
		t.Fatal(err)
	}
	txt := b.String()
	if n := strings.Count(txt, DemoWarning); n != 1 {
		t.Errorf("demo banner %d times, want once:\n%s", n, txt)
	}
	// 3.8656 is a lower bound: printed rounded down, never up to 3.9.
	if !strings.Contains(txt, "detected, > 3.8 sigma [1]") || strings.Contains(txt, "3.9") {
		t.Errorf("lower bound not rounded down:\n%s", txt)
	}
	for _, want := range []string{IntervalConvention, "uniform(300, 2000)", "[1] too few samples near the prior edge", "a warning from the fit",
		// two significant digits of the narrower half-interval: 0.51 -> 2 decimals, 61.9 -> 0, 0.0058 -> 4
		"-3.43", "979", "-62", "+60", "1.0495", "-0.0061", "+0.0055"} {
		if !strings.Contains(txt, want) {
			t.Errorf("summary.txt lacks %q:\n%s", want, txt)
		}
	}
	if strings.Contains(txt, UpperLimitNote) {
		t.Errorf("upper-limit note without an upper limit:\n%s", txt)
	}
	// Aligned: the right edges of the median column and the left edges of
	// the prior column coincide on every row of the parameter table.
	lines := strings.Split(txt, "\n")
	var table []string
	for i, l := range lines {
		if strings.HasPrefix(l, "name ") && strings.Contains(l, "prior") {
			table = lines[i : i+4]
		}
	}
	if table == nil {
		t.Fatalf("no parameter table:\n%s", txt)
	}
	med := strings.Index(table[0], "median") + len("median")
	prior := strings.Index(table[0], "prior")
	for _, l := range table[1:] {
		r := []rune(l)
		if r[med-1] == ' ' || r[med] != ' ' {
			t.Errorf("median column not right-aligned at %d: %q", med, l)
		}
		if !strings.HasPrefix(string(r[prior:]), "uniform(") {
			t.Errorf("prior column not at %d: %q", prior, l)
		}
	}
	// An upper limit brings its note.
	s.Parameters[0].Gas = gas(UpperLimit, 1, false, "upper limit, log10 < -5.32 (95%)")
	b.Reset()
	s.WriteText(&b)
	if !strings.Contains(b.String(), UpperLimitNote) || !strings.Contains(b.String(), "upper limit, log10 < -5.32 [1]") {
		t.Errorf("upper limit without its note:\n%s", b.String())
	}
}

// The caution on gases associated with life, with its context: methane
// expected from chemistry in a cool hydrogen-rich atmosphere (Lodders &
// Fegley 2002) gets the chemistry note; oxygen, ozone and methane on a
// rocky planet, and methane in a hot hydrogen atmosphere, the full caution.
func TestCautionContext(t *testing.T) {
	h2 := &Atmosphere{HydrogenRich: true}
	rocky := &Atmosphere{HydrogenRich: false}
	for i, c := range []struct {
		gas   string
		class GasClass
		a     *Atmosphere
		t     float64
		want  string
	}{
		{"CH4", Detected, h2, 520, MethaneChemistryNote},
		{"CH4", Detected, h2, 1500, LifeCaution},
		{"CH4", Detected, h2, math.NaN(), LifeCaution},
		{"CH4", Detected, rocky, 250, LifeCaution},
		{"O3", Detected, rocky, 250, LifeCaution},
		{"O2", Detected, h2, 520, LifeCaution},
		{"CH4", UpperLimit, rocky, 250, ""},
		{"H2O", Detected, rocky, 250, ""},
		{"CH4", Detected, nil, 250, LifeCaution},
	} {
		if got := Caution(c.gas, c.class, c.a, c.t); got != c.want {
			t.Errorf("case %d (%s in %+v at %g K): got %.40q, want %.40q", i, c.gas, c.a, c.t, got, c.want)
		}
	}
}
