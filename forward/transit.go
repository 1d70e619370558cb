package forward

import (
	"math"

	"gonum.org/v1/gonum/floats"

	"chord/forward/opacity"
)

// blockLen is the number of model points handled together: the absorption
// coefficients of all layers for one block (N x blockLen float64) stay in
// the core's L2 cache while the triangular path matrix is applied.
const blockLen = 256

// Panic messages for programmer errors (user input never reaches them).
const (
	badOutputLen = "forward: Transit: dst length differs from Model.OutputLen"
	badFineLen   = "forward: TransitFine: dst length differs from the model grid"
	badWorkspace = "forward: workspace belongs to another model"
	badVMRLen    = "forward: State.VMR length differs from Model.Gases"
	badKFine     = "forward: TransitFine: a k-distribution model has no fine grid"
)

// satTau is the slant optical depth beyond which 1 - exp(-tau) rounds to
// 1 in float64 (exp(-37.5) is below half an ulp of 1).
const satTau = 38

// Workspace holds the scratch memory of Transit for one goroutine. Make it
// with Model.NewWorkspace; it is not safe for concurrent use.
type Workspace struct {
	m     *Model
	x     []float64 // volume mixing ratio per species
	temp  []float64 // K per layer
	nd    []float64 // number density per layer, m^-3
	coef  []float64 // (1/r) step per unit ln p, per layer
	invR  []float64 // 1/r per level
	r     []float64 // r per level
	area  []float64 // r_{i+1}^2 - r_i^2 per ray
	path  []float64 // N x N, row i = ray i, upper triangular
	alpha []float64 // N x blockLen: absorption coefficients
	tau   []float64 // blockLen: slant optical depth of one ray
	scat  []float64 // per point: sum of Rayleigh and haze cross-sections per molecule
	fine  []float64 // transit depth on the model grid
	acc   []float64 // per point of a block: rays above the cloud ray
	low   []float64 // rays below the cloud ray (patchy clouds)
	tkc   []float64 // 1 - exp(-tau) of the cloud ray
	grp   []groupWork
	k     *kWork // k-distribution mode
	err   StateError

	// Clamped is set by the last call when some layer's pressure or
	// temperature lay outside a table's grid, so edge values were used.
	Clamped bool
	// MeanMolecularWeight is the mean molecular weight (u) of the last
	// successful call.
	MeanMolecularWeight float64
}

type groupWork struct {
	active bool
	coef   []float64 // per member: mixing ratio, or product of a pair's
	slotOf []int     // grid row -> slot, -1 when untouched
	rows   []int     // slot -> grid row
	buf    []float64 // slots x blockLen: mixed rows of the current block
	corner [][4]corner
}

type corner struct {
	slot int
	w    float64
}

// NewWorkspace returns a workspace sized for m.
func (m *Model) NewWorkspace() *Workspace {
	n, M := len(m.pLayer), len(m.wl)
	w := &Workspace{
		m:     m,
		x:     make([]float64, len(m.species)),
		temp:  make([]float64, n),
		nd:    make([]float64, n),
		coef:  make([]float64, n),
		invR:  make([]float64, n+1),
		r:     make([]float64, n+1),
		area:  make([]float64, n),
		path:  make([]float64, n*n),
		alpha: make([]float64, n*blockLen),
		tau:   make([]float64, blockLen),
		scat:  make([]float64, M),
		fine:  make([]float64, M),
		acc:   make([]float64, blockLen),
		low:   make([]float64, blockLen),
		tkc:   make([]float64, blockLen),
		grp:   make([]groupWork, len(m.groups)),
	}
	if m.k != nil {
		w.k = m.newKWork(n)
	}
	for gi, g := range m.groups {
		rows := g.nP * g.nT
		gw := &w.grp[gi]
		gw.coef = make([]float64, len(g.members))
		gw.slotOf = make([]int, rows)
		for i := range gw.slotOf {
			gw.slotOf[i] = -1
		}
		gw.rows = make([]int, 0, rows)
		gw.buf = make([]float64, rows*blockLen)
		gw.corner = make([][4]corner, n)
	}
	return w
}

func (w *Workspace) fail(kind error, param string, v float64) error {
	w.err = StateError{Kind: kind, Param: param, Value: v}
	return &w.err
}

