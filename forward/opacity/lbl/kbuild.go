package lbl

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"runtime"
	"slices"
	"sort"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"

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
	// of a spectral window at a time; 0 means GOMAXPROCS. The table does
	// not depend on it.
	Workers int
	// WindowLines bounds the lines held at once: a spectral window takes
	// consecutive bins while the lines within the wing cut-off of them
	// number at most WindowLines (a single bin is taken whatever its
	// count); 0 means DefaultWindowLines. See BuildKFrom for the memory
	// this bounds.
	WindowLines int
	// Observer receives the progress (in bins x (P, T) points), warnings
	// and notes of the build.
	Observer Observer
	// Checkpoint, when not nil, keeps finished windows so that a stopped
	// build resumes where it stopped.
	Checkpoint Checkpoint
	// Version and Sources go into Meta as in XSecSettings.
	Version, Sources string
}

// DefaultWindowLines is the default KSettings.WindowLines: 2 million
// lines, about 300 MB.
const DefaultWindowLines = 2_000_000

// maxChunk is the most fine-grid points held per worker: a window's bins
// hold at most this many points at the finest grid (8 MiB of float64),
// so memory does not grow with the spectral range.
const maxChunk = 1 << 20

// Checkpoint keeps the finished spectral windows of a k-table build. A
// window is the bins [b0, b1); its values k are laid out as the table's
// rows restricted to those bins: k[((iP*len(T)+iT)*(b1-b0)+b-b0)*len(G)+i].
type Checkpoint interface {
	// Load returns the values of window [b0, b1) saved by an earlier
	// build of the same table, or false.
	Load(b0, b1 int) ([]float32, bool)
	// Save records a finished window.
	Save(b0, b1 int, k []float32) error
}

// LineSource delivers a line list in ascending order of wavenumber.
type LineSource interface {
	// Next appends the next lines of the list to dst (at least one) and
	// returns it; at the end of the list it returns dst and io.EOF.
	Next(dst []Line) ([]Line, error)
}

// SliceSource is a LineSource of the lines of a slice (sorted by
// wavenumber, stably: the slice itself is not changed).
func SliceSource(lines []Line) LineSource {
	s := &sliceSource{lines: slices.Clone(lines)}
	slices.SortStableFunc(s.lines, func(a, c Line) int { return cmpFloat(a.Nu, c.Nu) })
	return s
}

type sliceSource struct {
	lines []Line
	i     int
}

func (s *sliceSource) Next(dst []Line) ([]Line, error) {
	if s.i >= len(s.lines) {
		return dst, io.EOF
	}
	j := min(s.i+4096, len(s.lines))
	dst = append(dst, s.lines[s.i:j]...)
	s.i = j
	return dst, nil
}

// ErrStopped is returned by BuildKFrom when its context is cancelled; the
// windows finished before are in the checkpoint.
var ErrStopped = errors.New("opacity: k-table build stopped")

// BuildK computes the k-table of a gas from its lines: at every (P, T)
// point of the grid, the cross-sections on a fine grid uniform in ln(nu)
// (LineSet.CrossSections) are sorted within each bin, weighted by their
// share of the bin in wavelength, and sampled at the quadrature nodes
// (opacity.KDistribution). It is BuildKFrom of the lines as a slice.
func BuildK(lines []Line, iso IsoData, s *KSettings) (*opacity.KTable, error) {
	if len(lines) == 0 {
		return nil, fmt.Errorf("opacity: BuildK %s: no lines", s.Gas)
	}
	return BuildKFrom(context.Background(), SliceSource(lines), iso, s)
}

