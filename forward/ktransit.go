package forward

import (
	"cmp"
	"math"
	"slices"

	"gonum.org/v1/gonum/blas/gonum"
	"gonum.org/v1/gonum/floats"

	"chord/forward/opacity"
)

// kWork is the k-distribution part of a Workspace.
type kWork struct {
	bpb    int           // bins per block of the resort-rebin overlap
	pbb    int           // bins per block of the product overlap
	corner [][][4]corner // per gas, per layer: table rows (slot = row) and weights
	ciaW   [][]corner    // per CIA table, per layer: row it (slot) and weight of it+1 (w)
	scat   []float64     // per bin: Rayleigh and haze cross-section per molecule
	grey   []float64     // per layer: grey cross-section
	active []bool        // per gas: mixing ratio above 0
	alpha  []float64     // n x (bpb*ng): one gas's absorption coefficients
	ag     []float64     // n x bpb: grey absorption coefficients
	tau    []float64     // bpb*ng
	trans  []float64     // n x bpb: transmission of each ray
	acc    []float64     // bpb
	low    []float64
	tkc    []float64
	merge  []mergeAtom // resort-rebin: ng*ng atoms
	mix    []float64   // resort-rebin: ng

	// The product overlap works on all bins at once.
	agAll       []float64 // n x nb: grey absorption coefficients
	agg         []float64 // n x nb: gases taken as grey
	transAll    []float64 // n x nb: transmission of each ray and bin
	tauAll      []float64 // nb
	live        []int     // per bin: lowest ray that transmits
	column      []float64 // per ray: molecules per unit area along it
	kmax        []float64 // per bin: largest top-node k of the rows a ray crosses
	kbar        []float64 // per bin: largest mean k of the rows a ray crosses
	rg          []int     // per bin: lowest ray from which the current gas is grey
	state       []int8    // per bin: rayDark, rayGrey or rayFull for the current gas
	candRuns    []binRun  // runs of bins that may need the current gas's k-distribution
	greyBinRuns []binRun  // runs of bins that take the current gas as grey
	rows        []int     // the current gas's table rows that the layers touch
	rowOf       []int     // table row -> index in rows, -1 when untouched
	pos         [][4]int  // per layer: index in rows of each corner
	nRows       []int     // per ray: rows [0, nRows[i]) are those it crosses
	rowPath     []float64 // n x 4n: per ray, the weight of each row
	rowAcc      []float64 // 4n
	tau32       []float32 // pbb*ng
	tm          []float64 // pbb
	fullRuns    []binRun  // along one ray: runs of a block's bins that need the k-distribution
	greyRuns    []binRun  // along one ray: runs of a block's bins that take the gas as grey
	order       []int     // gases, strongest first
	strength    []float64 // per gas
	bins        []int     // the current gas's bins that need its k-distribution along some ray
	accAll      []float64 // nb
	lowAll      []float64
	tkcAll      []float64
}

type mergeAtom struct{ v, w float64 }

func (m *Model) newKWork(n int) *kWork {
	km := m.k
	// The product overlap's blocks are wider: every ray reads the block's
	// part of the table rows it crosses (a few hundred KB, in L2) and the
	// longer runs of bins cut the calls per row.
	bpb, pbb := blockLen, blockLen
	if km.ng > 0 {
		bpb, pbb = max(1, blockLen/km.ng), max(1, 4*blockLen/km.ng)
	}
	maxRows := 0
	for _, kg := range km.gases {
		maxRows = max(maxRows, len(kg.mean)/km.nb)
	}
	kw := &kWork{
		bpb:    bpb,
		pbb:    pbb,
		corner: make([][][4]corner, len(km.gases)),
		ciaW:   make([][]corner, len(km.cia)),
		scat:   make([]float64, km.nb),
		grey:   make([]float64, n),
		active: make([]bool, len(km.gases)),
		alpha:  make([]float64, n*bpb*km.ng),
		ag:     make([]float64, n*bpb),
		tau:    make([]float64, bpb*km.ng),
		trans:  make([]float64, n*bpb),
		acc:    make([]float64, bpb),
		low:    make([]float64, bpb),
		tkc:    make([]float64, bpb),
		merge:  make([]mergeAtom, km.ng*km.ng),
		mix:    make([]float64, km.ng),

		agAll:       make([]float64, n*km.nb),
		agg:         make([]float64, n*km.nb),
		transAll:    make([]float64, n*km.nb),
		tauAll:      make([]float64, km.nb),
		live:        make([]int, km.nb),
		column:      make([]float64, n),
		kmax:        make([]float64, km.nb),
		kbar:        make([]float64, km.nb),
		rg:          make([]int, km.nb),
		state:       make([]int8, km.nb),
		candRuns:    make([]binRun, 0, km.nb),
		greyBinRuns: make([]binRun, 0, km.nb),
		rows:        make([]int, 0, 4*n),
		rowOf:       make([]int, maxRows),
		pos:         make([][4]int, n),
		nRows:       make([]int, n),
		rowPath:     make([]float64, n*4*n),
		rowAcc:      make([]float64, 4*n),
		tau32:       make([]float32, pbb*km.ng),
		tm:          make([]float64, pbb),
		fullRuns:    make([]binRun, 0, pbb),
		greyRuns:    make([]binRun, 0, pbb),
		order:       make([]int, 0, len(km.gases)),
		strength:    make([]float64, len(km.gases)),
		bins:        make([]int, 0, km.nb),
		accAll:      make([]float64, km.nb),
		lowAll:      make([]float64, km.nb),
		tkcAll:      make([]float64, km.nb),
	}
	for i := range kw.corner {
		kw.corner[i] = make([][4]corner, n)
	}
	for i := range kw.rowOf {
		kw.rowOf[i] = -1
	}
	for i := range kw.ciaW {
		kw.ciaW[i] = make([]corner, n)
	}
	return kw
}