// Transit fills dst (length OutputLen) with the transit depth (fraction of
// the stellar disc) of state s: binned when the model has bins, else on the
// model grid. It allocates nothing. A state it cannot compute gives a
// *StateError (see the Err* kinds) kept in w.
//
// The depth is that of Brown (2001, ApJ 553, 1006) in its discrete form:
// rays at the layers' mid-radii b_i, slant optical depth
// tau_i = sum_{j>=i} ds_ij alpha_j with the triangular path matrix
// ds_ij = 2(sqrt(r_{j+1}^2 - b_i^2) - sqrt(max(r_j, b_i)^2 - b_i^2)), and
//
//	D = (r_0^2 + sum_i (r_{i+1}^2 - r_i^2)(1 - exp(-tau_i))) / R_star^2,
//
// with 2 b_i db_i = r_{i+1}^2 - r_i^2 exactly. A cloud deck at radius r_c
// makes everything below it opaque (the annulus holding r_c is split at
// r_c, so the depth is continuous in the cloud-top pressure), and patchy
// clouds mix cloudy and clear limbs.
func (m *Model) Transit(dst []float64, s *State, w *Workspace) error {
	if len(dst) != m.nOut {
		panic(badOutputLen)
	}
	if m.k != nil {
		return m.transitK(dst, s, w)
	}
	if m.bins == nil {
		return m.TransitFine(dst, s, w)
	}
	if err := m.TransitFine(w.fine, s, w); err != nil {
		return err
	}
	m.bins.average(dst, w.fine)
	return nil
}

// TransitFine fills dst (length len(Model.Wavelength())) with the transit
// depth on the model grid, unbinned. It is not available in k-distribution
// mode, whose model has no fine grid.
func (m *Model) TransitFine(dst []float64, s *State, w *Workspace) error {
	if m.k != nil {
		panic(badKFine)
	}
	if len(dst) != len(m.wl) {
		panic(badFineLen)
	}
	g, err := m.atmosphere(s, w)
	if err != nil {
		return err
	}
	if g.covered() {
		g.fillCovered(dst, s)
		return nil
	}
	m.prepareGroups(w, g.jlo)
	m.scattering(w, s)
	n := len(m.pLayer)
	M := len(m.wl)
	for k0 := 0; k0 < M; k0 += blockLen {
		k1 := min(k0+blockLen, M)
		nb := k1 - k0
		m.mixBlock(w, k0, k1)
		m.alphaBlock(w, g.jlo, k0, k1)

		acc, low, tkc := w.acc[:nb], w.low[:nb], w.tkc[:nb]
		for k := range acc {
			acc[k], low[k], tkc[k] = 0, 0, 0
		}
		tau := w.tau[:nb]
		for i := g.jlo; i < n; i++ {
			// tau_i = sum_{j>=i} ds_ij alpha_j, from the ray's own (densest)
			// shell outwards. Every term is non-negative, so a partial sum
			// is a lower bound: once it reaches satTau at every point of the
			// block, 1 - exp(-tau) is exactly 1 there and the rest of the
			// sum cannot change the depth. Checks at doubling intervals.
			ds := w.path[i*n : (i+1)*n]
			floats.ScaleTo(tau, ds[i], w.alpha[(i-g.jlo)*blockLen:(i-g.jlo)*blockLen+nb])
			saturated := false
			check := i + 1
			for j := i + 1; j < n; j++ {
				floats.AddScaled(tau, ds[j], w.alpha[(j-g.jlo)*blockLen:(j-g.jlo)*blockLen+nb])
				if j == check {
					if allSaturated(tau) {
						saturated = true
						break
					}
					check += check - i
				}
			}
			a, dst := g.rayArea(i, w), g.rayDest(i, acc, low, tkc)
			if saturated {
				for k := range dst {
					dst[k] += a
				}
			} else {
				addAbsorbed(dst, a, tau)
			}
		}
		g.depths(dst[k0:k1], acc, low, tkc)
	}
	return nil
}

// geometry is what atmosphere computes for one state: the rays that need
// an optical depth and the cloud deck. Radii, areas and path-matrix rows
// are in the Workspace.
type geometry struct {
	n    int     // layers
	jlo  int     // lowest ray that needs an optical depth
	kc   int     // ray holding the cloud top (-1: no deck; n: above the model top)
	rc   float64 // cloud-top radius, m
	phi  float64 // cloud fraction
	rs2  float64 // stellar radius squared
	r0sq float64 // r_0^2
	// The cloud ray's annulus above the deck (cloudy limb) and whole (clear
	// limb); 0 when the deck lies above the model top.
	kcAbove, kcWhole float64
}

// covered reports whether the deck covers the whole atmosphere, so every
// point's depth is that of the cloud-top disc.
func (g *geometry) covered() bool { return g.jlo == g.n }

func (g *geometry) fillCovered(dst []float64, s *State) {
	d := g.rc * g.rc / g.rs2
	for k := range dst {
		dst[k] = d
	}
}

