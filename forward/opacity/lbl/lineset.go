package lbl

import (
	"fmt"
	"math"
	"slices"
	"sort"
	"sync"

	"chord/forward/opacity"
)

// FineResolution returns the resolving power nu/dnu of a fine grid whose
// spacing is at most one third of the Doppler half-width of a molecule of
// molar mass mass (g/mol) at temperature t (K): R = 3 c / sqrt(2 ln2 k t / m).
// Point values on such a grid resolve every line at every pressure (line
// widths never fall below the Doppler width); one third keeps the
// k-distribution of a bin within a small fraction of a ppm of its
// converged value (README, "Accuracy of the k-distribution").
func FineResolution(t, mass float64) float64 {
	return 3 * SpeedOfLight / math.Sqrt(2*math.Ln2*boltzmann*t/(mass*atomicMass))
}

// DefaultWeakCut is the weak-line cut chord's k-table builds use unless
// told otherwise (LineSettings.WeakCut): measured on the CO2 CDSD-HITEMP
// fragment and the CH4 nu3 and hot bands in the hot hydrogen atmosphere of
// the k-table tests, it changes the transit depth in R = 100 bins by at
// most 0.1 ppm against every line profiled (1e-3: 3 ppm, 1e-2: 18 ppm;
// forward/opacity/build, TestWeakLinesAccuracy).
const DefaultWeakCut = 1e-4

// LineSettings are the line-shape settings of a LineSet. Zero values pick
// the stated defaults.
type LineSettings struct {
	// WingCutoff is the distance from a line's catalogue position (cm^-1)
	// beyond which it contributes nothing; 0 means DefaultWingCutoff. The
	// profile is cut, not renormalised.
	WingCutoff float64
	// WingWidths, when positive, makes the cut-off adapt to each line's
	// width: a line is cut at min(WingCutoff, WingWidths x its Voigt
	// half-width) from its centre (the half-width by Olivero & Longbothum
	// 1977, JQSRT 17, 233). A Lorentz line loses the fraction
	// 2/(pi WingWidths) of its intensity beyond the cut; at low pressure,
	// where lines are a few Doppler widths wide, it spares evaluating
	// wings that hold nothing. The far wings of many lines add up in the
	// windows between them: measured on the CH4 nu3 and hot bands in the
	// hot hydrogen atmosphere of the k-table tests, 500 half-widths lower
	// the transit depth by up to 32 ppm in R = 100 bins, 5000 by less
	// than 0.01 ppm (TestWeakLinesAccuracy). 0 keeps the fixed cut-off.
	WingWidths float64
	// MinIntensity skips lines whose intensity at the temperature of the
	// calculation is below it, cm^-1/(molecule cm^-2); 0 keeps every line.
	MinIntensity float64
	// WeakCut, when positive, moves weak lines into a pseudo-continuum
	// instead of computing their profiles ("super-lines", Rey et al. 2016,
	// A&A 594, A56; Yurchenko et al. 2017, A&A 605, A95). A line is weak
	// when, at the pressure and temperature of the calculation, its
	// intensity is below WeakCut times that of the strongest line within
	// WeakRef of it, and its peak cross-section is below WeakCut times
	// the cross-section of the lines not weak by intensity, at its centre
	// (the local strong-line absorption): it changes the absorption where
	// it lies by less than that fraction. The weak lines' intensities are
	// summed on a coarse grid (every 32nd fine point, contStep; linear
	// shares to the two nearest nodes, so the sum of intensities is kept
	// exactly), spread by one Voigt profile with their intensity-weighted
	// mean Doppler and Lorentz widths, and interpolated linearly to the
	// fine grid. 0 computes every line's profile; see DefaultWeakCut for
	// the error.
	WeakCut float64
	// WeakRef is the half-width (cm^-1) of the neighbourhood whose
	// strongest line sets a line's WeakCut; 0 means 1 cm^-1.
	WeakRef float64
	// SelfFraction is the absorber's own volume mixing ratio used for
	// self-broadening, in [0, 1]; 0 is the dilute limit.
	SelfFraction float64
	// Mixture is the background gas by broadener (Mixture describes the
	// Lorentz width and shift it gives); empty means air.
	Mixture Mixture
	// Broadening scales the air values, which serve the "air" component
	// and the lines that lack a component's own parameters.
	Broadening Broadening
	// NoPressureShift turns the pressure shifts off.
	NoPressureShift bool
}

