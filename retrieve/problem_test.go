package retrieve

import (
	"context"
	"errors"
	"math"
	"math/rand/v2"
	"path/filepath"
	"strings"
	"sync"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/stat/distuv"

	"chord/config"
	"chord/forward"
	"chord/forward/opacity"
	"chord/priors"
	"chord/sampler"
)

// likelihoodX is a valid point of testdata/cfg/likelihood.toml, in
// parameter order: T, radius, log10 H2O, log10 CO2, log10 cloud top,
// cloud fraction, log10 haze, haze slope, mass (Earth), offset, inflation.
var likelihoodX = []float64{1000, 1.1, -3, -4, -2, 0.6, 1, -4, 222, 0, 0}

func loadProblem(t *testing.T, name string) (*config.Resolved, *Problem) {
	t.Helper()
	r, err := config.Load(filepath.Join("..", "testdata", "cfg", name))
	if err != nil {
		t.Fatal(err)
	}
	p, err := NewProblem(r, nil)
	if err != nil {
		t.Fatal(err)
	}
	return r, p
}

// TestBadConfigsProblem: configurations whose errors are found only once
// the model and opacities are known (config's TestBadConfigs checks that
// they resolve) are errors naming the key or the observation file and line.
func TestBadConfigsProblem(t *testing.T) {
	// A key at fault, or the observation file's error.
	r, err := config.Load(filepath.Join("..", "testdata", "bad", "cfg-no-opacity-gas.toml"))
	if err != nil {
		t.Fatal(err)
	}
	_, err = NewProblem(r, &opacity.Set{})
	if ke := (*config.KeyError)(nil); !errors.As(err, &ke) || ke.Key != "parameters[2].gas" {
		t.Errorf("gas without opacity: %v, want a KeyError of parameters[2].gas", err)
	}
	r, err = config.Load(filepath.Join("..", "testdata", "bad", "cfg-bins-outside.toml"))
	if err != nil {
		t.Fatal(err)
	}
	_, err = NewProblem(r, &opacity.Set{})
	if err == nil || !strings.Contains(err.Error(), "/testdata/obs/wide.csv:20: bin 4.4-4.6 um ends above the model wavelength range 0.9-4.5 um") {
		t.Errorf("bin outside the model grid: %v, want the observation file and line", err)
	}
}

// TestLogLikelihoodClosedForm: with the data equal to the model the
// Gaussian log-likelihood is -N/2 ln(2 pi) - sum ln sigma_i (closed form of
// the normal density at its mean); with unit errors, -N/2 ln(2 pi).
// Tolerance 1e-12 relative: a sum of 20 float64 logarithms.
func TestLogLikelihoodClosedForm(t *testing.T) {
	r, p := loadProblem(t, "likelihood.toml")
	model := make([]float64, p.Model().OutputLen())
	if err := p.NewPosteriorEvaluator().Spectrum(model, likelihoodX); err != nil {
		t.Fatal(err)
	}
	d := r.Datasets[0]
	n := float64(d.Len())
	for _, unit := range []bool{true, false} {
		sumLn := 0.0
		for i := range d.Depth {
			d.Depth[i] = model[i]
			d.Sigma[i] = 1
			if !unit {
				d.Sigma[i] = 1e-5 * float64(i+1)
			}
			sumLn += math.Log(d.Sigma[i])
		}
		p2, err := NewProblem(r, nil)
		if err != nil {
			t.Fatal(err)
		}
		extra := make([]float64, p2.NumExtra())
		lp := p2.NewPosteriorEvaluator().LogProb(likelihoodX, extra)
		want := -n/2*math.Log(2*math.Pi) - sumLn
		if !scalar.EqualWithinAbsOrRel(extra[0], want, 0, 1e-12) {
			t.Errorf("unit errors %v: log-likelihood %.15g, want %.15g", unit, extra[0], want)
		}
		if extra[3] != 0 {
			t.Errorf("chi2 %g, want 0", extra[3])
		}
		prior := 0.0
		for i, pr := range p2.Priors() {
			prior += pr.LogProb(likelihoodX[i])
		}
		if !scalar.EqualWithinAbsOrRel(lp, want+prior, 0, 1e-12) {
			t.Errorf("log posterior %g, want log-likelihood + log prior %g", lp, want+prior)
		}
	}
}