// transitK is Transit in k-distribution mode: per bin, the transmission of
// every ray from the gases' k-distributions (combined as km.overlap says)
// and the grey absorbers (Rayleigh scattering, haze, the grey absorber and
// collision-induced absorption, averaged over the bin).
func (m *Model) transitK(dst []float64, s *State, w *Workspace) error {
	g, err := m.atmosphere(s, w)
	if err != nil {
		return err
	}
	if g.covered() {
		g.fillCovered(dst, s)
		return nil
	}
	m.prepareK(w, g.jlo, s)
	if m.k.overlap == OverlapResortRebin {
		m.transitResortRebin(dst, w, g)
		return nil
	}
	m.transitProduct(dst, w, g)
	return nil
}

// greyErr is the largest error in a ray's transmission that taking a gas
// as grey (its mean k instead of its k-distribution) may cause. Replacing
// sum_g W_g exp(-tau_g) by exp(-tbar), tbar = sum_g W_g tau_g, errs by at
// most half the variance of tau over g (Jensen's inequality, with the
// second derivative of exp(-t) at most 1 for t >= 0), and the variance is
// at most (max(tau) - tbar) tbar (the Bhatia-Davis inequality: R. Bhatia &
// C. Davis 2000, Amer. Math. Monthly 107, 353; from memory), never more
// than max(tau)^2 / 4. 5e-5 is that bound for max(tau) = 0.02: far below a
// ppm of depth, since only the few rays near the limit come close to it.
const greyErr = 5e-5

// greyEnough reports whether a gas whose optical depth along a ray is at
// most mx at its strongest node and at most mean on average over g may be
// taken as grey there: half the largest variance those bounds allow is
// below greyErr.
func greyEnough(mx, mean float64) bool {
	v := mx * mx / 4
	if mean < mx/2 {
		v = mean * (mx - mean)
	}
	return v < 2*greyErr
}

// transitProduct computes the depths with the product overlap: the grey
// absorbers of all bins first, then each gas, with its k-distribution
// along the rays where it is not negligible and as grey elsewhere.
func (m *Model) transitProduct(dst []float64, w *Workspace, g geometry) {
	km, kw := m.k, w.k
	n, nb := g.n, km.nb
	// Grey absorbers and the transmission they leave; the lowest ray of
	// each bin that still transmits.
	m.greyAlphaAll(w, g.jlo)
	clear(kw.transAll[g.jlo*nb : n*nb])
	m.addOpticalDepth(w, g.jlo, kw.agAll)
	m.transFromTau(w, g.jlo)
	m.columns(w, g.jlo)
	// The gases, strongest first, each along the rays that still transmit:
	// in bins where it is grey along all of them its mean joins kw.agg,
	// whose transmission multiplies in at the end; in the others gasBlock
	// takes it with its k-distribution below kw.rg[b], as grey above.
	clear(kw.agg[g.jlo*nb : n*nb])
	anyGrey := false
	for _, gi := range m.gasOrder(w, g.jlo) {
		m.liveRays(w, g.jlo)
		jlo := n
		for _, l := range kw.live {
			jlo = min(jlo, l)
		}
		if jlo == n {
			break
		}
		m.gasRows(w, gi, jlo)
		anyGrey = m.classifyGas(w, gi, jlo) || anyGrey
		bins := kw.bins
		for c0 := 0; c0 < len(bins); c0 += kw.pbb {
			m.gasBlock(w, gi, bins[c0:min(c0+kw.pbb, len(bins))])
		}
	}
	if anyGrey {
		m.addOpticalDepthTrans(w, g.jlo, kw.agg)
	}
	// Depths.
	clear(kw.accAll)
	clear(kw.lowAll)
	clear(kw.tkcAll)
	for i := g.jlo; i < n; i++ {
		a, d := g.rayArea(i, w), g.rayDest(i, kw.accAll, kw.lowAll, kw.tkcAll)
		tr := kw.transAll[i*nb : (i+1)*nb]
		for b := range d {
			d[b] += a * (1 - tr[b])
		}
	}
	g.depths(dst, kw.accAll, kw.lowAll, kw.tkcAll)
}