// LineSet is a line list prepared for cross-sections at any pressure and
// temperature: lines sorted by wavenumber with their isotopologues' masses
// and partition functions.
type LineSet struct {
	Gas   string
	lines []Line
	iso   []int     // per line: index into isos
	lnu   []float64 // per line: ln(Nu), for its place on a grid uniform in ln(nu)
	*lineCore
	// Fallbacks counts, per broadener of the mixture, the lines that lack
	// its parameters and use the air values in their place.
	Fallbacks map[string]int
}

// lineCore is what the line sets of one list share: settings,
// isotopologues, width rule, warnings, scratch memory.
type lineCore struct {
	gas   string
	s     LineSettings
	cut   float64
	ref   float64 // WeakRef
	scale float64 // background broadening scale
	width widthRule
	data  IsoData
	isos  []lineIso
	byKey map[IsoKey]int
	// Warnings says what was approximated (partition functions).
	Warnings []string
	pool     sync.Pool // of *lineWork
}

type lineIso struct {
	key  IsoKey
	src  string // partition-sum source
	name string
	mass float64
	q    PartitionFunc
	q296 float64
}

// NewLineSet checks the lines and settings and prepares the set. Lines of
// an isotopologue without a partition table get a rigid-rotor partition
// function from Q(296 K) and a warning.
func NewLineSet(gas string, lines []Line, iso IsoData, s LineSettings) (*LineSet, error) {
	c, err := newLineCore(gas, iso, s)
	if err != nil {
		return nil, err
	}
	if len(lines) == 0 {
		return nil, fmt.Errorf("opacity: lines of %s: no lines", gas)
	}
	sorted := slices.Clone(lines)
	slices.SortStableFunc(sorted, func(a, c Line) int { return cmpFloat(a.Nu, c.Nu) })
	ls, err := c.set(sorted)
	if err != nil {
		return nil, err
	}
	ls.Fallbacks = c.width.fallbacks(ls.lines)
	return ls, nil
}

func newLineCore(gas string, iso IsoData, s LineSettings) (*lineCore, error) {
	fail := func(format string, a ...any) (*lineCore, error) {
		return nil, fmt.Errorf("opacity: lines of %s: %s", gas, fmt.Sprintf(format, a...))
	}
	bad := func(x float64) bool { return x < 0 || math.IsNaN(x) || math.IsInf(x, 0) }
	switch {
	case gas == "":
		return nil, fmt.Errorf("opacity: line set without a gas name")
	case bad(s.WingCutoff):
		return fail("wing cut-off %g cm^-1 must be positive (0 for the default %g)", s.WingCutoff, DefaultWingCutoff)
	case bad(s.WingWidths):
		return fail("adaptive wing cut-off of %g half-widths must not be negative", s.WingWidths)
	case s.MinIntensity < 0 || math.IsNaN(s.MinIntensity):
		return fail("minimum intensity %g must not be negative", s.MinIntensity)
	case bad(s.WeakCut) || s.WeakCut >= 1:
		return fail("weak-line cut %g must be in [0, 1)", s.WeakCut)
	case bad(s.WeakRef):
		return fail("weak-line neighbourhood %g cm^-1 must not be negative", s.WeakRef)
	case !(s.SelfFraction >= 0 && s.SelfFraction <= 1):
		return fail("self-broadening fraction %g must be in [0, 1]", s.SelfFraction)
	case bad(s.Broadening.Scale):
		return fail("broadening scale %g must be positive (0 for 1)", s.Broadening.Scale)
	case bad(s.Broadening.N):
		return fail("broadening temperature exponent %g must not be negative", s.Broadening.N)
	}
	c := &lineCore{gas: gas, s: s, cut: s.WingCutoff, ref: s.WeakRef, scale: s.Broadening.Scale, data: iso, byKey: map[IsoKey]int{}}
	var err error
	if c.width, err = newWidthRule(s.Mixture, s.Broadening, s.SelfFraction, s.NoPressureShift); err != nil {
		return fail("%v", err)
	}
	if c.cut == 0 {
		c.cut = DefaultWingCutoff
	}
	if c.ref == 0 {
		c.ref = 1
	}
	if c.scale == 0 {
		c.scale = 1
	}
	return c, nil
}

// set makes a line set of lines (sorted by wavenumber, not copied) on the
// core, adding the isotopologues it meets.
func (c *lineCore) set(lines []Line) (*LineSet, error) {
	fail := func(format string, a ...any) (*LineSet, error) {
		return nil, fmt.Errorf("opacity: lines of %s: %s", c.gas, fmt.Sprintf(format, a...))
	}
	ls := &LineSet{Gas: c.gas, lines: lines, iso: make([]int, len(lines)), lnu: make([]float64, len(lines)), lineCore: c}
	for i := range lines {
		l := &lines[i]
		ls.lnu[i] = math.Log(l.Nu)
		if err := l.Validate(); err != nil {
			return fail("line of %v at %g cm^-1: %v", IsoKey{l.Mol, l.Iso}, l.Nu, err)
		}
		k := IsoKey{l.Mol, l.Iso}
		idx, ok := c.byKey[k]
		if !ok {
			var err error
			if idx, err = c.addIso(k); err != nil {
				return nil, err
			}
		}
		ls.iso[i] = idx
	}
	return ls, nil
}

