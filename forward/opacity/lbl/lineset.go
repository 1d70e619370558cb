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
	// the cross-section of the lines profiled, at its centre (the local
	// strong-line absorption): it changes the absorption where it lies by
	// less than that fraction. The weak lines' intensities are summed on
	// the coarse grid of the two-level evaluation (every 32nd fine point,
	// linear shares to the two nearest nodes, so the sum of intensities is
	// kept exactly), spread by one Voigt profile with their
	// intensity-weighted mean Doppler and Lorentz widths, and interpolated
	// linearly to the fine grid. 0 computes every line's profile; see
	// DefaultWeakCut for the error.
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
	iso   []int // per line: index into isos
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
	ls := &LineSet{Gas: c.gas, lines: lines, iso: make([]int, len(lines)), lineCore: c}
	for i := range lines {
		l := &lines[i]
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

// Two-level evaluation: line cores exactly on the fine grid; wings on a
// coarse grid of every coarseStep-th fine point, interpolated to the fine
// points by cubic Lagrange polynomials, with the interpolant corrected to
// the exact profile wherever a line's core or cut-off edge lies within its
// four-point stencil. The core spans coreSteps coarse steps either side of
// the line centre; beyond it the interpolation error of a Lorentz wing,
// about 3 (h/x)^4 relative for a coarse step h at distance x, is below
// 2e-5 (measured: at most 1e-5 of the local cross-section against direct
// evaluation at every fine point, CO at 1e-6 to 10 atm; TestLineSetTwoLevel).
const (
	coarseStep = 32
	coreSteps  = 12
)

// lagrangeW holds the cubic Lagrange weights of nodes -1, 0, 1, 2 at the
// fractions i/coarseStep.
var lagrangeW = func() (w [coarseStep][4]float64) {
	for i := range w {
		t := float64(i) / coarseStep
		w[i] = [4]float64{-t * (t - 1) * (t - 2) / 6, (t + 1) * (t - 1) * (t - 2) / 2, -(t + 1) * t * (t - 2) / 2, (t + 1) * t * (t - 1) / 6}
	}
	return w
}()

// lineWork is the scratch memory of a cross-section calculation; one per
// goroutine.
type lineWork struct {
	nus    []float64
	node   []float64
	coarse []float64
	q      []float64 // per isotopologue: Q(296)/Q(T)
	lt     lineT     // the chunk's lines at T, when not given
	dq     []int     // sliding-maximum deque
	dep    []float64 // weak lines' intensities on the coarse nodes
	kern   []float64 // pseudo-continuum profile on the coarse nodes
	weak   []int     // lines weak next to their neighbours
	cont   []float64 // pseudo-continuum on the coarse nodes (node c at c+1)
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
	nc := (n-1)/coarseStep + 4 // coarse nodes -1 .. (n-1)/step + 2, stored at +1
	w.nus = grow(w.nus, n)
	w.coarse = grow(w.coarse, nc)
	nus, coarse := w.nus[:n], w.coarse[:nc]
	clear(coarse)
	for k := range nus {
		nus[k] = g.Nu(k0 + k)
	}
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
		ls.profile(i, S, lt.aD[j], gL, shift, dst, coarse, nus, g, k0, w)
	}
	// A line weak next to its neighbours goes into the pseudo-continuum
	// only if its peak is also below WeakCut times the cross-section the
	// profiled lines give at its centre (lines centred outside the chunk
	// reach it with their wings alone and always go). The Gaussian peak
	// S sqrt(ln2/pi)/aD bounds the Voigt peak, so lines below the cut
	// by it need no profile value.
	for _, i := range w.weak {
		j := i - lt.off
		S, aD := lt.s[j], lt.aD[j]
		gL, shift := ls.width.combine(&ls.lines[i], lt.g[j], lt.gs[j], lt.d[j], pAtm)
		nu0 := ls.lines[i].Nu + shift
		if kk := int(math.Round(g.Index(nu0))) - k0; kk >= 0 && kk < n {
			c := kk / coarseStep
			lw := &lagrangeW[kk-c*coarseStep]
			cut := ls.s.WeakCut * (lw[0]*coarse[c] + lw[1]*coarse[c+1] + lw[2]*coarse[c+2] + lw[3]*coarse[c+3] + dst[kk])
			if S*sqrtLn2OverPi/aD >= cut {
				if p := newVoigtLine(S, nu0, aD, gL); p.at(nu0) >= cut {
					ls.profile(i, S, aD, gL, shift, dst, coarse, nus, g, k0, w)
					continue
				}
			}
		}
		cont.add(S, nu0, aD, gL, g, k0, w)
		w.binned++
	}
	if cont.sum > 0 {
		cont.spread(g, k0, n, ls.cut, w)
	}
	for k := range dst {
		c := k / coarseStep
		lw := &lagrangeW[k-c*coarseStep]
		v := (lw[0]*coarse[c] + lw[1]*coarse[c+1] + lw[2]*coarse[c+2] + lw[3]*coarse[c+3]) + dst[k]
		dst[k] = v * 1e-4 // cm^2 -> m^2
	}
	if cont.sum > 0 {
		// The pseudo-continuum is interpolated linearly between the
		// nodes, which keeps it non-negative (a cubic would ring next to
		// a node that holds a narrow weak line).
		cn := w.cont
		for k := range dst {
			c := k / coarseStep
			f := float64(k-c*coarseStep) / coarseStep
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
	return p.amp * voigtRe(d*p.r, p.y)
}

// addLine adds one line's profile within [wl, wh] cm^-1 (its cut-off
// window) to the fine points (dst, corrections) and coarse nodes (coarse,
// node c at coarse[c+1]) of a chunk starting at grid point k0.
func (ls *LineSet) addLine(dst, coarse, nus []float64, g opacity.LnGrid, k0 int, wl, wh float64, p *voigtLine, w *lineWork) {
	n := len(dst)
	cLast := (n-1)/coarseStep + 2
	nodeNu := func(c int) float64 {
		if k := c * coarseStep; k >= 0 && k < n {
			return nus[k]
		}
		return g.Nu(k0 + c*coarseStep)
	}
	// Coarse nodes inside the cut-off window, and the core's nodes.
	na := max(int(math.Ceil((g.Index(wl)-float64(k0))/coarseStep)), -1)
	nb := min(int(math.Floor((g.Index(wh)-float64(k0))/coarseStep)), cLast)
	h := p.nu0 * (math.Exp(coarseStep/g.R) - 1)
	cLo := int(math.Floor((g.Index(p.nu0-coreSteps*h) - float64(k0)) / coarseStep))
	cHi := int(math.Ceil((g.Index(p.nu0+coreSteps*h) - float64(k0)) / coarseStep))
	inWing := func(c int) bool { return c >= na && c <= nb && (c <= cLo || c >= cHi) }
	for c := max(na, -1); c <= min(nb, cLast); c++ {
		if c <= cLo || c >= cHi {
			coarse[c+1] += p.at(nodeNu(c))
		}
	}
	// Correct the interpolant on the intervals whose stencil meets the
	// core or a cut-off edge (ascending, merged), with the line's node
	// values over the stencils kept in w.node.
	done := math.MinInt
	correct := func(c0, c1 int) {
		c0 = max(c0, done, 0)
		c1 = min(c1, (n-1)/coarseStep+1)
		if c0 >= c1 {
			return
		}
		w.node = grow(w.node, c1-c0+3)
		for c := c0 - 1; c <= c1+1; c++ {
			v := 0.0
			if inWing(c) {
				v = p.at(nodeNu(c))
			}
			w.node[c-c0+1] = v
		}
		for c := c0; c < c1; c++ {
			v := w.node[c-c0 : c-c0+4]
			k1 := min((c+1)*coarseStep, n)
			for k := c * coarseStep; k < k1; k++ {
				lw := &lagrangeW[k-c*coarseStep]
				exact := 0.0
				if nu := nus[k]; nu >= wl && nu <= wh {
					exact = p.at(nu)
				}
				dst[k] += exact - (lw[0]*v[0] + lw[1]*v[1] + lw[2]*v[2] + lw[3]*v[3])
			}
		}
		done = max(done, c1)
	}
	correct(na-2, na+1)
	correct(cLo-1, cHi+1)
	correct(nb-1, nb+2)
}

// profile adds line i (intensity S, Doppler and Lorentz half-widths aD
// and gL, shift) to the chunk with its own Voigt profile, cut at the wing
// cut-off (or the adaptive one).
func (ls *LineSet) profile(i int, S, aD, gL, shift float64, dst, coarse, nus []float64, g opacity.LnGrid, k0 int, w *lineWork) {
	l := &ls.lines[i]
	w.profiled++
	p := newVoigtLine(S, l.Nu+shift, aD, gL)
	cut := ls.cut
	if ls.s.WingWidths > 0 {
		cut = min(cut, ls.s.WingWidths*voigtHWHM(aD, gL))
	}
	ls.addLine(dst, coarse, nus, g, k0, l.Nu-cut, l.Nu+cut, &p, w)
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

// continuum gathers the weak lines of a chunk: their intensities on the
// coarse nodes and the sums for their mean widths.
type continuum struct {
	sum, sumD, sumL float64 // sum of S, of S alpha_D, of S gamma_L
	c0              int     // coarse node of w.dep[0]
}

// add puts a weak line of intensity S at nu0 (cm^-1) with half-widths aD
// and gL on the two coarse nodes around it, in shares that keep its
// intensity and its mean position.
func (c *continuum) add(S, nu0, aD, gL float64, g opacity.LnGrid, k0 int, w *lineWork) {
	x := (g.Index(nu0) - float64(k0)) / coarseStep
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
	h := mid * (math.Exp(coarseStep/g.R) - 1)
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
	cLast := (n-1)/coarseStep + 2
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
