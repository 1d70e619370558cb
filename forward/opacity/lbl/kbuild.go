package lbl

import (
	"encoding/json"
	"fmt"
	"math"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"sync"

	"chord/forward/opacity"
)

// KSettings controls BuildK. Zero values of optional fields pick the stated
// defaults.
type KSettings struct {
	Gas    string    // gas name of the table (required)
	Log10P []float64 // grid: log10 of pressure in Pa, strictly ascending (required)
	T      []float64 // grid: temperature in K, strictly ascending, positive (required)
	// Lo and Hi are the bins (m): ascending, not overlapping (required).
	Lo, Hi []float64
	// Quadrature is the g rule; zero means opacity.DefaultQuadrature().
	Quadrature opacity.Quadrature
	// Resolution is the resolving power nu/dnu of the fine grid the
	// cross-sections are computed on; 0 means FineResolution at the lowest
	// table temperature for the heaviest isotopologue (spacing at most a
	// third of the narrowest Doppler half-width). A coarser grid is
	// allowed and recorded with a warning.
	Resolution float64
	Lines      LineSettings

	// Workers is the number of goroutines, each building one (P, T) point
	// at a time; 0 means GOMAXPROCS. The table does not depend on it.
	Workers int
	// Progress, when not nil, is called after each (P, T) point with the
	// number done and the total, from one goroutine at a time.
	Progress func(done, total int)
	// Version and Sources go into Meta as in XSecSettings.
	Version, Sources string
}

// maxChunk is the most fine-grid points held per worker: bins are handled
// in chunks of consecutive bins up to this many points (8 MiB of float64),
// so memory does not grow with the spectral range or the line list.
const maxChunk = 1 << 20

// BuildK computes the k-table of a gas from its lines: at every (P, T)
// point of the grid, the cross-sections on a fine grid uniform in ln(nu)
// (LineSet.CrossSections) are sorted within each bin, weighted by their
// share of the bin in wavelength, and sampled at the quadrature nodes
// (opacity.KDistribution). The fine cross-sections of one point are held a chunk
// of bins at a time; points are spread over Workers goroutines.
func BuildK(lines []Line, iso IsoData, s *KSettings) (*opacity.KTable, error) {
	if s == nil {
		return nil, fmt.Errorf("opacity: BuildK: no settings")
	}
	ls, err := NewLineSet(s.Gas, lines, iso, s.Lines)
	if err != nil {
		return nil, err
	}
	b, err := newKBuild(ls, s)
	if err != nil {
		return nil, err
	}
	b.run()
	return b.table, nil
}

type kBuild struct {
	s       *KSettings
	ls      *LineSet
	q       opacity.Quadrature
	grids   []opacity.LnGrid // fine grid per temperature of the table
	chunks  [][][2]int       // per temperature: bin ranges [b0, b1)
	table   *opacity.KTable
	workers int
}