// addIso prepares isotopologue k.
func (c *lineCore) addIso(k IsoKey) (int, error) {
	fail := func(format string, a ...any) (int, error) {
		return 0, fmt.Errorf("opacity: lines of %s: %s", c.gas, fmt.Sprintf(format, a...))
	}
	d := c.data[k]
	if d == nil {
		return fail("no isotopologue data (mass, partition function) for %v", k)
	}
	if !(d.Mass > 0) {
		return fail("%v has mass %g, must be positive", k, d.Mass)
	}
	li := lineIso{key: k, name: d.Name, mass: d.Mass, q: d.Q}
	if li.q == nil {
		if !(d.Q296 > 0) {
			return fail("%v has neither a partition table nor Q(296 K)", k)
		}
		li.q = &RigidRotor{Q296: d.Q296, Exponent: RotorExponent(k.Mol)}
		c.Warnings = append(c.Warnings, fmt.Sprintf("no partition-function table for %s (%v): rigid-rotor approximation Q = Q(296 K) (T/296)^%g used, intensities away from 296 K are approximate",
			d.Name, k, RotorExponent(k.Mol)))
	}
	li.src = PartitionSource(d, li.q)
	if lo, hi := li.q.Range(); TRef < lo || TRef > hi {
		return fail("partition function of %v covers %g-%g K, not 296 K", k, lo, hi)
	}
	li.q296 = li.q.Q(TRef)
	idx := len(c.isos)
	c.byKey[k] = idx
	c.isos = append(c.isos, li)
	return idx, nil
}

// Lines returns the number of lines.
func (ls *LineSet) Lines() int { return len(ls.lines) }

// Cutoff returns the wing cut-off in cm^-1.
func (ls *LineSet) Cutoff() float64 { return ls.cut }

// MaxMass returns the largest isotopologue mass of the set (g/mol).
func (ls *LineSet) MaxMass() float64 {
	m := 0.0
	for _, li := range ls.isos {
		m = max(m, li.mass)
	}
	return m
}

// CheckTemperature reports whether every isotopologue's partition function
// covers temperature t.
func (ls *LineSet) CheckTemperature(t float64) error { return ls.lineCore.checkTemperature(t) }

func (c *lineCore) checkTemperature(t float64) error {
	for _, li := range c.isos {
		if lo, hi := li.q.Range(); t < lo || t > hi {
			return fmt.Errorf("opacity: lines of %s: partition function of %v covers %g-%g K, not %g K", c.gas, li.key, lo, hi, t)
		}
	}
	return nil
}

// NuRange returns the wavenumber span (cm^-1) of the lines.
func (ls *LineSet) NuRange() (lo, hi float64) { return ls.lines[0].Nu, ls.lines[len(ls.lines)-1].Nu }

// Multi-level evaluation. A line's profile is summed on a hierarchy of
// grids: level 0 is the fine grid, level l takes every levelRatio^l-th
// fine point, and each level is interpolated to the next finer one by
// cubic Lagrange polynomials (four-point stencils), down to the fine grid.
// A line puts its exact values on the top level's nodes outside its core
// (the nodes within coreSteps steps of its centre); on each finer level
// it corrects the interpolant, at the nodes whose stencil on the level
// above meets that level's core or the line's cut-off edge, to its exact
// values there (zero within the finer level's own core, which the next
// level corrects in turn); on the fine grid every point near the centre
// is exact. Beyond the core of a level of step h, the interpolation error
// of a Lorentz wing, about 3 (h/x)^4 relative at distance x, is below
// 1.5e-4 of the line's own value, and the levels' errors add (measured: at
// most 8.3e-5 of the local cross-section against direct evaluation at
// every fine point, CO at 1e-6 to 10 atm with four levels, below the 1e-4
// accuracy of the Voigt function itself; TestLineSetLevels). A line thus
// costs some 100 exact fine points, about 80 nodes on each intermediate
// level, a dozen at each cut-off edge per level and the top level's nodes
// across its cut-off (about 100), where evaluating every fine point near
// its centre and every 32nd across its wings cost some 1800 (a k-table
// build at the line density of a 1e8-line list took twice as long). The
// number of levels of a chunk is the most whose top core
// (coreSteps top steps) fits within half the wing cut-off (at least one).
const (
	levelRatio = 4
	coreSteps  = 12
	maxLevels  = 10
)