// rayArea is the annulus area that ray i's absorption is weighted by: 1
// for the cloud ray (whose two annuli depths applies), else r_{i+1}^2 - r_i^2.
func (g *geometry) rayArea(i int, w *Workspace) float64 {
	if i == g.kc {
		return 1
	}
	return w.area[i]
}

// rayDest picks the accumulator of ray i: the cloud ray's own, the rays
// below the deck (seen only through the clear limb), or the rays above.
func (g *geometry) rayDest(i int, acc, low, tkc []float64) []float64 {
	switch {
	case i == g.kc:
		return tkc
	case i < g.kc:
		return low
	}
	return acc
}

// depths turns the absorbed areas of a block (acc: rays above the deck;
// low: rays below it; tkc: the cloud ray's absorbed fraction) into transit
// depths.
func (g *geometry) depths(out, acc, low, tkc []float64) {
	if g.kc < 0 {
		for k := range out {
			out[k] = (g.r0sq + acc[k]) / g.rs2
		}
		return
	}
	rcsq := g.rc * g.rc
	for k := range out {
		cloudy := rcsq + g.kcAbove*tkc[k] + acc[k]
		d := g.phi * cloudy
		if g.phi < 1 {
			clear := g.r0sq + low[k] + g.kcWhole*tkc[k] + acc[k]
			d += (1 - g.phi) * clear
		}
		out[k] = d / g.rs2
	}
}

// atmosphere checks s and computes the composition, mean molecular weight,
// temperatures, hydrostatic structure (exact for isothermal layers with
// 1/r^2 gravity), the cloud deck and the path-matrix rows of the rays
// that need an optical depth.
func (m *Model) atmosphere(s *State, w *Workspace) (geometry, error) {
	if w.m != m {
		panic(badWorkspace)
	}
	if len(s.VMR) != len(m.gases) {
		panic(badVMRLen)
	}
	w.Clamped = false
	if err := m.checkState(s, w); err != nil {
		return geometry{}, err
	}
	n := len(m.pLayer)

	// Composition and mean molecular weight.
	sum := 0.0
	for i, v := range s.VMR {
		w.x[i] = v
		sum += v
	}
	f := 1 - sum
	if m.fill == FillH2He {
		w.x[m.nTrace] = f / (1 + s.HeH2)
		w.x[m.nTrace+1] = f * s.HeH2 / (1 + s.HeH2)
	} else {
		w.x[m.nTrace] = f
	}
	mu := 0.0
	for i, v := range w.x {
		mu += v * m.mass[i]
	}
	if !(mu > 0) {
		return geometry{}, w.fail(ErrInvalidState, "mean molecular weight", mu)
	}

	GM := Gravitation * s.Mass
	gRef := GM / (s.RefRadius * s.RefRadius)
	if err := s.Profile.TemperatureTo(w.temp, m.pLayer, gRef); err != nil {
		return geometry{}, w.fail(ErrTemperature, "temperature", math.NaN())
	}
	for j, t := range w.temp {
		if !(t > 0) || math.IsInf(t, 0) {
			return geometry{}, w.fail(ErrTemperature, "temperature", t)
		}
		w.coef[j] = Boltzmann * t / (mu * AtomicMass * GM)
		w.nd[j] = m.pLayer[j] / (Boltzmann * t)
	}
	jr := m.refLay
	invRef := 1 / s.RefRadius
	w.invR[jr+1] = invRef - w.coef[jr]*math.Log(m.refP/m.pLevel[jr+1])
	w.invR[jr] = invRef + w.coef[jr]*math.Log(m.pLevel[jr]/m.refP)
	for j := jr + 1; j < n; j++ {
		w.invR[j+1] = w.invR[j] - w.coef[j]*m.dlnp[j]
	}
	for j := jr - 1; j >= 0; j-- {
		w.invR[j] = w.invR[j+1] + w.coef[j]*m.dlnp[j]
	}
	if !(w.invR[n] > 0) {
		return geometry{}, w.fail(ErrUnbound, "", w.invR[n])
	}
	for i, v := range w.invR {
		w.r[i] = 1 / v
	}
	for i := range n {
		w.area[i] = (w.r[i+1] - w.r[i]) * (w.r[i+1] + w.r[i])
	}
	w.MeanMolecularWeight = mu

	// Cloud deck: ray kc holds r_c; rays below it are opaque.
	g := geometry{n: n, kc: -1, rs2: s.StarRadius * s.StarRadius, r0sq: w.r[0] * w.r[0]}
	if s.CloudTop > 0 && s.CloudFraction > 0 {
		g.phi = s.CloudFraction
		if s.CloudTop <= m.pLevel[n] {
			g.kc, g.rc = n, w.r[n]
		} else {
			g.kc = n - 1
			for j := range n {
				if s.CloudTop >= m.pLevel[j+1] {
					g.kc = j
					break
				}
			}
			g.rc = 1 / (w.invR[g.kc] - w.coef[g.kc]*math.Log(m.pLevel[g.kc]/s.CloudTop))
		}
	}
	if g.phi == 1 {
		g.jlo = min(g.kc, n)
	}
	if g.covered() {
		return g, nil
	}
	if g.kc >= 0 && g.kc < n {
		g.kcAbove = (w.r[g.kc+1] - g.rc) * (w.r[g.kc+1] + g.rc)
		g.kcWhole = w.area[g.kc]
	}

	// Path matrix rows of the rays that need an optical depth.
	for i := g.jlo; i < n; i++ {
		b := 0.5 * (w.r[i] + w.r[i+1])
		row := w.path[i*n : (i+1)*n]
		prev := 0.0
		for j := i; j < n; j++ {
			cur := math.Sqrt((w.r[j+1] - b) * (w.r[j+1] + b))
			row[j] = 2 * (cur - prev)
			prev = cur
		}
	}
	return g, nil
}