// greyAlphaAll fills kw.agAll with the grey absorption coefficients of every
// bin in layers jlo.. .
func (m *Model) greyAlphaAll(w *Workspace, jlo int) {
	km, kw := m.k, w.k
	nb := km.nb
	for j := jlo; j < len(m.pLayer); j++ {
		nd := w.nd[j]
		row := kw.agAll[j*nb : (j+1)*nb]
		for b := range row {
			row[b] = nd * (kw.scat[b] + kw.grey[j])
		}
		for ci, c := range km.cia {
			x := w.x[c.sp[0]] * w.x[c.sp[1]]
			if x == 0 {
				continue
			}
			cw := kw.ciaW[ci][j]
			f := x * nd * nd
			floats.AddScaled(row, f*(1-cw.w), c.k[cw.slot*nb:(cw.slot+1)*nb])
			if cw.w != 0 {
				floats.AddScaled(row, f*cw.w, c.k[(cw.slot+1)*nb:(cw.slot+2)*nb])
			}
		}
	}
}

// addOpticalDepth adds to kw.transAll (used here as optical depth) the
// slant optical depth of every ray i >= jlo through absorption alpha
// (layers x bins).
func (m *Model) addOpticalDepth(w *Workspace, jlo int, alpha []float64) {
	kw := w.k
	n, nb := len(m.pLayer), m.k.nb
	for i := jlo; i < n; i++ {
		ds := w.path[i*n : (i+1)*n]
		tau := kw.transAll[i*nb : (i+1)*nb]
		for j := i; j < n; j++ {
			floats.AddScaled(tau, ds[j], alpha[j*nb:(j+1)*nb])
		}
	}
}

// transFromTau turns the optical depths in kw.transAll into transmissions.
func (m *Model) transFromTau(w *Workspace, jlo int) {
	kw := w.k
	nb := m.k.nb
	for k, t := range kw.transAll[jlo*nb : len(m.pLayer)*nb] {
		kw.transAll[jlo*nb+k] = expNeg(t)
	}
}

// addOpticalDepthTrans multiplies kw.transAll by exp(-tau) of absorption
// alpha along every ray that still transmits.
func (m *Model) addOpticalDepthTrans(w *Workspace, jlo int, alpha []float64) {
	kw := w.k
	n, nb := len(m.pLayer), m.k.nb
	tau := kw.tauAll
	for i := jlo; i < n; i++ {
		tr := kw.transAll[i*nb : (i+1)*nb]
		if allZero(tr) {
			continue
		}
		clear(tau)
		ds := w.path[i*n : (i+1)*n]
		for j := i; j < n; j++ {
			floats.AddScaled(tau, ds[j], alpha[j*nb:(j+1)*nb])
		}
		for b, t := range tau {
			tr[b] *= expNeg(t)
		}
	}
}

// liveRays sets kw.live[b], the lowest ray of bin b whose transmission is
// not 0 (n when none is).
func (m *Model) liveRays(w *Workspace, jlo int) {
	kw := w.k
	n, nb := len(m.pLayer), m.k.nb
	for b := range nb {
		kw.live[b] = n
	}
	for i := n - 1; i >= jlo; i-- {
		for b, t := range kw.transAll[i*nb : (i+1)*nb] {
			if t > 0 {
				kw.live[b] = i
			}
		}
	}
}