// TestLogLikelihoodInflationOffset: with a depth offset o and error
// inflation s the log-likelihood is the sum of normal log densities
// N(d_i | m_i + o, sqrt(sigma_i^2 + s^2)), evaluated here with gonum
// v0.17.0 stat/distuv.Normal (reference library). Tolerance 1e-12 relative.
func TestLogLikelihoodInflationOffset(t *testing.T) {
	r, p := loadProblem(t, "likelihood.toml")
	x := append([]float64(nil), likelihoodX...)
	model := make([]float64, p.Model().OutputLen())
	if err := p.NewPosteriorEvaluator().Spectrum(model, x); err != nil {
		t.Fatal(err)
	}
	const off, s = 150.0, 60.0 // ppm
	x[9], x[10] = off, s
	d := r.Datasets[0]
	want := 0.0
	for i := range d.Depth {
		nd := distuv.Normal{Mu: model[i] + off*1e-6, Sigma: math.Hypot(d.Sigma[i], s*1e-6)}
		want += nd.LogProb(d.Depth[i])
	}
	extra := make([]float64, p.NumExtra())
	p.NewPosteriorEvaluator().LogProb(x, extra)
	if !scalar.EqualWithinAbsOrRel(extra[0], want, 0, 1e-12) {
		t.Errorf("log-likelihood %.15g, gonum normal densities give %.15g", extra[0], want)
	}
}

// TestStateMapping: each parameter reaches the forward state in its unit,
// log10 quantities exponentiated (unit conversions: IAU 2015 nominal radii
// and masses as in package forward; 1 bar = 1e5 Pa).
func TestStateMapping(t *testing.T) {
	_, p := loadProblem(t, "likelihood.toml")
	e := p.NewPosteriorEvaluator()
	extra := make([]float64, p.NumExtra())
	x := append([]float64(nil), likelihoodX...)
	x[9], x[10] = 25, 30
	if lp := e.LogProb(x, extra); math.IsInf(lp, -1) {
		t.Fatal("valid point rejected")
	}
	s := &e.state
	gas := p.Model().Gases()
	vmr := map[string]float64{}
	for i, g := range gas {
		vmr[g] = s.VMR[i]
	}
	checks := []struct {
		what      string
		got, want float64
	}{
		{"temperature", e.iso.T, 1000},
		{"radius", s.RefRadius, 1.1 * forward.JupiterRadius},
		{"H2O", vmr["H2O"], 1e-3},
		{"CO2", vmr["CO2"], 1e-4},
		{"cloud top", s.CloudTop, 1e-2 * 1e5},
		{"cloud fraction", s.CloudFraction, 0.6},
		{"haze factor", s.HazeFactor, 10},
		{"haze slope", s.HazeSlope, -4},
		{"mass", s.Mass, 222 * forward.EarthMass},
		{"offset", e.off[0], 25e-6},
		{"inflation", e.s2[0], 30e-6 * 30e-6},
		{"fill", extra[2], 1 - 1e-3 - 1e-4},
	}
	for _, c := range checks {
		if !scalar.EqualWithinAbsOrRel(c.got, c.want, 0, 1e-13) {
			t.Errorf("%s = %.15g, want %.15g", c.what, c.got, c.want)
		}
	}
	// Mean molecular weight of H2+He (He/H2 = 0.17) with 1e-3 H2O and
	// 1e-4 CO2: masses 2.016, 4.0026, 18.015, 44.009 u (handbook values,
	// from memory); tolerance 1e-3 relative covers the rounding of these
	// masses.
	fill := 1 - 1.1e-3
	mu := fill*(2.016+0.17*4.0026)/1.17 + 1e-3*18.015 + 1e-4*44.009
	if !scalar.EqualWithinAbsOrRel(extra[1], mu, 0, 1e-3) {
		t.Errorf("mean molecular weight %g, want %g", extra[1], mu)
	}
}