// scattering fills w.scat with the Rayleigh and haze cross-sections per
// molecule at every model point.
func (m *Model) scattering(w *Workspace, s *State) {
	sc := w.scat
	for k := range sc {
		sc[k] = 0
	}
	for sp, rs := range m.rayleigh {
		if rs != nil && w.x[sp] != 0 {
			floats.AddScaled(sc, w.x[sp], rs)
		}
	}
	if s.HazeFactor > 0 {
		a := s.HazeFactor * m.hazeSig
		for k := range sc {
			sc[k] += a * math.Exp(s.HazeSlope*m.lnw[k])
		}
	}
}

// allSaturated reports whether every tau[k] >= satTau; it stops at the
// first point below, usually the first.
func allSaturated(tau []float64) bool {
	for _, t := range tau {
		if !(t >= satTau) {
			return false
		}
	}
	return true
}

// addAbsorbed adds a (1 - exp(-tau[k])) to dst[k], with the arithmetic of
// oneMinusExpNeg written out (the compiler does not inline it).
func addAbsorbed(dst []float64, a float64, tau []float64) {
	tau = tau[:len(dst)]
	for k, t := range tau {
		if t > satTau { // a compare and move; the builtin min is slower here
			t = satTau
		}
		q := (t*expInv + expRounds) - expRounds
		r := (t - q*expLn2Hi) - q*expLn2Lo
		iq := int(q)
		r2 := r * r
		p := (1 - r) + r2*(0.5-r*(1.0/6)) + r2*r2*(1.0/24-r*(1.0/120))
		dst[k] += a * (1 - p*math.Float64frombits(uint64(1023-(iq>>6))<<52)*absorbedTable[iq&63])
	}
}

// prepareGroups sets each table group's coefficients, the grid rows the
// layers from jlo up touch, and each layer's interpolation corners.
func (m *Model) prepareGroups(w *Workspace, jlo int) {
	n := len(m.pLayer)
	for gi, g := range m.groups {
		gw := &w.grp[gi]
		gw.active = false
		for mi, mem := range g.members {
			c := w.x[mem.sp[0]]
			if mem.sp[1] >= 0 {
				c *= w.x[mem.sp[1]]
			}
			gw.coef[mi] = c
			if c != 0 {
				gw.active = true
			}
		}
		for _, row := range gw.rows {
			gw.slotOf[row] = -1
		}
		gw.rows = gw.rows[:0]
		if !gw.active {
			continue
		}
		for j := jlo; j < n; j++ {
			ip, wp := 0, 0.0
			if g.log10P != nil {
				lp := m.log10P[j]
				if lp < g.log10P[0] || lp > g.log10P[len(g.log10P)-1] {
					w.Clamped = true
				}
				ip, wp = opacity.Weights(g.log10P, lp)
			}
			t := w.temp[j]
			if t < g.t[0] || t > g.t[len(g.t)-1] {
				w.Clamped = true
			}
			it, wt := opacity.Weights(g.t, t)
			c := [4]corner{
				{slot: 0, w: (1 - wp) * (1 - wt)},
				{slot: 1, w: wp * (1 - wt)},
				{slot: 2, w: (1 - wp) * wt},
				{slot: 3, w: wp * wt},
			}
			for q := range c {
				if c[q].w == 0 {
					c[q].slot = -1
					continue
				}
				row := (ip+q%2)*g.nT + it + q/2
				sl := gw.slotOf[row]
				if sl < 0 {
					sl = len(gw.rows)
					gw.rows = append(gw.rows, row)
					gw.slotOf[row] = sl
				}
				c[q].slot = sl
			}
			gw.corner[j] = c
		}
	}
}