// BuildKFrom builds the k-table of the lines src delivers, spectral
// window by spectral window: the lines within the wing cut-off of a
// window's bins are held (at most about s.WindowLines of them), and the
// window's bins are computed at every (P, T) point on the workers, a
// worker holding the fine cross-sections of one window at one point (at
// most 2^20 points, 8 MiB). Memory is therefore bounded by the window's
// lines (about 150 bytes each) plus 8 MiB per worker plus the table,
// whatever the length of the list. Lines beyond the first bins' reach are
// read only as the windows come to them.
//
// The fine grid's default resolving power (KSettings.Resolution) takes
// the heaviest isotopologue among iso's entries of the first line's
// molecule, as lines not yet read cannot be asked.
//
// When ctx is cancelled the build stops after the window in hand and
// returns ErrStopped; with a Checkpoint the finished windows are kept
// and a new build with the same settings and lines resumes there.
func BuildKFrom(ctx context.Context, src LineSource, iso IsoData, s *KSettings) (*opacity.KTable, error) {
	if s == nil {
		return nil, fmt.Errorf("opacity: BuildK: no settings")
	}
	core, err := newLineCore(s.Gas, iso, s.Lines)
	if err != nil {
		return nil, err
	}
	rd := &windowReader{src: src, cut: core.cut}
	if err := rd.fill(math.Inf(-1)); err != nil {
		return nil, err
	}
	if len(rd.buf) == 0 {
		return nil, fmt.Errorf("opacity: BuildK %s: no lines", s.Gas)
	}
	b, err := newKBuild(core, rd.heaviest(iso), s)
	if err != nil {
		return nil, err
	}
	if err := b.run(ctx, rd); err != nil {
		return nil, err
	}
	return b.table, nil
}

type kBuild struct {
	s       *KSettings
	core    *lineCore
	q       opacity.Quadrature
	grids   []opacity.LnGrid // fine grid per temperature of the table
	finest  opacity.LnGrid
	table   *opacity.KTable
	workers int
	maxMass float64
	// counts over the build
	lines, windows   int
	profiled, binned int64
	fallbacks        map[string]int
	warnings         []string
}

func newKBuild(core *lineCore, maxMass float64, s *KSettings) (*kBuild, error) {
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
	if len(s.Lo) == 0 || len(s.Lo) != len(s.Hi) {
		return fail("%d bin lower edges and %d upper edges; need the same number, at least one", len(s.Lo), len(s.Hi))
	}
	for i := range s.Lo {
		if !(s.Lo[i] > 0) || !(s.Hi[i] > s.Lo[i]) || math.IsInf(s.Hi[i], 0) || (i > 0 && s.Lo[i] < s.Hi[i-1]) {
			return fail("bin %d (%g-%g um): bins need 0 < low < high, ascending and not overlapping", i+1, s.Lo[i]*1e6, s.Hi[i]*1e6)
		}
	}
	if s.Workers < 0 || s.WindowLines < 0 {
		return fail("%d workers, %d lines per window: must not be negative", s.Workers, s.WindowLines)
	}
	b := &kBuild{s: s, core: core, q: s.Quadrature, workers: s.Workers, maxMass: maxMass}
	if b.q.G == nil {
		b.q = opacity.DefaultQuadrature()
	} else if err := b.q.Validate(); err != nil {
		return fail("%v", err)
	}
	if b.workers == 0 {
		b.workers = runtime.GOMAXPROCS(0)
	}
	if r := s.Resolution; r != 0 && (!(r > 0) || math.IsInf(r, 0)) {
		return fail("fine-grid resolving power %g, must be positive", r)
	}
	if rule := FineResolution(s.T[0], maxMass); s.Resolution > 0 && s.Resolution < rule {
		b.warnings = append(b.warnings, fmt.Sprintf("fine grid at resolving power %.4g is coarser than a third of the Doppler half-width at %g K (resolving power %.4g): lines at low pressure are sampled, not resolved", s.Resolution, s.T[0], rule))
	}
	// One fine grid per temperature: by default each just fine enough for
	// the Doppler width at its own temperature.
	nuMax := 1 / s.Lo[0] / 100 // cm^-1
	for _, t := range s.T {
		r := s.Resolution
		if r == 0 {
			r = FineResolution(t, maxMass)
		}
		g := opacity.LnGrid{Nu0: 1 / s.Hi[len(s.Hi)-1] / 100, R: r}
		if n := g.Index(nuMax); n > 1e10 {
			return fail("fine grid of %.3g points at resolving power %.4g: too many", n, r)
		}
		b.grids = append(b.grids, g)
		if g.R > b.finest.R {
			b.finest = g
		}
	}
	ng := len(b.q.G)
	b.table = &opacity.KTable{
		Gas: s.Gas, Log10P: slices.Clone(s.Log10P), T: slices.Clone(s.T),
		Lo: slices.Clone(s.Lo), Hi: slices.Clone(s.Hi), G: slices.Clone(b.q.G), W: slices.Clone(b.q.W),
		K: make([]float32, len(s.Log10P)*len(s.T)*len(s.Lo)*ng),
	}
	return b, nil
}