// TestRejections: invalid states give -Inf with NaN extras, and the reason
// is counted.
func TestRejections(t *testing.T) {
	_, p := loadProblem(t, "likelihood.toml")
	e := p.NewPosteriorEvaluator()
	extra := make([]float64, p.NumExtra())
	set := func(i int, v float64) []float64 {
		x := append([]float64(nil), likelihoodX...)
		x[i] = v
		return x
	}
	both := append([]float64(nil), likelihoodX...)
	both[2], both[3] = -0.1, -0.2 // 0.79 + 0.63 > 1
	cases := []struct {
		x      []float64
		reason string
	}{
		{set(0, 100), reasonNames[ReasonPrior]},
		{both, reasonNames[ReasonMixingRatio]},
		{set(4, 2.5), reasonNames[ReasonCloudBelow]}, // 316 bar, below the 100 bar bottom
		// 20000 K on a 2 Earth-mass planet of 1.1 Jupiter radii: unbound.
		{func() []float64 { x := set(0, 20000); x[8] = 2; return x }(), reasonNames[ReasonUnbound]},
	}
	for i, c := range cases {
		if lp := e.LogProb(c.x, extra); !math.IsInf(lp, -1) {
			t.Errorf("case %d: log posterior %g, want -Inf", i, lp)
		}
		for _, v := range extra {
			if !math.IsNaN(v) {
				t.Errorf("case %d: extras %v, want NaN", i, extra)
				break
			}
		}
	}
	got := map[string]int64{}
	for _, r := range p.Rejections() {
		got[r.Reason] = r.Count
	}
	for _, c := range cases {
		if got[c.reason] != 1 {
			t.Errorf("reason %q counted %d times, want 1 (all: %v)", c.reason, got[c.reason], p.Rejections())
		}
	}
	if n := p.Evaluations(); n != int64(len(cases)) {
		t.Errorf("%d evaluations counted, want %d", n, len(cases))
	}
}

// TestLogProbAllocs: no allocation per call, accepted or rejected
// (DESIGN.md section 7).
func TestLogProbAllocs(t *testing.T) {
	_, p := loadProblem(t, "likelihood.toml")
	e := p.NewPosteriorEvaluator()
	extra := make([]float64, p.NumExtra())
	bad := append([]float64(nil), likelihoodX...)
	bad[4] = 2.5
	for _, x := range [][]float64{likelihoodX, bad} {
		if a := testing.AllocsPerRun(20, func() { e.LogProb(x, extra) }); a != 0 {
			t.Errorf("%g allocations per LogProb, want 0", a)
		}
	}
}

// TestDrawPrior: initial draws are finite-posterior points within the
// priors' supports, reproducible from the seed, and not counted as
// rejections.
func TestDrawPrior(t *testing.T) {
	_, p := loadProblem(t, "likelihood.toml")
	draw := func() [][]float64 {
		rng := rand.New(rand.NewPCG(5, 6))
		var out [][]float64
		for range 20 {
			x := make([]float64, p.Dim())
			if err := p.DrawPrior(x, rng); err != nil {
				t.Fatal(err)
			}
			out = append(out, x)
		}
		return out
	}
	a, b := draw(), draw()
	e := p.NewPosteriorEvaluator()
	extra := make([]float64, p.NumExtra())
	for k := range a {
		for i, v := range a[k] {
			if v != b[k][i] {
				t.Fatalf("draw %d not reproducible", k)
			}
			if lo, hi := p.Priors()[i].Quantile(0), p.Priors()[i].Quantile(1); v < lo || v > hi {
				t.Errorf("draw %d: %s = %g outside the prior", k, p.ParamNames()[i], v)
			}
		}
		if lp := e.LogProb(a[k], extra); math.IsInf(lp, -1) {
			t.Errorf("draw %d has -Inf posterior", k)
		}
	}
	if n := p.Evaluations(); n != int64(len(a)) {
		t.Errorf("initial draws were counted: %d evaluations", n)
	}
}

