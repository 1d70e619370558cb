package report

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"chord/chains"
)

// TestGoodnessOfFit: the p-value is the chi-square survival function:
// P(chi2_10 >= 23.209) = 0.01 and P(chi2_10 >= 29.588) = 0.001 (critical
// values of the chi-square distribution, NIST/SEMATECH e-Handbook of
// Statistical Methods, table 1.3.6.7.4; tolerance for their 5 digits).
// A chi-square of 100 for 10 degrees of freedom fires the check and marks
// the gas verdicts; 10 does not.
func TestGoodnessOfFit(t *testing.T) {
	for _, c := range []struct{ chi2, p float64 }{{23.209, 0.01}, {29.588, 0.001}} {
		s := &Summary{Parameters: make([]ColumnSummary, 3)}
		s.setGoodness(c.chi2, 13, false)
		g := s.GoodnessOfFit
		if g.DegreesOfFreedom != 10 || math.Abs(float64(g.PValue)-c.p) > 2e-4*c.p || math.Abs(float64(g.ReducedChiSquare)-c.chi2/10) > 1e-12 {
			t.Errorf("chi-square %g: %+v, want p = %g", c.chi2, g, c.p)
		}
	}
	s := &Summary{Parameters: []ColumnSummary{{Name: "log10_vmr_H2O", Gas: &GasVerdict{Gas: "H2O", Class: Detected, Verdict: "detected at 5.0 sigma"}}, {Name: "t"}}}
	s.setGoodness(100, 12, true)
	if s.GoodnessOfFit.Fits || len(s.Checks) != 1 || s.Checks[0].Kind != CheckGoodness || !strings.Contains(s.Checks[0].Message, "the model does not fit the data: chi-square 100.0 for 10 degrees of freedom with the errors as inflated by the fit") {
		t.Errorf("misfit: %+v %v", s.GoodnessOfFit, s.Checks)
	}
	if v := s.Parameters[0].Gas; !v.Unreliable || v.Verdict != "detected at 5.0 sigma; "+MisfitVerdict {
		t.Errorf("gas verdict %+v", v)
	}
	s = &Summary{Parameters: make([]ColumnSummary, 2)}
	s.setGoodness(10, 12, false)
	if !s.GoodnessOfFit.Fits || len(s.Checks) != 0 {
		t.Errorf("a good fit: %+v %v", s.GoodnessOfFit, s.Checks)
	}
}

// TestPriorEdge: a posterior exponential from an edge with a scale of 2% of
// the prior range puts 1 - 1/e = 63% of its samples in the 2% next to the
// edge (fact of mathematics): piled. A uniform posterior (2% per part, the
// prior's share) and a normal one in the middle are not; an edge that is a
// limit is not checked; a log-uniform prior is cut in log.
func TestPriorEdge(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	draw := func(f func() float64) []float64 {
		x := make([]float64, 20000)
		for i := range x {
			x[i] = f()
		}
		return x
	}
	b := ParamBounds{Column: "temperature_k", Low: 300, High: 1300}
	low := draw(func() float64 { return 300 + math.Min(rng.ExpFloat64()*20, 999) })
	if msg := edgeCheck(b, low); !strings.Contains(msg, "temperature_k is piled against its prior's lower edge 300 (6") {
		t.Errorf("piled at the lower edge: %q", msg)
	}
	high := draw(func() float64 { return 1300 - math.Min(rng.ExpFloat64()*20, 999) })
	if msg := edgeCheck(b, high); !strings.Contains(msg, "upper edge 1300") {
		t.Errorf("piled at the upper edge: %q", msg)
	}
	if msg := edgeCheck(b, draw(func() float64 { return 300 + 1000*rng.Float64() })); msg != "" {
		t.Errorf("uniform posterior: %q", msg)
	}
	if msg := edgeCheck(b, draw(func() float64 { return 800 + 50*rng.NormFloat64() })); msg != "" {
		t.Errorf("posterior in the middle: %q", msg)
	}
	limit := b
	limit.LowLimit = true
	if msg := edgeCheck(limit, low); msg != "" {
		t.Errorf("piled at a limit: %q", msg)
	}
	lb := ParamBounds{Column: "radius", Low: 1, High: 100, Log: true}
	if msg := edgeCheck(lb, draw(func() float64 { return 100 * math.Exp(-0.02*math.Log(100)*rng.ExpFloat64()) })); !strings.Contains(msg, "upper edge 100") {
		t.Errorf("log-uniform, piled in log: %q", msg)
	}
}

