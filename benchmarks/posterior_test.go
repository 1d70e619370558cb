package benchmarks

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"syscall"
	"testing"
	"time"
	"unsafe"

	"chord/config"
	"chord/forward"
	"chord/forward/opacity"
	"chord/retrieve"
)

// w1Problem builds the posterior of workload W1 (DESIGN.md section 7):
// the model of w1 (100 layers, 3000 points 0.6-12 um, the six table
// gases, H2-H2 and H2-He CIA, H2 Rayleigh, grey cloud) observed in the 150
// bins of w1, with nine free parameters (six log10 mixing ratios, T_irr,
// radius, log10 cloud top). The data are the model at x plus nothing: the
// benchmark measures cost, not fit.
func w1Problem(tb testing.TB) (*retrieve.Problem, []float64) {
	rng := rand.New(rand.NewPCG(1, 2))
	set := &opacity.Set{XSec: map[string]*opacity.XSecTable{}}
	for _, g := range w1Gases {
		set.XSec[g.name] = w1Table(g.name, rng)
	}
	set.CIA = []*opacity.CIATable{w1CIA("H2", "H2", rng), w1CIA("H2", "He", rng)}

	edges, err := forward.WavelengthGridN(0.61e-6, 11.9e-6, 151)
	if err != nil {
		tb.Fatal(err)
	}
	var obs strings.Builder
	obs.WriteString("edge_low_um,edge_high_um,depth_ppm,error_ppm\n")
	for i := range 150 {
		fmt.Fprintf(&obs, "%.9g,%.9g,%g,%g\n", edges[i]/forward.Micron, edges[i+1]/forward.Micron, 15000+float64(i), 30.0)
	}
	dir := tb.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "w1.csv"), []byte(obs.String()), 0o644); err != nil {
		tb.Fatal(err)
	}

	var cfg strings.Builder
	// R chosen so that the grid has 3000 points, as in W1.
	fmt.Fprintf(&cfg, `
[star]
radius_rsun = 0.9
[planet]
radius_rjup = 1.2
mass_mjup = 0.8
[atmosphere]
layers = 100
[atmosphere.temperature]
profile = "guillot"
t_int_k = 200
t_irr_k = 1500
[clouds]
cloud_top_bar = %g
[opacity]
rayleigh = ["H2"]
[spectrum]
wavelength_min_um = 0.6
wavelength_max_um = 12
resolving_power = %.17g
[[observations]]
file = "w1.csv"
[[parameters]]
sets = "t_irr_k"
prior = "uniform"
low = 500
high = 2500
[[parameters]]
sets = "radius_rjup"
prior = "uniform"
low = 0.8
high = 1.6
[[parameters]]
sets = "log10_cloud_top_bar"
prior = "uniform"
low = -6
high = 2
[sampler]
seed = 1
steps = 10
`, w1Cloud, 2999/math.Log(20))
	x := []float64{1500, 1.2, math.Log10(w1Cloud)}
	for _, g := range w1Gases {
		fmt.Fprintf(&cfg, "[[parameters]]\nsets = \"log10_vmr\"\ngas = %q\nprior = \"uniform\"\nlow = -12\nhigh = -1\n", g.name)
		x = append(x, math.Log10(g.vmr))
	}
	c, err := config.Decode(cfg.String(), "w1.toml", dir)
	if err != nil {
		tb.Fatal(err)
	}
	r, err := c.Resolve()
	if err != nil {
		tb.Fatal(err)
	}
	p, err := retrieve.NewProblem(r, set)
	if err != nil {
		tb.Fatal(err)
	}
	if n := len(p.Model().Wavelength()); n != 3000 || p.Model().OutputLen() != 150 || p.Model().Layers() != 100 {
		tb.Fatalf("W1 posterior has %d points, %d bins, %d layers", n, p.Model().OutputLen(), p.Model().Layers())
	}
	return p, x
}

