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

// LineSettings are the line-shape settings of a LineSet. Zero values pick
// the stated defaults.
type LineSettings struct {
	// WingCutoff is the distance from a line's catalogue position (cm^-1)
	// beyond which it contributes nothing; 0 means DefaultWingCutoff. The
	// profile is cut, not renormalised.
	WingCutoff float64
	// MinIntensity skips lines whose intensity at the temperature of the
	// calculation is below it, cm^-1/(molecule cm^-2); 0 keeps every line.
	MinIntensity float64
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
	isos  []lineIso
	s     LineSettings
	cut   float64
	scale float64 // background broadening scale
	width widthRule
	// Fallbacks counts, per broadener of the mixture, the lines that lack
	// its parameters and use the air values in their place.
	Fallbacks map[string]int
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
	fail := func(format string, a ...any) (*LineSet, error) {
		return nil, fmt.Errorf("opacity: lines of %s: %s", gas, fmt.Sprintf(format, a...))
	}
	switch {
	case gas == "":
		return nil, fmt.Errorf("opacity: line set without a gas name")
	case len(lines) == 0:
		return fail("no lines")
	case s.WingCutoff < 0 || math.IsNaN(s.WingCutoff) || math.IsInf(s.WingCutoff, 0):
		return fail("wing cut-off %g cm^-1 must be positive (0 for the default %g)", s.WingCutoff, DefaultWingCutoff)
	case s.MinIntensity < 0 || math.IsNaN(s.MinIntensity):
		return fail("minimum intensity %g must not be negative", s.MinIntensity)
	case !(s.SelfFraction >= 0 && s.SelfFraction <= 1):
		return fail("self-broadening fraction %g must be in [0, 1]", s.SelfFraction)
	case s.Broadening.Scale < 0 || math.IsNaN(s.Broadening.Scale) || math.IsInf(s.Broadening.Scale, 0):
		return fail("broadening scale %g must be positive (0 for 1)", s.Broadening.Scale)
	case s.Broadening.N < 0 || math.IsNaN(s.Broadening.N) || math.IsInf(s.Broadening.N, 0):
		return fail("broadening temperature exponent %g must not be negative", s.Broadening.N)
	}
	ls := &LineSet{Gas: gas, s: s, cut: s.WingCutoff, scale: s.Broadening.Scale}
	var err error
	if ls.width, err = newWidthRule(s.Mixture, s.Broadening, s.SelfFraction, s.NoPressureShift); err != nil {
		return fail("%v", err)
	}
	if ls.cut == 0 {
		ls.cut = DefaultWingCutoff
	}
	if ls.scale == 0 {
		ls.scale = 1
	}
	ls.lines = slices.Clone(lines)
	slices.SortStableFunc(ls.lines, func(a, c Line) int { return cmpFloat(a.Nu, c.Nu) })
	ls.iso = make([]int, len(ls.lines))
	byKey := map[IsoKey]int{}
	for i := range ls.lines {
		l := &ls.lines[i]
		if err := l.Validate(); err != nil {
			return fail("line of %v at %g cm^-1: %v", IsoKey{l.Mol, l.Iso}, l.Nu, err)
		}
		k := IsoKey{l.Mol, l.Iso}
		idx, ok := byKey[k]
		if !ok {
			d := iso[k]
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
				ls.Warnings = append(ls.Warnings, fmt.Sprintf("no partition-function table for %s (%v): rigid-rotor approximation Q = Q(296 K) (T/296)^%g used, intensities away from 296 K are approximate",
					d.Name, k, RotorExponent(k.Mol)))
			}
			li.src = PartitionSource(d, li.q)
			if lo, hi := li.q.Range(); TRef < lo || TRef > hi {
				return fail("partition function of %v covers %g-%g K, not 296 K", k, lo, hi)
			}
			li.q296 = li.q.Q(TRef)
			idx = len(ls.isos)
			byKey[k] = idx
			ls.isos = append(ls.isos, li)
		}
		ls.iso[i] = idx
	}
	ls.Fallbacks = ls.width.fallbacks(ls.lines)
	return ls, nil
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
func (ls *LineSet) CheckTemperature(t float64) error {
	for _, li := range ls.isos {
		if lo, hi := li.q.Range(); t < lo || t > hi {
			return fmt.Errorf("opacity: lines of %s: partition function of %v covers %g-%g K, not %g K", ls.Gas, li.key, lo, hi, t)
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
	n := len(dst)
	clear(dst)
	if n == 0 {
		return
	}
	nc := (n-1)/coarseStep + 4 // coarse nodes -1 .. (n-1)/step + 2, stored at +1
	w.nus = grow(w.nus, n)
	w.coarse = grow(w.coarse, nc)
	w.q = grow(w.q, len(ls.isos))
	nus, coarse := w.nus[:n], w.coarse[:nc]
	clear(coarse)
	for k := range nus {
		nus[k] = g.Nu(k0 + k)
	}
	for i, li := range ls.isos {
		w.q[i] = li.q296 / li.q.Q(t)
	}
	pAtm := p / StandardAtmosphere
	lnT := math.Log(TRef / t)
	// Lines whose window meets [nus[0], nus[n-1]].
	lo := sort.Search(len(ls.lines), func(i int) bool { return ls.lines[i].Nu >= nus[0]-ls.cut })
	hi := sort.Search(len(ls.lines), func(i int) bool { return ls.lines[i].Nu > nus[n-1]+ls.cut })
	for i := lo; i < hi; i++ {
		l := &ls.lines[i]
		S := LineIntensity(l, t, w.q[ls.iso[i]], 1)
		if S == 0 || S < ls.s.MinIntensity {
			continue
		}
		gL, shift := ls.width.at(l, pAtm, lnT)
		p := newVoigtLine(S, l.Nu+shift, DopplerHWHM(l.Nu, t, ls.isos[ls.iso[i]].mass), gL)
		ls.addLine(dst, coarse, nus, g, k0, l.Nu-ls.cut, l.Nu+ls.cut, &p, w)
	}
	for k := range dst {
		c := k / coarseStep
		lw := &lagrangeW[k-c*coarseStep]
		v := (lw[0]*coarse[c] + lw[1]*coarse[c+1] + lw[2]*coarse[c+2] + lw[3]*coarse[c+3]) + dst[k]
		dst[k] = v * 1e-4 // cm^2 -> m^2
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