// columns sets kw.column[i], the number of molecules per unit area along
// ray i (sum_j ds_ij n_j).
func (m *Model) columns(w *Workspace, jlo int) {
	kw := w.k
	n := len(m.pLayer)
	for i := jlo; i < n; i++ {
		c := 0.0
		for j, ds := range w.path[i*n+i : (i+1)*n] {
			c += ds * w.nd[i+j]
		}
		kw.column[i] = c
	}
}

// gasOrder returns the gases with a mixing ratio above 0, strongest first:
// by x times the largest top-node k of any bin at layer jlo, the deepest
// whose interpolation corners this call has set, a rough measure that only
// orders the work.
func (m *Model) gasOrder(w *Workspace, jlo int) []int {
	km, kw := m.k, w.k
	nb := km.nb
	ord := kw.order[:0]
	for gi := range km.gases {
		if !kw.active[gi] {
			continue
		}
		kg := &km.gases[gi]
		s := 0.0
		for _, c := range kw.corner[gi][jlo] {
			if c.slot < 0 {
				continue
			}
			for _, v := range kg.top[c.slot*nb : (c.slot+1)*nb] {
				s = max(s, v)
			}
		}
		kw.strength[gi] = s * w.x[kg.sp]
		ord = append(ord, gi)
	}
	slices.SortStableFunc(ord, func(a, b int) int { return cmp.Compare(kw.strength[b], kw.strength[a]) })
	kw.order = ord
	return ord
}

// gasRows lists the table rows of gas gi that layers jlo.. touch, in the
// order the layers meet them from the top down, so that ray i, which
// crosses layers i.., needs rows [0, kw.nRows[i]) (the later, the deeper);
// and fills kw.rowPath: in row i, the weight of each of those rows in ray
// i's optical depth, M_ip = sum_{j>=i} x n_j ds_ij w_jp with w_jp layer j's
// interpolation weight of row p. Interpolation is linear, so ray i's
// optical depth at every node and bin is sum_p M_ip k_p, read straight from
// the table: no per-layer interpolation, and about as many rows as layers.
func (m *Model) gasRows(w *Workspace, gi, jlo int) {
	km, kw := m.k, w.k
	n := len(m.pLayer)
	for _, r := range kw.rows {
		kw.rowOf[r] = -1
	}
	rows := kw.rows[:0]
	for j := n - 1; j >= jlo; j-- {
		for q, c := range kw.corner[gi][j] {
			if c.slot < 0 {
				continue
			}
			p := kw.rowOf[c.slot]
			if p < 0 {
				p = len(rows)
				rows = append(rows, c.slot)
				kw.rowOf[c.slot] = p
			}
			kw.pos[j][q] = p
		}
		kw.nRows[j] = len(rows)
	}
	kw.rows = rows
	x := w.x[km.gases[gi].sp]
	stride := 4 * n
	for i := jlo; i < n; i++ {
		acc := kw.rowAcc[:kw.nRows[i]]
		clear(acc)
		ds := w.path[i*n : (i+1)*n]
		for j := i; j < n; j++ {
			f := x * w.nd[j] * ds[j]
			for q, c := range kw.corner[gi][j] {
				if c.slot >= 0 {
					acc[kw.pos[j][q]] += f * c.w
				}
			}
		}
		copy(kw.rowPath[i*stride:], acc)
	}
}