func newKBuild(ls *LineSet, s *KSettings) (*kBuild, error) {
	fail := func(format string, a ...any) (*kBuild, error) {
		return nil, fmt.Errorf("opacity: BuildK %s: %s", s.Gas, fmt.Sprintf(format, a...))
	}
	for _, ax := range []struct {
		x    []float64
		name string
	}{{s.Log10P, "log10 pressure"}, {s.T, "temperature"}} {
		if err := opacity.CheckAxis(ax.x, ax.name); err != nil {
			return fail("grid: %v", err)
		}
	}
	if !(s.T[0] > 0) {
		return fail("grid temperature %g K must be positive", s.T[0])
	}
	for _, t := range []float64{s.T[0], s.T[len(s.T)-1]} {
		if err := ls.CheckTemperature(t); err != nil {
			return nil, err
		}
	}
	if len(s.Lo) == 0 || len(s.Lo) != len(s.Hi) {
		return fail("%d bin lower edges and %d upper edges; need the same number, at least one", len(s.Lo), len(s.Hi))
	}
	for i := range s.Lo {
		if !(s.Lo[i] > 0) || !(s.Hi[i] > s.Lo[i]) || math.IsInf(s.Hi[i], 0) || (i > 0 && s.Lo[i] < s.Hi[i-1]) {
			return fail("bin %d (%g-%g um): bins need 0 < low < high, ascending and not overlapping", i+1, s.Lo[i]*1e6, s.Hi[i]*1e6)
		}
	}
	if s.Workers < 0 {
		return fail("%d workers", s.Workers)
	}
	b := &kBuild{s: s, ls: ls, q: s.Quadrature, workers: s.Workers}
	if b.q.G == nil {
		b.q = opacity.DefaultQuadrature()
	} else if err := b.q.Validate(); err != nil {
		return fail("%v", err)
	}
	if b.workers == 0 {
		b.workers = runtime.GOMAXPROCS(0)
	}
	var warnings []string
	warnings = append(warnings, ls.Warnings...)
	for _, li := range ls.isos {
		if w := partitionWarning(li.name, li.key, li.src, s.T[len(s.T)-1]); w != "" {
			warnings = append(warnings, w)
		}
	}
	if w := fallbackNote(ls.Fallbacks, ls.Lines()); w != "" {
		warnings = append(warnings, w)
	}
	if r := s.Resolution; r != 0 && (!(r > 0) || math.IsInf(r, 0)) {
		return fail("fine-grid resolving power %g, must be positive", r)
	}
	if rule := FineResolution(s.T[0], ls.MaxMass()); s.Resolution > 0 && s.Resolution < rule {
		warnings = append(warnings, fmt.Sprintf("fine grid at resolving power %.4g is coarser than a third of the Doppler half-width at %g K (resolving power %.4g): lines at low pressure are sampled, not resolved", s.Resolution, s.T[0], rule))
	}
	// One fine grid per temperature: by default each just fine enough for
	// the Doppler width at its own temperature.
	nuMax := 1 / s.Lo[0] / 100 // cm^-1
	for _, t := range s.T {
		r := s.Resolution
		if r == 0 {
			r = FineResolution(t, ls.MaxMass())
		}
		g := opacity.LnGrid{Nu0: 1 / s.Hi[len(s.Hi)-1] / 100, R: r}
		if n := g.Index(nuMax); n > 1e10 {
			return fail("fine grid of %.3g points at resolving power %.4g: too many", n, r)
		}
		b.grids = append(b.grids, g)
		// Chunks of consecutive bins of at most maxChunk fine points (a
		// bin wider than that is a chunk of its own, computed in parts).
		var ch [][2]int
		for b0 := 0; b0 < len(s.Lo); {
			b1 := b0 + 1
			for b1 < len(s.Lo) && b.span(g, b0, b1+1) <= maxChunk {
				b1++
			}
			ch = append(ch, [2]int{b0, b1})
			b0 = b1
		}
		b.chunks = append(b.chunks, ch)
	}
	ng := len(b.q.G)
	b.table = &opacity.KTable{
		Gas: s.Gas, Log10P: slices.Clone(s.Log10P), T: slices.Clone(s.T),
		Lo: slices.Clone(s.Lo), Hi: slices.Clone(s.Hi), G: slices.Clone(b.q.G), W: slices.Clone(b.q.W),
		K:    make([]float32, len(s.Log10P)*len(s.T)*len(s.Lo)*ng),
		Meta: b.meta(warnings),
	}
	return b, nil
}

// pointRange returns the fine points [k0, k1) whose cells meet bins
// [b0, b1): the cell of point k spans half a step either side in ln(nu).
func (b *kBuild) pointRange(g opacity.LnGrid, b0, b1 int) (k0, k1 int) {
	s := b.s
	nuLo, nuHi := 1/s.Hi[b1-1]/100, 1/s.Lo[b0]/100
	k0 = int(math.Floor(g.Index(nuLo) - 0.5))
	k1 = int(math.Ceil(g.Index(nuHi)+0.5)) + 1
	return k0, k1
}

func (b *kBuild) span(g opacity.LnGrid, b0, b1 int) int {
	k0, k1 := b.pointRange(g, b0, b1)
	return k1 - k0
}