// walkerChain is a chain whose walkers' log posteriors are N(mean[k], 1)
// i.i.d. per step, with one parameter that moves every step.
func walkerChain(mean []float64, steps int) *chains.Chain {
	rng := rand.New(rand.NewPCG(3, 4))
	c := &chains.Chain{Walkers: len(mean), TotalSteps: steps, Columns: []chains.Column{{Name: "log_posterior"}, {Name: "x", Role: chains.RoleParameter}}, Values: make([][]float64, 2)}
	for s := 1; s <= steps; s++ {
		c.Steps = append(c.Steps, s)
		for _, m := range mean {
			c.Values[0] = append(c.Values[0], m+rng.NormFloat64())
			c.Values[1] = append(c.Values[1], rng.NormFloat64())
		}
	}
	return c
}

// TestModesCheck: 24 walkers around -10 and 8 around -30, each with a unit
// spread of log posterior (robust sd of N(0, 1): IQR/1.349 = 1, fact of
// statistics), fall into two groups; all 32 around -10 do not, nor two
// groups 2 apart (less than 3 spreads).
func TestModesCheck(t *testing.T) {
	mean := make([]float64, 32)
	for k := range mean {
		mean[k] = -10
		if k >= 24 {
			mean[k] = -30
		}
	}
	c := walkerChain(mean, 400)
	msg := modesCheck(c, acceptance(c))
	if !strings.Contains(msg, "multimodal or not mixed: the walkers fall into 2 groups by log posterior after burn-in (24 walker(s) around -10.0, 8 walker(s) around -30.0") {
		t.Errorf("two groups: %q", msg)
	}
	for k := range mean {
		mean[k] = -10
	}
	if msg := modesCheck(walkerChain(mean, 400), Acceptance{}); msg != "" {
		t.Errorf("one group: %q", msg)
	}
	for k := 24; k < 32; k++ {
		mean[k] = -12
	}
	if msg := modesCheck(walkerChain(mean, 400), Acceptance{}); msg != "" {
		t.Errorf("groups 2 apart, spread 1: %q", msg)
	}
}

// TestCoverageCheck: bins outside a table, bins without line opacity,
// temperatures and pressures outside a table's grid and a table zero in
// every bin each fire the check; a covering table does not.
func TestCoverageCheck(t *testing.T) {
	good := TableCoverage{Table: "H2O cross-sections", Gas: "H2O", Lines: true, Bins: 3, TMin: 200, TMax: 2000, PMin: 1e-2, PMax: 1e7, Zero: []string{"b2"}}
	s := &Summary{}
	s.checkCoverage(&Coverage{Bins: 5, NoLines: []string{"b1"}, Tables: []TableCoverage{good}, PMin: 0.1, PMax: 1e6, TMin: 400, TMax: 900})
	if len(s.Checks) != 0 || s.Coverage == nil || len(s.Coverage.Tables[0].Zero) != 1 {
		t.Errorf("covered: %v", s.Checks)
	}
	// A bin without line opacity in 5 fires when the model does not fit.
	s = &Summary{GoodnessOfFit: &GoodnessOfFit{Fits: false}}
	s.checkCoverage(&Coverage{Bins: 5, NoLines: []string{"b1"}, Tables: []TableCoverage{good}, PMin: 0.1, PMax: 1e6, TMin: 400, TMax: 900})
	if len(s.Checks) != 1 || !strings.Contains(s.Checks[0].Message, "(the model does not fit the data, and this may be why): b1") {
		t.Errorf("misfit with a bin without lines: %v", s.Checks)
	}
	bad := good
	bad.Table, bad.Gas, bad.Missing, bad.Zero, bad.TMax, bad.PMax = "CO2 cross-sections", "CO2", []string{"b3"}, []string{"b1", "b2", "b3"}, 800, 1e5
	s = &Summary{}
	s.checkCoverage(&Coverage{Bins: 3, Tables: []TableCoverage{good, bad}, NoLines: []string{"b3"}, PMin: 0.1, PMax: 1e6, TMin: 400, TMax: 900})
	want := []string{
		"no gas of the model has any line opacity in 1 of 3 data bin(s) (more than 0.25 of the data): b3",
		"the CO2 cross-sections table does not reach 1 data bin(s): b3",
		"the CO2 cross-sections table is zero in every data bin",
		"the fit's temperatures (central 95% of the layers: 400-900 K) reach outside the CO2 cross-sections table's 200-800 K",
		"the model atmosphere (1e-06-10 bar) reaches outside the CO2 cross-sections table's pressures 1e-07-1 bar",
	}
	if len(s.Checks) != len(want) {
		t.Fatalf("%d checks, want %d: %v", len(s.Checks), len(want), s.Checks)
	}
	for i, w := range want {
		if s.Checks[i].Kind != CheckCoverage || !strings.HasPrefix(s.Checks[i].Message, w) {
			t.Errorf("check %d: %q, want %q", i, s.Checks[i].Message, w)
		}
	}
}