// classifyGas decides, per bin, how gas gi enters the rays that still
// transmit. Where greyEnough holds, along every live ray, for the bounds
// x N_i kmax and x N_i kbar of the gas's optical depth along ray i at its
// strongest node and on average over g (N_i the ray's column, kmax and
// kbar the largest top-node and mean k of the table rows it crosses, which
// bound the interpolants), the bin is in kw.greyBinRuns and the gas's
// mean, x n_j kmean_j, is added to its kw.agg. The others are listed in
// kw.bins, with kw.rg[b] the lowest ray from which up the test holds:
// rays from there take the gas as grey. It reports whether any bin was
// grey.
func (m *Model) classifyGas(w *Workspace, gi, jlo int) bool {
	km, kw := m.k, w.k
	n, nb := len(m.pLayer), km.nb
	kg := &km.gases[gi]
	x := w.x[kg.sp]
	// Bins that pass at every live ray even with the table's largest k
	// and the largest column are grey without a closer look.
	nmax := 0.0
	for _, c := range kw.column[jlo:n] {
		nmax = max(nmax, c)
	}
	st := kw.state
	for b, l := range kw.live {
		switch {
		case l == n:
			st[b] = rayDark
		case greyEnough(x*nmax*kg.topMax[b], x*nmax*kg.meanMax[b]):
			st[b] = rayGrey
		default:
			st[b] = rayFull // a candidate
		}
	}
	cand := stateRuns(kw.candRuns[:0], st, rayFull)
	kw.candRuns = cand
	// kmax[b], kbar[b]: the largest top-node and mean k of the rows ray i
	// crosses, accumulated from the top down.
	kmax, kbar, rg := kw.kmax, kw.kbar, kw.rg
	for _, c := range cand {
		clear(kmax[c.lo:c.hi])
		clear(kbar[c.lo:c.hi])
		for b := c.lo; b < c.hi; b++ {
			rg[b] = n
		}
	}
	p := 0
	for i := n - 1; i >= jlo; i-- {
		for ; p < kw.nRows[i]; p++ {
			r := kw.rows[p]
			for _, c := range cand {
				top, mean := kg.top[r*nb+c.lo:r*nb+c.hi], kg.mean[r*nb+c.lo:r*nb+c.hi]
				kx, kb := kmax[c.lo:c.hi], kbar[c.lo:c.hi]
				kx, kb = kx[:len(top)], kb[:len(top)]
				mean = mean[:len(top)]
				for k, v := range top {
					if v > kx[k] {
						kx[k] = v
					}
					if mean[k] > kb[k] {
						kb[k] = mean[k]
					}
				}
			}
		}
		xn := x * kw.column[i]
		for _, c := range cand {
			for b := c.lo; b < c.hi; b++ {
				if rg[b] == i+1 && greyEnough(xn*kmax[b], xn*kbar[b]) {
					rg[b] = i
				}
			}
		}
	}
	full := kw.bins[:0]
	for _, c := range cand {
		for b := c.lo; b < c.hi; b++ {
			if rg[b] > kw.live[b] {
				full = append(full, b)
			} else {
				st[b] = rayGrey
			}
		}
	}
	kw.bins = full
	grey := stateRuns(kw.greyBinRuns[:0], st, rayGrey)
	kw.greyBinRuns = grey
	if len(grey) == 0 {
		return false
	}
	for j := jlo; j < n; j++ {
		f := x * w.nd[j]
		row := kw.agg[j*nb : (j+1)*nb]
		for _, c := range kw.corner[gi][j] {
			if c.slot < 0 {
				continue
			}
			mean := kg.mean[c.slot*nb : (c.slot+1)*nb]
			cw := f * c.w
			for _, r := range grey {
				a, mn := row[r.lo:r.hi], mean[r.lo:r.hi]
				mn = mn[:len(a)]
				for k := range a {
					a[k] += cw * mn[k]
				}
			}
		}
	}
	return true
}

// States of a bin along a ray, or along all of them, for one gas.
const (
	rayDark int8 = iota // transmits nothing
	rayFull             // needs the gas's k-distribution
	rayGrey             // takes the gas as grey
)

// gasBlock multiplies the transmissions of the bins blk (ascending) by that
// of gas gi, ray by ray: where the ray needs it (below kw.rg[b]), from the
// gas's optical depth at every node, sum_g W_g exp(-tau_g); above, from the
// optical depth of its mean. Each ray works on runs of bins in the same
// state that are consecutive in the table, whose rows hold them
// contiguously.
//
// The optical depths at the nodes are summed in float32, like the tables:
// its relative rounding (6e-8 a term) moves exp(-tau) by at most 6e-8 tau
// exp(-tau) a term, below 1e-6 of a ray's transmission over a hundred rows.
func (m *Model) gasBlock(w *Workspace, gi int, blk []int) {
	km, kw := m.k, w.k
	n, nb, ng := len(m.pLayer), km.nb, km.ng
	kg := &km.gases[gi]
	rowLen := nb * ng
	stride := 4 * n
	jlo := n
	for _, b := range blk {
		jlo = min(jlo, kw.live[b])
	}
	tau, tm := kw.tau32[:len(blk)*ng], kw.tm[:len(blk)]
	var impl gonum.Implementation
	for i := jlo; i < n; i++ {
		tr := kw.transAll[i*nb : (i+1)*nb]
		full, grey := kw.runs(blk, tr, i)
		if len(full)+len(grey) == 0 {
			continue
		}
		nr := kw.nRows[i]
		mp := kw.rowPath[i*stride : i*stride+nr]
		if len(full) > 0 {
			for _, r := range full {
				clear(tau[r.lo*ng : r.hi*ng])
			}
			// From the deepest row up; the partial sums are lower bounds,
			// checked at doubling intervals for saturation of every
			// column, as in TransitFine.
			check, saturated := 1, false
			for p := nr - 1; p >= 0; p-- {
				row := kg.k[kw.rows[p]*rowLen : (kw.rows[p]+1)*rowLen]
				// The weights are far below float32's largest value (3e38)
				// in any atmosphere; the min only keeps them finite.
				c := float32(min(mp[p], math.MaxFloat32))
				for _, r := range full {
					impl.Saxpy((r.hi-r.lo)*ng, c, row[blk[r.lo]*ng:], 1, tau[r.lo*ng:], 1)
				}
				if nr-p == check {
					if saturated32(full, tau, ng) {
						saturated = true
						break
					}
					check *= 2
				}
			}
			for _, r := range full {
				for bb := r.lo; bb < r.hi; bb++ {
					if saturated {
						tr[blk[bb]] = 0
						continue
					}
					tr[blk[bb]] *= transmission(km.w, tau[bb*ng:(bb+1)*ng])
				}
			}
		}
		if len(grey) > 0 {
			for _, r := range grey {
				t := tm[r.lo:r.hi]
				clear(t)
				for p, c := range mp {
					row := kw.rows[p]*nb + blk[r.lo]
					mean := kg.mean[row : row+len(t)]
					for bb, v := range mean {
						t[bb] += c * v
					}
				}
				for bb, v := range t {
					tr[blk[r.lo+bb]] *= expNeg(v)
				}
			}
		}
	}
}