// lagrangeW holds the cubic Lagrange weights of nodes -1, 0, 1, 2 at the
// fractions i/levelRatio.
var lagrangeW = func() (w [levelRatio][4]float64) {
	for i := range w {
		t := float64(i) / levelRatio
		w[i] = [4]float64{-t * (t - 1) * (t - 2) / 6, (t + 1) * (t - 1) * (t - 2) / 2, -(t + 1) * t * (t - 2) / 2, (t + 1) * t * (t - 1) / 6}
	}
	return w
}()

// level is one grid of the multi-level evaluation of a chunk: nodes
// first..last (node i at fine point i*step of the chunk), held in vals at
// i-first; level 0 is the chunk's fine points, held in the caller's dst.
type level struct {
	step, first, last int
	vals              []float64
}

// floorDiv returns floor(a/b) for b > 0.
func floorDiv(a, b int) int {
	q := a / b
	if a%b != 0 && a < 0 {
		q--
	}
	return q
}

// setLevels prepares the levels of a chunk of n fine points on grid g
// for lines cut off at cut cm^-1.
func (w *lineWork) setLevels(n int, g opacity.LnGrid, k0 int, cut float64) {
	// Fine step (cm^-1) in the middle of the chunk.
	dnu := g.Nu(k0+n/2) * (math.Exp(1/g.R) - 1)
	nl := 1
	for s := levelRatio * levelRatio; nl < maxLevels && coreSteps*float64(s)*dnu <= cut/2; s *= levelRatio {
		nl++
	}
	w.lv = w.lv[:0]
	w.lv = append(w.lv, level{step: 1, first: 0, last: n - 1})
	for len(w.store) <= nl {
		w.store = append(w.store, nil)
	}
	for l := 1; l <= nl; l++ {
		up := w.lv[l-1]
		lv := level{step: up.step * levelRatio, first: floorDiv(up.first, levelRatio) - 1, last: floorDiv(up.last, levelRatio) + 2}
		lv.vals = grow(w.store[l], lv.last-lv.first+1)
		clear(lv.vals)
		w.store[l] = lv.vals
		w.lv = append(w.lv, lv)
	}
}

// assemble interpolates every level down to the fine points (dst) and
// clears the levels.
func (w *lineWork) assemble(dst []float64) {
	w.lv[0].vals = dst
	for l := len(w.lv) - 1; l > 0; l-- {
		up, lo := &w.lv[l], &w.lv[l-1]
		for i := lo.first; i <= lo.last; i++ {
			j := floorDiv(i, levelRatio)
			lw := &lagrangeW[i-j*levelRatio]
			v := up.vals[j-1-up.first:]
			lo.vals[i-lo.first] += lw[0]*v[0] + lw[1]*v[1] + lw[2]*v[2] + lw[3]*v[3]
		}
		clear(up.vals)
	}
	w.lv[0].vals = nil
}

// lineWork is the scratch memory of a cross-section calculation; one per
// goroutine.
type lineWork struct {
	nus   []float64
	node  []float64   // a line's values over a stencil's nodes
	ev    []float64   // a line's values over a level's nodes
	lv    []level     // the chunk's levels
	store [][]float64 // storage of the levels' values
	q     []float64   // per isotopologue: Q(296)/Q(T)
	lt    lineT       // the chunk's lines at T, when not given
	dq    []int       // sliding-maximum deque
	dep   []float64   // weak lines' intensities on the continuum nodes
	kern  []float64   // pseudo-continuum profile on the continuum nodes
	weak  []int       // lines weak next to their neighbours
	prom  []int       // weak lines whose peaks stand out: profiled
	cont  []float64   // pseudo-continuum on the continuum nodes (node c at c+1)
	// profiled and binned count the lines whose profiles were computed
	// and those moved into the pseudo-continuum.
	profiled, binned int64
}

// CrossSections fills dst with the cross-sections (m^2 per molecule) at
// pressure p (Pa) and temperature t (K) of the grid points k0, k0+1, ...,
// k0+len(dst)-1 of g: intensities scaled from 296 K with the partition
// functions (LineIntensity), Lorentz half-width (296/T)^n (gamma_bg (p -
// p_self) + gamma_self p_self), centre shifted by delta_air p, Doppler
// half-width from the isotopologue's mass, Voigt profile (Humlicek 1982)
// within the wing cut-off of the catalogue position. The caller checks t
// with CheckTemperature.
//
// It is safe for concurrent use; its scratch memory comes from a pool.
func (ls *LineSet) CrossSections(dst []float64, g opacity.LnGrid, k0 int, p, t float64) {
	w, _ := ls.pool.Get().(*lineWork)
	if w == nil {
		w = new(lineWork)
	}
	ls.crossSections(dst, g, k0, p, t, w)
	ls.pool.Put(w)
}