// windowReader holds the lines of the current window, read from a
// source in ascending wavenumber.
type windowReader struct {
	src  LineSource
	cut  float64
	buf  []Line // held lines, ascending
	eof  bool
	last float64 // wavenumber of the last line read
	read int
	// inRange counts the lines read within [lo, hi] cm^-1 (the table's
	// reach), once these are set.
	lo, hi  float64
	inRange int
}

func (r *windowReader) countRange(lines []Line) {
	for i := range lines {
		if lines[i].Nu >= r.lo && lines[i].Nu <= r.hi {
			r.inRange++
		}
	}
}

// fill reads until a line beyond nu is held (or the list ends).
func (r *windowReader) fill(nu float64) error {
	for !r.eof && (len(r.buf) == 0 || r.buf[len(r.buf)-1].Nu <= nu) {
		n := len(r.buf)
		var err error
		r.buf, err = r.src.Next(r.buf)
		for i := n; i < len(r.buf); i++ {
			if r.buf[i].Nu < r.last {
				return fmt.Errorf("opacity: line list not in ascending wavenumber: line %d at %g cm^-1 follows one at %g cm^-1", r.read+i-n+1, r.buf[i].Nu, r.last)
			}
			r.last = r.buf[i].Nu
		}
		r.read += len(r.buf) - n
		if r.hi > 0 {
			r.countRange(r.buf[n:])
		}
		if err == io.EOF {
			r.eof = true
		} else if err != nil {
			return err
		}
	}
	return nil
}

// drop forgets the lines below nu.
func (r *windowReader) drop(nu float64) {
	i := sort.Search(len(r.buf), func(i int) bool { return r.buf[i].Nu >= nu })
	if i > 0 {
		n := copy(r.buf, r.buf[i:])
		r.buf = r.buf[:n]
	}
}

// count returns the number of held lines up to nu.
func (r *windowReader) count(nu float64) int {
	return sort.Search(len(r.buf), func(i int) bool { return r.buf[i].Nu > nu })
}