// TestConcurrentEvaluators: evaluators on several goroutines give the same
// values as one evaluator alone (run with -race).
func TestConcurrentEvaluators(t *testing.T) {
	_, p := loadProblem(t, "likelihood.toml")
	rng := rand.New(rand.NewPCG(1, 2))
	const n = 24
	xs := make([][]float64, n)
	want := make([]float64, n)
	e := p.NewPosteriorEvaluator()
	extra := make([]float64, p.NumExtra())
	for k := range xs {
		xs[k] = make([]float64, p.Dim())
		if err := p.DrawPrior(xs[k], rng); err != nil {
			t.Fatal(err)
		}
		want[k] = e.LogProb(xs[k], extra)
	}
	var wg sync.WaitGroup
	got := make([]float64, n)
	for w := range 3 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			ev := p.NewEvaluator()
			ex := make([]float64, p.NumExtra())
			for k := w; k < n; k += 3 {
				got[k] = ev.LogProb(xs[k], ex)
			}
		}()
	}
	wg.Wait()
	for k := range want {
		if got[k] != want[k] {
			t.Errorf("point %d: %g concurrently, %g alone", k, got[k], want[k])
		}
	}
}

// TestExampleRetrieval loads testdata/retrieval-example.toml of the
// repository (the invented Quillon b, two data sets, demo opacities),
// checks the posterior at the truth its observations were simulated from
// (testdata/gen-retrieval-example) and takes a few ensemble steps from
// prior draws. At the truth the chi-square of N bins with correct errors
// is N ± sqrt(2N) (chi-square distribution, fact of statistics); 5 sqrt(2N)
// allows for the one noise draw. The demo tables are built on first use
// and cached (retrieve.DemoCacheDir).
func TestExampleRetrieval(t *testing.T) {
	if testing.Short() {
		t.Skip("builds or loads the demo opacities")
	}
	r, p := demoProblem(t, "../testdata/retrieval-example.toml")
	// The truth of testdata/gen-retrieval-example/main.go.
	truth := []float64{-3, -5, math.Log10(5e-4), -6, 1300, 1.05, -2, 0.6, math.Log10(5), 120, 0}
	chi2, n := chi2At(t, p, truth)
	t.Logf("chi2 at the truth %.1f for %g bins", chi2, n)
	if math.Abs(chi2-n) > 5*math.Sqrt(2*n) {
		t.Errorf("chi2 at the truth %g for %g bins", chi2, n)
	}
	st, err := sampler.InitPrior(context.Background(), p, p.DrawPrior, sampler.InitSettings{Walkers: r.Walkers, Seed: r.Seed})
	if err != nil {
		t.Fatal(err)
	}
	if _, _, err := sampler.Run(context.Background(), p, st, sampler.Settings{MaxSteps: 3}, nil); err != nil {
		t.Fatal(err)
	}
}