func (ls *LineSet) crossSections(dst []float64, g opacity.LnGrid, k0 int, p, t float64, w *lineWork) {
	ls.crossSectionsT(dst, g, k0, p, t, w, nil)
}

// lineT holds what each line needs at one temperature, for all pressures:
// its intensity S, the strongest intensity near it (ref, with WeakCut),
// its Doppler half-width aD, and the parts of its Lorentz half-width and
// shift per atm (widthRule.parts: background g, self gs, shift d), from
// which widthRule.combine makes them at any pressure exactly as
// widthRule.at does. Entry j is line off+j.
type lineT struct {
	off                  int
	s, ref, aD, g, gs, d []float64
}

// fill computes the entries of lines lo..hi-1 at temperature t.
func (lt *lineT) fill(ls *LineSet, lo, hi int, t float64, w *lineWork) {
	n := hi - lo
	lt.off = lo
	lt.s, lt.aD, lt.g, lt.gs, lt.d = grow(lt.s, n), grow(lt.aD, n), grow(lt.g, n), grow(lt.gs, n), grow(lt.d, n)
	w.q = grow(w.q, len(ls.isos))
	for i, li := range ls.isos {
		w.q[i] = li.q296 / li.q.Q(t)
	}
	lnT := math.Log(TRef / t)
	for i := lo; i < hi; i++ {
		l := &ls.lines[i]
		lt.s[i-lo] = LineIntensity(l, t, w.q[ls.iso[i]], 1)
		lt.aD[i-lo] = DopplerHWHM(l.Nu, t, ls.isos[ls.iso[i]].mass)
		lt.g[i-lo], lt.gs[i-lo], lt.d[i-lo] = ls.width.parts(l, lnT)
	}
	if ls.s.WeakCut > 0 {
		lt.ref = grow(lt.ref, n)
		ls.strongest(lo, hi, lt.s, lt.ref, w)
	}
}

// crossSectionsT is crossSections with the lines' quantities at t taken
// from lt when it is not nil (it must cover the lines that reach the
// chunk).
func (ls *LineSet) crossSectionsT(dst []float64, g opacity.LnGrid, k0 int, p, t float64, w *lineWork, lt *lineT) {
	n := len(dst)
	clear(dst)
	if n == 0 {
		return
	}
	w.nus = grow(w.nus, n)
	nus := w.nus[:n]
	for k := range nus {
		nus[k] = g.Nu(k0 + k)
	}
	w.setLevels(n, g, k0, ls.cut)
	pAtm := p / StandardAtmosphere
	// Lines whose window meets [nus[0], nus[n-1]].
	lo := sort.Search(len(ls.lines), func(i int) bool { return ls.lines[i].Nu >= nus[0]-ls.cut })
	hi := sort.Search(len(ls.lines), func(i int) bool { return ls.lines[i].Nu > nus[n-1]+ls.cut })
	if lt == nil {
		lt = &w.lt
		lt.fill(ls, lo, hi, t, w)
	}
	weak := ls.s.WeakCut > 0
	if weak {
		w.dep = grow(w.dep, 0)
	}
	var cont continuum
	w.weak = w.weak[:0]
	for i := lo; i < hi; i++ {
		j := i - lt.off
		S := lt.s[j]
		if S == 0 || S < ls.s.MinIntensity {
			continue
		}
		if weak && S < ls.s.WeakCut*lt.ref[j] {
			w.weak = append(w.weak, i)
			continue
		}
		gL, shift := ls.width.combine(&ls.lines[i], lt.g[j], lt.gs[j], lt.d[j], pAtm)
		ls.profile(i, S, lt.aD[j], gL, shift, dst, nus, g, k0, w)
	}
	w.assemble(dst)
	// A line weak next to its neighbours goes into the pseudo-continuum
	// only if its peak is also below WeakCut times the cross-section the
	// lines profiled so far (those not weak) give at its centre (lines
	// centred outside the chunk reach it with their wings alone and
	// always go). The Gaussian peak S sqrt(ln2/pi)/aD bounds the Voigt
	// peak, so lines below the cut by it need no profile value. Those
	// that stand out are profiled after all are decided.
	w.prom = w.prom[:0]
	lnNu0 := math.Log(g.Nu0)
	for _, i := range w.weak {
		j := i - lt.off
		S, aD := lt.s[j], lt.aD[j]
		gL, shift := ls.width.combine(&ls.lines[i], lt.g[j], lt.gs[j], lt.d[j], pAtm)
		nu0 := ls.lines[i].Nu + shift
		// g.Index(nu0) from the line's ln(Nu) and ln(1 + e), e the
		// relative shift: its series to e^3 is exact to 3e-13 for shifts
		// below 1e-3 of the wavenumber (always, in practice).
		e := shift / ls.lines[i].Nu
		le := e * (1 - e*(0.5-e/3))
		if math.Abs(e) >= 1e-3 {
			le = math.Log1p(e)
		}
		x0 := g.R*(ls.lnu[i]+le-lnNu0) - float64(k0)
		if kk := int(math.Round(x0)); kk >= 0 && kk < n {
			cut := ls.s.WeakCut * dst[kk]
			if S*sqrtLn2OverPi/aD >= cut {
				if p := newVoigtLine(S, nu0, aD, gL); p.at(nu0) >= cut {
					w.prom = append(w.prom, i)
					continue
				}
			}
		}
		cont.add(S, x0, aD, gL, w)
		w.binned++
	}
	if len(w.prom) > 0 {
		for _, i := range w.prom {
			j := i - lt.off
			gL, shift := ls.width.combine(&ls.lines[i], lt.g[j], lt.gs[j], lt.d[j], pAtm)
			ls.profile(i, lt.s[j], lt.aD[j], gL, shift, dst, nus, g, k0, w)
		}
		w.assemble(dst)
	}
	if cont.sum > 0 {
		cont.spread(g, k0, n, ls.cut, w)
	}
	for k := range dst {
		dst[k] *= 1e-4 // cm^2 -> m^2
	}
	if cont.sum > 0 {
		// The pseudo-continuum is interpolated linearly between the
		// nodes, which keeps it non-negative (a cubic would ring next to
		// a node that holds a narrow weak line).
		cn := w.cont
		for k := range dst {
			c := k / contStep
			f := float64(k-c*contStep) / contStep
			dst[k] += ((1-f)*cn[c+1] + f*cn[c+2]) * 1e-4
		}
	}
}