// mixBlock forms, for points [k0, k1), each touched grid row's
// mixing-ratio-weighted sum over the group's tables. Interpolation is
// linear, so mixing before interpolating is exact.
func (m *Model) mixBlock(w *Workspace, k0, k1 int) {
	M := len(m.wl)
	nb := k1 - k0
	for gi, g := range m.groups {
		gw := &w.grp[gi]
		if !gw.active {
			continue
		}
		for sl, row := range gw.rows {
			buf := gw.buf[sl*blockLen : sl*blockLen+nb]
			first := true
			for mi, mem := range g.members {
				c := gw.coef[mi]
				if c == 0 {
					continue
				}
				src := mem.data[row*M+k0 : row*M+k1]
				if first {
					for k, v := range src {
						buf[k] = c * v
					}
					first = false
				} else {
					floats.AddScaled(buf, c, src)
				}
			}
		}
	}
}

// alphaBlock fills the absorption coefficients (m^-1) of layers jlo.. for
// points [k0, k1): n (sum_g x_g sigma_g + Rayleigh + haze + grey) +
// n^2 sum_pairs x_a x_b k_ab.
func (m *Model) alphaBlock(w *Workspace, jlo, k0, k1 int) {
	nb := k1 - k0
	sc := w.scat[k0:k1]
	for j := jlo; j < len(m.pLayer); j++ {
		row := w.alpha[(j-jlo)*blockLen : (j-jlo)*blockLen+nb]
		nd := w.nd[j]
		grey := m.grey.SigmaAt(m.pLayer[j])
		for k, v := range sc {
			row[k] = nd * (v + grey)
		}
		for gi, g := range m.groups {
			gw := &w.grp[gi]
			if !gw.active {
				continue
			}
			scale := nd
			if g.cia {
				scale = nd * nd
			}
			for _, c := range gw.corner[j] {
				if c.slot < 0 {
					continue
				}
				floats.AddScaled(row, scale*c.w, gw.buf[c.slot*blockLen:c.slot*blockLen+nb])
			}
		}
	}
}

func (m *Model) checkState(s *State, w *Workspace) error {
	bad := func(v float64) bool { return math.IsNaN(v) || math.IsInf(v, 0) }
	if s.Profile == nil {
		return w.fail(ErrInvalidState, "temperature profile (nil)", math.NaN())
	}
	sum := 0.0
	for i, v := range s.VMR {
		if bad(v) || v < 0 || v > 1 {
			w.fail(ErrInvalidState, "mixing ratio", v)
			w.err.Gas = m.gases[i]
			return &w.err
		}
		sum += v
	}
	if sum > 1 {
		return w.fail(ErrMixingRatio, "", sum)
	}
	if m.fill == FillH2He && (bad(s.HeH2) || s.HeH2 < 0) {
		return w.fail(ErrInvalidState, "He/H2 ratio", s.HeH2)
	}
	if bad(s.RefRadius) || !(s.RefRadius > 0) {
		return w.fail(ErrInvalidState, "reference radius (m)", s.RefRadius)
	}
	if bad(s.Mass) || !(s.Mass > 0) {
		return w.fail(ErrInvalidState, "planet mass (kg)", s.Mass)
	}
	if bad(s.StarRadius) || !(s.StarRadius > 0) {
		return w.fail(ErrInvalidState, "stellar radius (m)", s.StarRadius)
	}
	if bad(s.CloudTop) || s.CloudTop < 0 {
		return w.fail(ErrInvalidState, "cloud-top pressure (Pa)", s.CloudTop)
	}
	if s.CloudTop > m.pLevel[0] {
		return w.fail(ErrCloudBelow, "", s.CloudTop)
	}
	if s.CloudTop > 0 && (bad(s.CloudFraction) || s.CloudFraction < 0 || s.CloudFraction > 1) {
		return w.fail(ErrInvalidState, "cloud fraction", s.CloudFraction)
	}
	if bad(s.HazeFactor) || s.HazeFactor < 0 {
		return w.fail(ErrInvalidState, "haze strength", s.HazeFactor)
	}
	if bad(s.HazeSlope) {
		return w.fail(ErrInvalidState, "haze index", s.HazeSlope)
	}
	return nil
}