// TestCLRRetrieval: with [composition] prior = "clr" the last free
// parameters are centred-log-ratio coordinates (Benneke & Seager 2012,
// ApJ 753, 100); the mixing ratios they map to, the fill gas included,
// are the composition whose coordinates they are (clr definition), and
// prior draws are valid compositions.
func TestCLRRetrieval(t *testing.T) {
	r, p := loadProblem(t, "clr.toml")
	names := p.ParamNames()
	if len(names) != 4 || names[2] != "clr_CO2" || names[3] != "clr_H2O" || r.CLR == nil || len(r.CLR.Gases) != 3 || r.CLR.Gases[2] != "N2" {
		t.Fatalf("parameters %v, clr prior %+v", names, r.CLR)
	}
	comp := []float64{0.3, 0.1, 0.6} // CO2, H2O, N2 (the fill)
	xi := make([]float64, 2)
	priors.CLRCoords(xi, comp)
	x := []float64{500, 1.5, xi[0], xi[1]}
	e := p.NewPosteriorEvaluator()
	extra := make([]float64, p.NumExtra())
	if lp := e.LogProb(x, extra); math.IsInf(lp, -1) {
		t.Fatalf("valid composition rejected: %v", p.Rejections())
	}
	vmr := map[string]float64{}
	for i, g := range p.Model().Gases() {
		vmr[g] = e.state.VMR[i]
	}
	if !scalar.EqualWithinAbsOrRel(vmr["CO2"], 0.3, 0, 1e-14) || !scalar.EqualWithinAbsOrRel(vmr["H2O"], 0.1, 0, 1e-14) ||
		!scalar.EqualWithinAbsOrRel(extra[2], 0.6, 0, 1e-14) {
		t.Errorf("mixing ratios %v, fill %g; want CO2 0.3, H2O 0.1, N2 0.6", vmr, extra[2])
	}
	// Mean molecular weight 0.3 44.009 + 0.1 18.015 + 0.6 28.014 u
	// (handbook masses, from memory; 1e-3 relative).
	if mu := 0.3*44.009 + 0.1*18.015 + 0.6*28.014; !scalar.EqualWithinAbsOrRel(extra[1], mu, 0, 1e-3) {
		t.Errorf("mean molecular weight %g, want %g", extra[1], mu)
	}
	// A composition with a gas below min_vmr is outside the prior.
	priors.CLRCoords(xi, []float64{1e-11, 0.5, 0.5 - 1e-11})
	if lp := e.LogProb([]float64{500, 1.5, xi[0], xi[1]}, extra); !math.IsInf(lp, -1) {
		t.Errorf("composition with 1e-11 CO2 (min_vmr 1e-10) has log posterior %g", lp)
	}
	rng := rand.New(rand.NewPCG(9, 9))
	d := make([]float64, p.Dim())
	var lp0 float64
	for k := range 50 {
		if err := p.DrawPrior(d, rng); err != nil {
			t.Fatal(err)
		}
		lp := 0.0
		for i := range 2 {
			lp += p.Priors()[i].LogProb(d[i])
		}
		full := e.LogProb(d, extra)
		if math.IsInf(full, -1) {
			t.Fatalf("draw %d rejected", k)
		}
		// The clr prior is flat: log prior minus the 1-D priors is constant.
		if k == 0 {
			lp0 = full - extra[0] - lp
		} else if c := full - extra[0] - lp; !scalar.EqualWithinAbsOrRel(c, lp0, 1e-12, 1e-12) {
			t.Errorf("draw %d: clr log prior %g, first draw %g", k, c, lp0)
		}
	}
}

// TestFixedParameter: a fixed parameter sets its quantity on every call
// without being sampled (good.toml holds the mass at 0.7 Jupiter masses).
func TestFixedParameter(t *testing.T) {
	_, p := loadProblem(t, "good.toml")
	if p.Dim() != 4 {
		t.Fatalf("dim %d, want 4 (the fixed mass is not sampled)", p.Dim())
	}
	e := p.NewPosteriorEvaluator()
	extra := make([]float64, p.NumExtra())
	if lp := e.LogProb([]float64{1000, 1.1, -2, 10}, extra); math.IsInf(lp, -1) {
		t.Fatalf("rejected: %v", p.Rejections())
	}
	if e.state.Mass != 0.7*forward.JupiterMass {
		t.Errorf("mass %g, want %g", e.state.Mass, 0.7*forward.JupiterMass)
	}
}