// meta records the build settings.
func (b *kBuild) meta(warnings []string) map[string]string {
	s := b.s
	bs := map[string]any{
		"method":                    "k-distribution from line-by-line cross-sections",
		"profile":                   "Voigt; Faddeeva function by Humlicek (1982, JQSRT 27, 437), w4; cores on the fine grid, wings on every 32nd point with cubic interpolation",
		"intensity":                 "HITRAN temperature scaling (Rothman et al. 1998, JQSRT 60, 665); c2 = hc/k, CODATA 2018",
		"quadrature":                b.q.String(),
		"bin_weighting":             "box-car in wavelength",
		"fine_grid":                 fineGridNote(s.Resolution),
		"lines":                     b.ls.Lines(),
		"wing_cutoff_cm-1":          b.ls.Cutoff(),
		"min_intensity":             s.Lines.MinIntensity,
		"self_fraction":             s.Lines.SelfFraction,
		"broadener":                 cmpOr(s.Lines.Broadening.Name, "air"),
		"broadener_scale":           b.ls.scale,
		"broadening_mixture":        s.Lines.Mixture.String(),
		"broadening_fallback_lines": b.ls.Fallbacks,
		"pressure_shift":            !s.Lines.NoPressureShift,
	}
	if s.Lines.Broadening.N > 0 {
		bs["broadener_temperature_exponent"] = strconv.FormatFloat(s.Lines.Broadening.N, 'g', -1, 64)
	}
	part := map[string]string{}
	for _, li := range b.ls.isos {
		part[fmt.Sprintf("%d/%d", li.key.Mol, li.key.Iso)] = li.src
	}
	bs["partition_functions"] = part
	js, err := json.Marshal(bs)
	if err != nil {
		panic(err) // plain values
	}
	m := map[string]string{opacity.MetaBuildSettings: string(js)}
	if len(warnings) > 0 {
		m[MetaWarnings] = strings.Join(warnings, "\n")
	}
	if s.Version != "" {
		m[opacity.MetaProgramVersion] = s.Version
	}
	if s.Sources != "" {
		m[opacity.MetaSources] = s.Sources
	}
	return m
}

// run builds every (P, T) point on the workers.
func (b *kBuild) run() {
	s := b.s
	type task struct{ ip, it int }
	tasks := make(chan task)
	done := make(chan struct{})
	var wg sync.WaitGroup
	total := len(s.Log10P) * len(s.T)
	for range min(b.workers, total) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			var pw pointWork
			for t := range tasks {
				b.point(t.ip, t.it, &pw)
				done <- struct{}{}
			}
		}()
	}
	go func() {
		for ip := range s.Log10P {
			for it := range s.T {
				tasks <- task{ip, it}
			}
		}
		close(tasks)
	}()
	for i := range total {
		<-done
		if s.Progress != nil {
			s.Progress(i+1, total)
		}
	}
	wg.Wait()
}

// pointWork is one worker's scratch memory.
type pointWork struct {
	lw      lineWork
	sigma   []float64
	samples []opacity.Sample
	k       []float64
}

// point fills the table row of grid point (ip, it).
func (b *kBuild) point(ip, it int, pw *pointWork) {
	s := b.s
	p, t := math.Pow(10, s.Log10P[ip]), s.T[it]
	row := b.table.Row(ip, it)
	ng := len(b.q.G)
	pw.k = grow(pw.k, ng)
	g := b.grids[it]
	for _, ch := range b.chunks[it] {
		k0, k1 := b.pointRange(g, ch[0], ch[1])
		pw.sigma = grow(pw.sigma, k1-k0)
		// A single bin wider than maxChunk is computed in parts into one
		// slice: its points are all needed for its distribution.
		for a := k0; a < k1; a += maxChunk {
			z := min(a+maxChunk, k1)
			b.ls.crossSections(pw.sigma[a-k0:z-k0], g, a, p, t, &pw.lw)
		}
		for bin := ch[0]; bin < ch[1]; bin++ {
			pw.samples = b.binSamples(pw.samples[:0], g, bin, pw.sigma, k0)
			opacity.KDistribution(pw.k, pw.samples, b.q)
			for i, v := range pw.k {
				row[bin*ng+i] = float32(v)
			}
		}
	}
}

// binSamples appends the fine points of bin with their weights: the
// overlap in wavelength of each point's cell (half a step either side in
// ln(nu)) with the bin.
func (b *kBuild) binSamples(dst []opacity.Sample, g opacity.LnGrid, bin int, sigma []float64, k0 int) []opacity.Sample {
	lo, hi := b.s.Lo[bin], b.s.Hi[bin]
	kHi := int(math.Ceil(g.Index(1/lo/100) + 0.5))
	kLo := int(math.Floor(g.Index(1/hi/100) - 0.5))
	half := math.Exp(0.5 / g.R)
	for k := kLo; k <= kHi; k++ {
		nu := g.Nu(k) * 100 // m^-1
		cLo, cHi := 1/(nu*half), half/nu
		ov := min(cHi, hi) - max(cLo, lo)
		if ov > 0 {
			dst = append(dst, opacity.Sample{V: sigma[k-k0], W: ov})
		}
	}
	return dst
}

func cmpOr(a, b string) string {
	if a != "" {
		return a
	}
	return b
}

func fineGridNote(r float64) string {
	if r > 0 {
		return fmt.Sprintf("uniform in ln(nu) at resolving power %g", r)
	}
	return "uniform in ln(nu); resolving power 3 c / sqrt(2 ln2 k T / m) at each table temperature T for the heaviest isotopologue (spacing a third of the Doppler half-width)"
}