// binRun is a run [lo, hi) of bins, or of positions in a block.
type binRun struct{ lo, hi int }

// stateRuns appends to dst the runs of bins b with st[b] == want.
func stateRuns(dst []binRun, st []int8, want int8) []binRun {
	for b, v := range st {
		if v != want {
			continue
		}
		if len(dst) > 0 && dst[len(dst)-1].hi == b {
			dst[len(dst)-1].hi = b + 1
		} else {
			dst = append(dst, binRun{b, b + 1})
		}
	}
	return dst
}

// runs splits the bins blk along ray i into runs of bins in the same state
// (rayFull or rayGrey) and consecutive in the table.
func (kw *kWork) runs(blk []int, tr []float64, i int) (full, grey []binRun) {
	full, grey = kw.fullRuns[:0], kw.greyRuns[:0]
	prev, prevB := rayDark, -2
	for bb, b := range blk {
		st := rayDark
		switch {
		case tr[b] == 0:
		case i < kw.rg[b]:
			st = rayFull
		default:
			st = rayGrey
		}
		if st == prev && b == prevB+1 {
			if st == rayFull {
				full[len(full)-1].hi = bb + 1
			} else if st == rayGrey {
				grey[len(grey)-1].hi = bb + 1
			}
		} else if st == rayFull {
			full = append(full, binRun{bb, bb + 1})
		} else if st == rayGrey {
			grey = append(grey, binRun{bb, bb + 1})
		}
		prev, prevB = st, b
	}
	kw.fullRuns, kw.greyRuns = full, grey
	return full, grey
}

// saturated32 reports whether every node of the runs (ng nodes a bin) has
// reached satTau.
func saturated32(runs []binRun, tau []float32, ng int) bool {
	for _, r := range runs {
		for _, t := range tau[r.lo*ng : r.hi*ng] {
			if !(t >= satTau) {
				return false
			}
		}
	}
	return true
}

// transmission returns sum_q w_q exp(-tau_q) for optical depths tau
// non-decreasing in q: 0 when the first reaches satTau, else with
// exp(-min(tau, satTau)) at every node (a node from satTau on adds
// w_q exp(-38), below 4e-17) and no branch on the values; the arithmetic
// of expNeg written out, two nodes at a time.
func transmission(w []float64, tau []float32) float64 {
	if len(tau) == 0 || tau[0] >= satTau {
		return 0
	}
	w = w[:len(tau)]
	var s0, s1 float64
	for len(tau) >= 2 && len(w) >= 2 {
		t0, t1 := float64(tau[0]), float64(tau[1])
		if t0 > satTau {
			t0 = satTau
		}
		if t1 > satTau {
			t1 = satTau
		}
		k0 := (t0*expInv256 + expRounds) - expRounds
		k1 := (t1*expInv256 + expRounds) - expRounds
		r0, r1 := t0-k0*expLn2256, t1-k1*expLn2256
		i0, i1 := int(k0), int(k1)
		p0 := (1 - r0) + r0*r0*(0.5-r0*(1.0/6))
		p1 := (1 - r1) + r1*r1*(0.5-r1*(1.0/6))
		s0 += w[0] * p0 * math.Float64frombits(uint64(1023-(i0>>8))<<52) * transmittedTable[i0&255]
		s1 += w[1] * p1 * math.Float64frombits(uint64(1023-(i1>>8))<<52) * transmittedTable[i1&255]
		tau, w = tau[2:], w[2:]
	}
	if len(tau) > 0 && len(w) > 0 {
		s0 += w[0] * expNeg(float64(tau[0]))
	}
	return s0 + s1
}