// grow returns x with length at least n, reusing its storage when it can.
func grow(x []float64, n int) []float64 {
	if cap(x) >= n {
		return x[:n]
	}
	return make([]float64, n)
}

// voigtLine is one line's Voigt profile S V(nu - nu0), prepared.
type voigtLine struct {
	nu0, r, y, amp float64 // centre; sqrt(ln2)/alphaD; y; S sqrt(ln2/pi)/alphaD
	q, y2, ay      float64 // Humlicek region I constants
	inner          float64 // half-width (cm^-1) of the region |x| + y < 15
}

func newVoigtLine(S, nu0, alphaD, gammaL float64) voigtLine {
	r := sqrtLn2 / alphaD
	y := gammaL * r
	amp := S * sqrtLn2OverPi / alphaD
	return voigtLine{nu0: nu0, r: r, y: y, amp: amp, q: 0.5 + y*y, y2: y * y, ay: amp * 0.5641896 * y, inner: max(15-y, 0) / r}
}

// at returns the profile at nu (cm^-1).
func (p *voigtLine) at(nu float64) float64 {
	d := nu - p.nu0
	if math.Abs(d) >= p.inner {
		return p.ay * wingRe(d*p.r, p.q, p.y2)
	}
	return p.voigtCore(d)
}

// voigtCore is the profile at d = nu - nu0 within the region |x| + y < 15.
func (p *voigtLine) voigtCore(d float64) float64 { return p.amp * voigtRe(d*p.r, p.y) }

// nodes sets ev[i-i0] to the line's value at node i of a level of step
// s, for i from i0 on (len(ev) nodes): zero outside the nodes na..nb of
// its cut-off window and strictly between lo and hi (the level's core).
// Node i is at fine point i*s of the chunk whose n fine points from grid
// point k0 of g have the wavenumbers nus.
func (p *voigtLine) nodes(ev []float64, i0, s, na, nb, lo, hi int, nus []float64, g opacity.LnGrid, k0 int) {
	n := len(nus)
	for e := range ev {
		i := i0 + e
		if i < na || i > nb || (i > lo && i < hi) {
			ev[e] = 0
			continue
		}
		var nu float64
		if k := i * s; k >= 0 && k < n {
			nu = nus[k]
		} else {
			nu = g.Nu(k0 + k)
		}
		// p.at(nu), written out: the compiler does not inline it.
		d := nu - p.nu0
		if math.Abs(d) >= p.inner {
			x := d * p.r
			x2 := x * x
			dd := p.q - x2
			ev[e] = p.ay * (x2 + p.q) / (dd*dd + 4*x2*p.y2)
		} else {
			ev[e] = p.voigtCore(d)
		}
	}
}