// heaviest returns the largest mass among iso's isotopologues of the
// first held line's molecule (of all of iso when that has none).
func (r *windowReader) heaviest(iso IsoData) float64 {
	mol := r.buf[0].Mol
	m := 0.0
	for k, d := range iso {
		if d != nil && (k.Mol == mol || mol == 0) {
			m = max(m, d.Mass)
		}
	}
	if m == 0 {
		for _, d := range iso {
			if d != nil {
				m = max(m, d.Mass)
			}
		}
	}
	return m
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
func (b *kBuild) meta() map[string]string {
	s := b.s
	c := b.core
	bs := map[string]any{
		"method":                    "k-distribution from line-by-line cross-sections",
		"profile":                   "Voigt; Faddeeva function by Humlicek (1982, JQSRT 27, 437), w4; summed on a hierarchy of grids (fine, every 4th, 16th, ... point; cores exact on the fine grid, wings on the coarser levels, each interpolated to the next finer by cubic polynomials)",
		"intensity":                 "HITRAN temperature scaling (Rothman et al. 1998, JQSRT 60, 665); c2 = hc/k, CODATA 2018",
		"quadrature":                b.q.String(),
		"bin_weighting":             "box-car in wavelength",
		"fine_grid":                 fineGridNote(s.Resolution),
		"fine_resolution_lowest_t":  b.grids[0].R,
		"doppler_rule_lowest_t":     FineResolution(s.T[0], b.maxMass),
		"lines":                     b.lines,
		"windows":                   b.windows,
		"wing_cutoff_cm-1":          c.cut,
		"wing_cutoff_half_widths":   s.Lines.WingWidths,
		"min_intensity":             s.Lines.MinIntensity,
		"weak_line_cut":             s.Lines.WeakCut,
		"weak_line_neighbourhood":   c.ref,
		"line_evaluations_profiled": b.profiled,
		"line_evaluations_binned":   b.binned,
		"self_fraction":             s.Lines.SelfFraction,
		"broadener":                 cmpOr(s.Lines.Broadening.Name, "air"),
		"broadener_scale":           c.scale,
		"broadening_mixture":        s.Lines.Mixture.String(),
		"broadening_fallback_lines": b.fallbacks,
		"pressure_shift":            !s.Lines.NoPressureShift,
	}
	if s.Lines.Broadening.N > 0 {
		bs["broadener_temperature_exponent"] = strconv.FormatFloat(s.Lines.Broadening.N, 'g', -1, 64)
	}
	part := map[string]string{}
	for _, li := range c.isos {
		part[fmt.Sprintf("%d/%d", li.key.Mol, li.key.Iso)] = li.src
	}
	bs["partition_functions"] = part
	js, err := json.Marshal(bs)
	if err != nil {
		panic(err) // plain values
	}
	m := map[string]string{opacity.MetaBuildSettings: string(js)}
	if len(b.warnings) > 0 {
		m[MetaWarnings] = strings.Join(b.warnings, "\n")
	}
	if s.Version != "" {
		m[opacity.MetaProgramVersion] = s.Version
	}
	if s.Sources != "" {
		m[opacity.MetaSources] = s.Sources
	}
	return m
}

// run builds the table window by window.
func (b *kBuild) run(ctx context.Context, rd *windowReader) error {
	s := b.s
	nb, nPT := len(s.Lo), len(s.Log10P)*len(s.T)
	maxLines := s.WindowLines
	if maxLines == 0 {
		maxLines = DefaultWindowLines
	}
	work := make([]pointWork, b.workers)
	b.fallbacks = map[string]int{}
	done := 0
	// Bins ascend in wavelength; windows go up in wavenumber, from the
	// last bin down to the first.
	// The fine points of bins reach a few steps beyond their edges
	// (pointRange): the lines held reach the cut-off beyond those.
	rMin := math.Inf(1)
	for _, g := range b.grids {
		rMin = min(rMin, g.R)
	}
	lower := func(bin int) float64 { return 1/s.Hi[bin]/100*math.Exp(-3/rMin) - b.core.cut }
	upper := func(bin int) float64 { return 1/s.Lo[bin]/100*math.Exp(3/rMin) + b.core.cut }
	rd.lo, rd.hi = lower(nb-1), upper(0)
	rd.countRange(rd.buf)
	for b1 := nb; b1 > 0; {
		if ctx.Err() != nil {
			return ErrStopped
		}
		rd.drop(lower(b1 - 1))
		b0 := b1 - 1
		if err := rd.fill(upper(b0)); err != nil {
			return err
		}
		for b0 > 0 && b.span(b.finest, b0-1, b1) <= maxChunk {
			if err := rd.fill(upper(b0 - 1)); err != nil {
				return err
			}
			if rd.count(upper(b0-1)) > maxLines {
				break
			}
			b0--
		}
		n := rd.count(upper(b0))
		if err := b.window(ctx, b0, b1, rd.buf[:n], work); err != nil {
			return err
		}
		done += (b1 - b0) * nPT
		b.s.Observer.progress(done, nb*nPT)
		b1 = b0
	}
	b.lines = rd.inRange
	for _, li := range b.core.isos {
		if w := partitionWarning(li.name, li.key, li.src, s.T[len(s.T)-1]); w != "" {
			b.warnings = append(b.warnings, w)
		}
	}
	if w := fallbackNote(b.fallbacks, b.lines); w != "" {
		b.warnings = append(b.warnings, w)
	}
	b.warnings = append(b.core.Warnings, b.warnings...)
	for _, w := range b.warnings {
		s.Observer.warn(w)
	}
	b.table.Meta = b.meta()
	return nil
}

// window builds bins [b0, b1) from lines (sorted; those within the wing
// cut-off of the bins) at every (P, T) point, or takes them from the
// checkpoint.
func (b *kBuild) window(ctx context.Context, b0, b1 int, lines []Line, work []pointWork) error {
	s := b.s
	b.windows++
	ng := len(b.q.G)
	nw := (b1 - b0) * ng
	if s.Checkpoint != nil {
		if k, ok := s.Checkpoint.Load(b0, b1); ok && len(k) == nw*len(s.Log10P)*len(s.T) {
			for r := 0; r < len(s.Log10P)*len(s.T); r++ {
				copy(b.table.K[(r*len(s.Lo)+b0)*ng:], k[r*nw:(r+1)*nw])
			}
			b.countFallbacks(lines, b0, b1)
			return nil
		}
	}
	ls, err := b.core.set(lines)
	if err != nil {
		return err
	}
	for _, t := range []float64{s.T[0], s.T[len(s.T)-1]} {
		if err := b.core.checkTemperature(t); err != nil {
			return err
		}
	}
	b.countFallbacks(lines, b0, b1)
	// What the lines need at a temperature is the same at every pressure:
	// it is computed once per temperature, by the first worker to need
	// it, and freed when the last pressure is done. Tasks go temperature
	// by temperature, so at most about one per worker is held.
	nP := len(s.Log10P)
	caches := make([]tCache, len(s.T))
	for it := range caches {
		caches[it].left.Store(int32(nP))
	}
	type task struct{ ip, it int }
	tasks := make(chan task)
	var wg sync.WaitGroup
	for w := range min(b.workers, nP*len(s.T)) {
		wg.Add(1)
		go func(pw *pointWork) {
			defer wg.Done()
			for t := range tasks {
				tc := &caches[t.it]
				tc.once.Do(func() { tc.lt.fill(ls, 0, len(ls.lines), s.T[t.it], &pw.lw) })
				b.point(ls, t.ip, t.it, b0, b1, pw, &tc.lt)
				if tc.left.Add(-1) == 0 {
					tc.lt = lineT{}
				}
			}
		}(&work[w])
	}
	for it := range s.T {
		for ip := range s.Log10P {
			tasks <- task{ip, it}
		}
	}
	close(tasks)
	wg.Wait()
	for i := range work {
		b.profiled += work[i].lw.profiled
		b.binned += work[i].lw.binned
		work[i].lw.profiled, work[i].lw.binned = 0, 0
	}
	if s.Checkpoint != nil {
		k := make([]float32, 0, nw*len(s.Log10P)*len(s.T))
		for r := 0; r < len(s.Log10P)*len(s.T); r++ {
			o := (r*len(s.Lo) + b0) * ng
			k = append(k, b.table.K[o:o+nw]...)
		}
		if err := s.Checkpoint.Save(b0, b1, k); err != nil {
			return fmt.Errorf("opacity: BuildK %s: checkpoint: %w", s.Gas, err)
		}
	}
	return nil
}

// countFallbacks adds the window's lines that lie in its own bins (not
// the cut-off margins, which other windows count) and lack a broadener's
// parameters.
func (b *kBuild) countFallbacks(lines []Line, b0, b1 int) {
	lo, hi := 1/b.s.Hi[b1-1]/100, 1/b.s.Lo[b0]/100
	if b1 == len(b.s.Lo) {
		lo = math.Inf(-1)
	}
	if b0 == 0 {
		hi = math.Inf(1)
	}
	i := sort.Search(len(lines), func(i int) bool { return lines[i].Nu >= lo })
	j := sort.Search(len(lines), func(i int) bool { return lines[i].Nu >= hi })
	for k, n := range b.core.width.fallbacks(lines[i:j]) {
		b.fallbacks[k] += n
	}
}

// pointWork is one worker's scratch memory.
type pointWork struct {
	lw      lineWork
	sigma   []float64
	samples []opacity.Sample
	k       []float64
}

// tCache holds the window's lines at one temperature (lineT) while its
// pressures are computed.
type tCache struct {
	once sync.Once
	lt   lineT
	left atomic.Int32 // pressures still to do
}

// point fills bins [b0, b1) of the table row of grid point (ip, it),
// with the lines' quantities at the temperature from lt.
func (b *kBuild) point(ls *LineSet, ip, it, b0, b1 int, pw *pointWork, lt *lineT) {
	s := b.s
	p, t := math.Pow(10, s.Log10P[ip]), s.T[it]
	row := b.table.Row(ip, it)
	ng := len(b.q.G)
	pw.k = grow(pw.k, ng)
	g := b.grids[it]
	k0, k1 := b.pointRange(g, b0, b1)
	pw.sigma = grow(pw.sigma, k1-k0)
	// A single bin wider than maxChunk is computed in parts into one
	// slice: its points are all needed for its distribution.
	for a := k0; a < k1; a += maxChunk {
		z := min(a+maxChunk, k1)
		ls.crossSectionsT(pw.sigma[a-k0:z-k0], g, a, p, t, &pw.lw, lt)
	}
	for bin := b0; bin < b1; bin++ {
		pw.samples = b.binSamples(pw.samples[:0], g, bin, pw.sigma, k0)
		opacity.KDistribution(pw.k, pw.samples, b.q)
		for i, v := range pw.k {
			row[bin*ng+i] = float32(v)
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