var sinkLP float64

// BenchmarkLogPosteriorW1 is one log-posterior evaluation of W1 with 150
// data bins; the target is within 10 percent of BenchmarkTransitW1 and 0
// allocs/op.
func BenchmarkLogPosteriorW1(b *testing.B) {
	p, x := w1Problem(b)
	e := p.NewEvaluator()
	extra := make([]float64, p.NumExtra())
	if lp := e.LogProb(x, extra); math.IsInf(lp, -1) || math.IsNaN(lp) {
		b.Fatalf("W1 point rejected: %v", p.Rejections())
	}
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	b.ReportAllocs()
	b.ResetTimer()
	c0, n := posteriorThreadCPU(), 0
	for b.Loop() {
		sinkLP = e.LogProb(x, extra)
		n++
	}
	// CPU time of this thread per call: on a shared machine it is steadier
	// than wall time.
	b.ReportMetric(float64(posteriorThreadCPU()-c0)/float64(n), "cpu-ns/op")
}

// posteriorThreadCPU returns the CPU time used by the calling thread,
// clock_gettime(CLOCK_THREAD_CPUTIME_ID) on Linux (nanosecond accounting,
// unlike getrusage's tick sampling); 0 where it is unavailable.
func posteriorThreadCPU() time.Duration {
	const clockThreadCPUTime = 3
	var ts syscall.Timespec
	if _, _, errno := syscall.Syscall(syscall.SYS_CLOCK_GETTIME, clockThreadCPUTime, uintptr(unsafe.Pointer(&ts)), 0); errno != 0 {
		return 0
	}
	return time.Duration(ts.Nano())
}

// TestLogPosteriorW1Allocs checks the posterior's hot path allocates
// nothing (DESIGN.md section 7).
func TestLogPosteriorW1Allocs(t *testing.T) {
	p, x := w1Problem(t)
	e := p.NewEvaluator()
	extra := make([]float64, p.NumExtra())
	if a := testing.AllocsPerRun(10, func() { sinkLP = e.LogProb(x, extra) }); a != 0 {
		t.Errorf("%g allocations per LogProb, want 0", a)
	}
}

// BenchmarkLogPosteriorW1Overhead alternates one forward-model call
// (Model.Transit on the posterior's own model, at the same state) with one
// log-posterior evaluation and reports the ratio of their thread CPU
// times: on a shared machine the pairing cancels most of the load's
// effect, which wall times of separate benchmarks do not.
func BenchmarkLogPosteriorW1Overhead(b *testing.B) {
	p, x := w1Problem(b)
	m := p.Model()
	s := m.DefaultState()
	for i, g := range m.Gases() {
		for _, w := range w1Gases {
			if w.name == g {
				s.VMR[i] = w.vmr
			}
		}
	}
	s.Profile = &forward.Guillot{TInt: 200, TIrr: 1500, KappaIR: 0.01, Gamma: 0.4, F: 0.25}
	s.RefRadius, s.Mass, s.StarRadius = 1.2*forward.JupiterRadius, 0.8*forward.JupiterMass, 0.9*forward.SolarRadius
	s.CloudTop = w1Cloud * forward.Bar
	w := m.NewWorkspace()
	dst := make([]float64, m.OutputLen())
	e := p.NewEvaluator()
	extra := make([]float64, p.NumExtra())
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	b.ReportAllocs()
	b.ResetTimer()
	var tTransit, tPost time.Duration
	for b.Loop() {
		c0 := posteriorThreadCPU()
		if err := m.Transit(dst, &s, w); err != nil {
			b.Fatal(err)
		}
		c1 := posteriorThreadCPU()
		sinkLP = e.LogProb(x, extra)
		c2 := posteriorThreadCPU()
		tTransit += c1 - c0
		tPost += c2 - c1
	}
	b.ReportMetric(float64(tPost)/float64(tTransit), "logpost/transit")
}