// addLine adds one line's profile within [wl, wh] cm^-1 (its cut-off
// window) to the levels of the chunk (w.lv, set by setLevels; level 0 is
// dst) starting at grid point k0 (the fine points' wavenumbers in nus).
func (ls *LineSet) addLine(dst, nus []float64, g opacity.LnGrid, k0 int, wl, wh float64, p *voigtLine, w *lineWork) {
	w.lv[0].vals = dst
	xl, xh := g.Index(wl)-float64(k0), g.Index(wh)-float64(k0)
	x0 := g.Index(p.nu0) - float64(k0)
	// Per level: the nodes within the window, na..nb, and the core,
	// strictly between cLo and cHi (none on the fine grid).
	var na, nb, cLo, cHi [maxLevels + 1]int
	for l := range w.lv {
		s := float64(w.lv[l].step)
		na[l] = int(math.Ceil(xl / s))
		nb[l] = int(math.Floor(xh / s))
		cLo[l], cHi[l] = math.MinInt, math.MinInt
		if l > 0 {
			cLo[l] = int(math.Floor(x0/s - coreSteps))
			cHi[l] = int(math.Ceil(x0/s + coreSteps))
		}
	}
	top := len(w.lv) - 1
	lt := &w.lv[top]
	if i0, i1 := max(na[top], lt.first), min(nb[top], lt.last)+1; i0 < i1 {
		w.ev = grow(w.ev, i1-i0)
		p.nodes(w.ev, i0, lt.step, na[top], nb[top], cLo[top], cHi[top], nus, g, k0)
		for i, v := range w.ev {
			lt.vals[i0+i-lt.first] += v
		}
	}
	for l := top - 1; l >= 0; l-- {
		lv, up := &w.lv[l], &w.lv[l+1]
		// Nodes of level l in the intervals [j0, j1) of level l+1 whose
		// stencils meet its core or a cut-off edge (ascending, merged),
		// take the exact value less the interpolant of level l+1's
		// exact values (w.node, over the stencils).
		done := math.MinInt
		for _, z := range [3][2]int{{na[l+1] - 2, na[l+1] + 1}, {cLo[l+1] - 1, cHi[l+1] + 1}, {nb[l+1] - 1, nb[l+1] + 2}} {
			i0 := max(z[0]*levelRatio, lv.first, done)
			i1 := min(z[1]*levelRatio, lv.last+1)
			if i0 >= i1 {
				continue
			}
			done = i1
			c0, c1 := floorDiv(i0, levelRatio)-1, floorDiv(i1-1, levelRatio)+2
			w.node = grow(w.node, c1-c0+1)
			p.nodes(w.node, c0, up.step, na[l+1], nb[l+1], cLo[l+1], cHi[l+1], nus, g, k0)
			w.ev = grow(w.ev, i1-i0)
			p.nodes(w.ev, i0, lv.step, na[l], nb[l], cLo[l], cHi[l], nus, g, k0)
			out, ev := lv.vals[i0-lv.first:i1-lv.first], w.ev
			// Interval j of level l+1 holds nodes levelRatio*j .. +3.
			for j := c0 + 1; j <= c1-2; j++ {
				v0, v1, v2, v3 := w.node[j-1-c0], w.node[j-c0], w.node[j+1-c0], w.node[j+2-c0]
				a, b := max(j*levelRatio, i0), min((j+1)*levelRatio, i1)
				for i := a; i < b; i++ {
					lw := &lagrangeW[i-j*levelRatio]
					out[i-i0] += ev[i-i0] - (lw[0]*v0 + lw[1]*v1 + lw[2]*v2 + lw[3]*v3)
				}
			}
		}
	}
	w.lv[0].vals = nil
}

// profile adds line i (intensity S, Doppler and Lorentz half-widths aD
// and gL, shift) to the chunk with its own Voigt profile, cut at the wing
// cut-off (or the adaptive one).
func (ls *LineSet) profile(i int, S, aD, gL, shift float64, dst, nus []float64, g opacity.LnGrid, k0 int, w *lineWork) {
	l := &ls.lines[i]
	w.profiled++
	p := newVoigtLine(S, l.Nu+shift, aD, gL)
	cut := ls.cut
	if ls.s.WingWidths > 0 {
		cut = min(cut, ls.s.WingWidths*voigtHWHM(aD, gL))
	}
	ls.addLine(dst, nus, g, k0, l.Nu-cut, l.Nu+cut, &p, w)
}