// transitResortRebin computes the depths with the resort-rebin overlap, a
// block of bins at a time.
func (m *Model) transitResortRebin(dst []float64, w *Workspace, g geometry) {
	km, kw := m.k, w.k
	n := g.n
	for b0 := 0; b0 < km.nb; b0 += kw.bpb {
		b1 := min(b0+kw.bpb, km.nb)
		nbb := b1 - b0
		m.greyAlphaK(w, g.jlo, b0, b1)
		m.resortRebin(w, g.jlo, b0, b1)
		acc, low, tkc := kw.acc[:nbb], kw.low[:nbb], kw.tkc[:nbb]
		clear(acc)
		clear(low)
		clear(tkc)
		for i := g.jlo; i < n; i++ {
			a, d := g.rayArea(i, w), g.rayDest(i, acc, low, tkc)
			tr := kw.trans[i*kw.bpb : i*kw.bpb+nbb]
			for bb := range d {
				d[bb] += a * (1 - tr[bb])
			}
		}
		g.depths(dst[b0:b1], acc, low, tkc)
	}
}

// prepareK sets each gas's interpolation corners per layer, the CIA
// temperature weights, the bins' scattering and the layers' grey
// cross-sections.
func (m *Model) prepareK(w *Workspace, jlo int, s *State) {
	km, kw := m.k, w.k
	n := len(m.pLayer)
	for gi := range km.gases {
		kg := &km.gases[gi]
		kw.active[gi] = w.x[kg.sp] > 0
		if !kw.active[gi] {
			continue
		}
		for j := jlo; j < n; j++ {
			lp, t := m.log10P[j], w.temp[j]
			if lp < kg.log10P[0] || lp > kg.log10P[len(kg.log10P)-1] || t < kg.t[0] || t > kg.t[len(kg.t)-1] {
				w.Clamped = true
			}
			ip, wp := opacity.Weights(kg.log10P, lp)
			it, wt := opacity.Weights(kg.t, t)
			c := &kw.corner[gi][j]
			*c = [4]corner{
				{slot: ip*kg.nT + it, w: (1 - wp) * (1 - wt)},
				{slot: (ip+1)*kg.nT + it, w: wp * (1 - wt)},
				{slot: ip*kg.nT + it + 1, w: (1 - wp) * wt},
				{slot: (ip+1)*kg.nT + it + 1, w: wp * wt},
			}
			for q := range c {
				if c[q].w == 0 {
					c[q].slot = -1
				}
			}
		}
	}
	for ci, c := range km.cia {
		for j := jlo; j < n; j++ {
			t := w.temp[j]
			if t < c.t[0] || t > c.t[len(c.t)-1] {
				w.Clamped = true
			}
			it, wt := opacity.Weights(c.t, t)
			kw.ciaW[ci][j] = corner{slot: it, w: wt}
		}
	}
	for j := jlo; j < n; j++ {
		kw.grey[j] = m.grey.SigmaAt(m.pLayer[j])
	}
	// Bin-mean Rayleigh and haze cross-sections per molecule.
	clear(kw.scat)
	for sp, rs := range km.rayleigh {
		if rs == nil || w.x[sp] == 0 {
			continue
		}
		x := w.x[sp] / kSub
		for b := range kw.scat {
			kw.scat[b] += x * floats.Sum(rs[b*kSub:(b+1)*kSub])
		}
	}
	if s.HazeFactor > 0 {
		a := s.HazeFactor * m.hazeSig / kSub
		for b := range kw.scat {
			h := 0.0
			for _, l := range km.lnw[b*kSub : (b+1)*kSub] {
				h += math.Exp(s.HazeSlope * l)
			}
			kw.scat[b] += a * h
		}
	}
}