// voigtHWHM is the half-width at half maximum of a Voigt profile of
// Doppler and Lorentz half-widths aD and gL, by the approximation of
// Olivero & Longbothum (1977, JQSRT 17, 233), good to 0.02 %.
func voigtHWHM(aD, gL float64) float64 {
	return 0.5346*gL + math.Sqrt(0.2166*gL*gL+aD*aD)
}

// strongest sets ref[i-lo] to the largest intensity (s[i-lo]) among the
// lines lo..hi-1 within ls.ref cm^-1 of line i (lines sorted by
// wavenumber): a sliding maximum over a window of wavenumbers, with a
// deque of line indexes of decreasing intensity (each line enters and
// leaves it once).
func (ls *LineSet) strongest(lo, hi int, s, ref []float64, w *lineWork) {
	dq := w.dq[:0]
	j := lo // next line to enter the window
	for i := lo; i < hi; i++ {
		nu := ls.lines[i].Nu
		for j < hi && ls.lines[j].Nu <= nu+ls.ref {
			for len(dq) > 0 && s[dq[len(dq)-1]-lo] <= s[j-lo] {
				dq = dq[:len(dq)-1]
			}
			dq = append(dq, j)
			j++
		}
		k := 0
		for k < len(dq) && ls.lines[dq[k]].Nu < nu-ls.ref {
			k++
		}
		dq = dq[k:]
		ref[i-lo] = s[dq[0]-lo]
	}
	w.dq = dq[:0]
}

// contStep is the spacing of the pseudo-continuum's nodes, in fine points.
const contStep = 32

// continuum gathers the weak lines of a chunk: their intensities on the
// coarse nodes and the sums for their mean widths.
type continuum struct {
	sum, sumD, sumL float64 // sum of S, of S alpha_D, of S gamma_L
	c0              int     // coarse node of w.dep[0]
}

// add puts a weak line of intensity S at fine-grid position x0 (from the
// chunk's first point) with half-widths aD and gL on the two continuum
// nodes around it, in shares that keep its intensity and its mean
// position.
func (c *continuum) add(S, x0, aD, gL float64, w *lineWork) {
	x := x0 / contStep
	j := int(math.Floor(x))
	f := x - float64(j)
	if len(w.dep) == 0 {
		c.c0 = j
	}
	if j < c.c0 { // lines come in ascending order, up to their shifts
		pad := c.c0 - j
		w.dep = append(w.dep, make([]float64, pad)...)
		copy(w.dep[pad:], w.dep[:len(w.dep)-pad])
		clear(w.dep[:pad])
		c.c0 = j
	}
	for len(w.dep) < j-c.c0+2 {
		w.dep = append(w.dep, 0)
	}
	w.dep[j-c.c0] += S * (1 - f)
	w.dep[j-c.c0+1] += S * f
	c.sum += S
	c.sumD += S * aD
	c.sumL += S * gL
}

// spread sets the pseudo-continuum on the coarse nodes (w.cont[c+1] for
// node c, as addLine keeps its nodes) of a chunk of n fine points: the
// node intensities convolved with the Voigt profile of the mean widths,
// sampled at the node spacing and normalised so that it keeps the total
// intensity. The profile reaches min(cut, 50 Voigt half-widths, at least
// three node steps) either side.
func (c *continuum) spread(g opacity.LnGrid, k0, n int, cut float64, w *lineWork) {
	aD, gL := c.sumD/c.sum, c.sumL/c.sum
	// Node spacing (cm^-1) at the middle of the chunk.
	mid := g.Nu(k0 + n/2)
	h := mid * (math.Exp(contStep/g.R) - 1)
	reach := max(min(cut, 50*voigtHWHM(aD, gL)), 3*h)
	m := int(math.Ceil(reach / h))
	w.kern = grow(w.kern, 2*m+1)
	p := newVoigtLine(1, 0, aD, gL)
	tot := 0.0
	for i := -m; i <= m; i++ {
		v := p.at(float64(i) * h)
		w.kern[i+m] = v
		tot += v
	}
	for i := range w.kern {
		w.kern[i] /= tot * h // sum of kernel x h = 1
	}
	cLast := (n-1)/contStep + 2
	w.cont = grow(w.cont, cLast+2)
	clear(w.cont)
	coarse := w.cont
	for j, d := range w.dep {
		if d == 0 {
			continue
		}
		node := c.c0 + j
		a, b := max(node-m, -1), min(node+m, cLast)
		for cn := a; cn <= b; cn++ {
			coarse[cn+1] += d * w.kern[cn-node+m]
		}
	}
}