// greyAlphaK fills kw.ag with the grey absorption coefficients of layers
// jlo.. for bins [b0, b1).
func (m *Model) greyAlphaK(w *Workspace, jlo, b0, b1 int) {
	km, kw := m.k, w.k
	for j := jlo; j < len(m.pLayer); j++ {
		nd := w.nd[j]
		row := kw.ag[j*kw.bpb : j*kw.bpb+b1-b0]
		for bb := range row {
			row[bb] = nd * (kw.scat[b0+bb] + kw.grey[j])
		}
		for ci, c := range km.cia {
			x := w.x[c.sp[0]] * w.x[c.sp[1]]
			if x == 0 {
				continue
			}
			cw := kw.ciaW[ci][j]
			lo := c.k[cw.slot*km.nb:]
			hi := lo
			if cw.w != 0 {
				hi = c.k[(cw.slot+1)*km.nb:]
			}
			f := x * nd * nd
			for bb := range row {
				b := b0 + bb
				row[bb] += f * ((1-cw.w)*lo[b] + cw.w*hi[b])
			}
		}
	}
}

// resortRebin sets kw.trans from the mixture of all gases, combined in
// every layer by random overlap with resorting and rebinning, plus the
// grey absorbers.
func (m *Model) resortRebin(w *Workspace, jlo, b0, b1 int) {
	km, kw := m.k, w.k
	n, ng := len(m.pLayer), km.ng
	nbb := b1 - b0
	stride := kw.bpb * ng
	cols := nbb * ng
	// kw.alpha accumulates the mixture; each gas is interpolated into kw.tau
	// one layer at a time would need another buffer, so the mixture is
	// built bin by bin with kw.mix.
	for j := jlo; j < n; j++ {
		a := kw.alpha[j*stride : j*stride+cols]
		for bb := range nbb {
			mix := a[bb*ng : (bb+1)*ng]
			first := true
			for gi := range km.gases {
				if !kw.active[gi] {
					continue
				}
				kg := &km.gases[gi]
				f := w.x[kg.sp] * w.nd[j]
				cur := kw.mix
				clear(cur)
				rowLen := km.nb * ng
				for _, c := range kw.corner[gi][j] {
					if c.slot < 0 {
						continue
					}
					src := kg.k[c.slot*rowLen+(b0+bb)*ng : c.slot*rowLen+(b0+bb+1)*ng]
					for q, v := range src {
						cur[q] += f * c.w * float64(v)
					}
				}
				if first {
					copy(mix, cur)
					first = false
					continue
				}
				m.rebinSum(w, mix, cur)
			}
			if first {
				clear(mix)
			}
			gr := kw.ag[j*kw.bpb+bb]
			for q := range mix {
				mix[q] += gr
			}
		}
	}
	tau := kw.tau[:cols]
	for i := jlo; i < n; i++ {
		tr := kw.trans[i*kw.bpb : i*kw.bpb+nbb]
		ds := w.path[i*n : (i+1)*n]
		floats.ScaleTo(tau, ds[i], kw.alpha[i*stride:i*stride+cols])
		for j := i + 1; j < n; j++ {
			floats.AddScaled(tau, ds[j], kw.alpha[j*stride:j*stride+cols])
		}
		for bb := range tr {
			t := 0.0
			for q, v := range tau[bb*ng : (bb+1)*ng] {
				if v >= satTau {
					break
				}
				t += km.w[q] * math.Exp(-v)
			}
			tr[bb] = t
		}
	}
}

// rebinSum replaces mix with the distribution of mix + cur under random
// overlap, sampled at the quadrature nodes (as opacity.KDistribution
// samples a distribution: linear between the centres of the sorted atoms).
func (m *Model) rebinSum(w *Workspace, mix, cur []float64) {
	km, kw := m.k, w.k
	at := kw.merge[:0]
	for p, a := range mix {
		for q, c := range cur {
			at = append(at, mergeAtom{a + c, km.w[p] * km.w[q]})
		}
	}
	slices.SortFunc(at, func(x, y mergeAtom) int { return cmp.Compare(x.v, y.v) })
	nodes := m.k.g
	j, c := 0, 0.0
	mid := at[0].w / 2
	for i, g := range nodes {
		for j < len(at)-1 {
			next := c + at[j].w + at[j+1].w/2
			if next > g {
				break
			}
			c += at[j].w
			j++
			mid = next
		}
		if g <= mid || j == len(at)-1 {
			mix[i] = at[j].v
			continue
		}
		next := c + at[j].w + at[j+1].w/2
		t := (g - mid) / (next - mid)
		mix[i] = at[j].v + t*(at[j+1].v-at[j].v)
	}
}

func allZero(x []float64) bool {
	for _, v := range x {
		if v != 0 {
			return false
		}
	}
	return true
}
