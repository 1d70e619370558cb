package forward

import (
	"cmp"
	"math"
	"slices"

	"gonum.org/v1/gonum/floats"

	"chord/forward/opacity"
)

// kWork is the k-distribution part of a Workspace.
type kWork struct {
	bpb    int           // bins per block
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
	agAll    []float64 // n x nb: grey absorption coefficients
	agg      []float64 // n x nb: gases taken as grey
	transAll []float64 // n x nb: transmission of each ray and bin
	tauAll   []float64 // nb
	live     []int     // per bin: lowest ray that transmits
	column   []float64 // per ray: molecules per unit area along it
	kmax     []float64 // nb
	full     []bool    // per bin: the current gas needs its k-distribution
	order    []int     // gases, strongest first
	strength []float64 // per gas
	bins     []int     // a gas's bins that need it
	accAll   []float64 // nb
	lowAll   []float64
	tkcAll   []float64
}

type mergeAtom struct{ v, w float64 }

func (m *Model) newKWork(n int) *kWork {
	km := m.k
	bpb := blockLen
	if km.ng > 0 {
		bpb = max(1, blockLen/km.ng)
	}
	kw := &kWork{
		bpb:    bpb,
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

		agAll:    make([]float64, n*km.nb),
		agg:      make([]float64, n*km.nb),
		transAll: make([]float64, n*km.nb),
		tauAll:   make([]float64, km.nb),
		live:     make([]int, km.nb),
		column:   make([]float64, n),
		kmax:     make([]float64, km.nb),
		full:     make([]bool, km.nb),
		order:    make([]int, 0, len(km.gases)),
		strength: make([]float64, len(km.gases)),
		bins:     make([]int, 0, km.nb),
		accAll:   make([]float64, km.nb),
		lowAll:   make([]float64, km.nb),
		tkcAll:   make([]float64, km.nb),
	}
	for i := range kw.corner {
		kw.corner[i] = make([][4]corner, n)
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

// greyTau is the largest optical depth at a gas's strongest g-node, along
// any ray that still transmits, below which the gas is taken as grey in a
// bin (its mean k instead of its k-distribution). Replacing
// sum_g W_g exp(-tau_g) by exp(-sum_g W_g tau_g) errs by at most about
// max(tau)^2 / 8 of the transmission (the variance of tau over g, which is
// below max(tau)^2 / 4, halved; Jensen's inequality), 5e-5 at 0.02: far
// below a ppm of depth.
const greyTau = 0.02

// transitProduct computes the depths with the product overlap: the grey
// absorbers of all bins first, then each gas over the bins where it is not
// negligible.
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
	// The gases, strongest first, each over the bins where it is not
	// negligible against what the rays still transmit; where it is, its
	// mean joins kw.agg, whose transmission multiplies in at the end.
	clear(kw.agg[g.jlo*nb : n*nb])
	anyGrey := false
	for _, gi := range m.gasOrder(w) {
		m.liveRays(w, g.jlo)
		anyGrey = m.classifyGas(w, gi, g.jlo) || anyGrey
		bins := kw.bins[:0]
		for b := range nb {
			if kw.full[b] {
				bins = append(bins, b)
			}
		}
		for c0 := 0; c0 < len(bins); c0 += kw.bpb {
			blk := bins[c0:min(c0+kw.bpb, len(bins))]
			jlo := n
			for _, b := range blk {
				jlo = min(jlo, kw.live[b])
			}
			if jlo == n {
				continue
			}
			m.gasAlphaBins(w, gi, jlo, blk)
			m.multiplyTransmissionBins(w, jlo, blk)
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
// by x times the largest top-node k of any bin at the reference layer, a
// rough measure that only orders the work (every gas is still computed).
func (m *Model) gasOrder(w *Workspace) []int {
	km, kw := m.k, w.k
	nb, ng := km.nb, km.ng
	ord := kw.order[:0]
	for gi := range km.gases {
		if !kw.active[gi] {
			continue
		}
		kg := &km.gases[gi]
		s := 0.0
		for _, c := range kw.corner[gi][m.refLay] {
			if c.slot < 0 {
				continue
			}
			row := kg.k[c.slot*nb*ng : (c.slot+1)*nb*ng]
			for b := range nb {
				s = math.Max(s, float64(row[b*ng+ng-1]))
			}
		}
		kw.strength[gi] = s * w.x[kg.sp]
		ord = append(ord, gi)
	}
	slices.SortStableFunc(ord, func(a, b int) int { return cmp.Compare(kw.strength[b], kw.strength[a]) })
	kw.order = ord
	return ord
}

// classifyGas decides, per bin, whether gas gi needs its k-distribution
// there (kw.full): not when x * column(live ray) * max_j k_j(top node) is
// below greyTau, an upper bound on its optical depth at its strongest node
// along every ray that still transmits. Where it does not, x n_j kmean_j
// is added to kw.agg; it reports whether any bin was.
func (m *Model) classifyGas(w *Workspace, gi, jlo int) bool {
	km, kw := m.k, w.k
	n, nb, ng := len(m.pLayer), km.nb, km.ng
	full := kw.full[:nb]
	clear(full)
	kg := &km.gases[gi]
	x := w.x[kg.sp]
	rowLen := nb * ng
	// kmax[b]: the largest top-node k of the corners of layers >= live[b],
	// accumulated from the top down (the corners bound the interpolant).
	kmax := kw.kmax
	clear(kmax)
	for j := n - 1; j >= jlo; j-- {
		for _, c := range kw.corner[gi][j] {
			if c.slot < 0 {
				continue
			}
			row := kg.k[c.slot*rowLen : (c.slot+1)*rowLen]
			for b := range nb {
				if v := float64(row[b*ng+ng-1]); v > kmax[b] {
					kmax[b] = v
				}
			}
		}
		for b := range nb {
			if kw.live[b] == j {
				full[b] = x*kw.column[j]*kmax[b] >= greyTau
			}
		}
	}
	anyGrey := false
	for b := range nb {
		anyGrey = anyGrey || (!full[b] && kw.live[b] < n)
	}
	if !anyGrey {
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
			for b := range nb {
				if !full[b] && kw.live[b] < n {
					row[b] += cw * mean[b]
				}
			}
		}
	}
	return true
}

// gasAlphaBins fills kw.alpha with gas gi's absorption coefficients of
// layers jlo.. for the bins blk, interpolated bilinearly in (log10 P, T) at
// fixed g.
func (m *Model) gasAlphaBins(w *Workspace, gi, jlo int, blk []int) {
	km, kw := m.k, w.k
	kg := &km.gases[gi]
	ng := km.ng
	stride := kw.bpb * ng
	rowLen := km.nb * ng
	x := w.x[kg.sp]
	for j := jlo; j < len(m.pLayer); j++ {
		a := kw.alpha[j*stride : j*stride+len(blk)*ng]
		clear(a)
		f := x * w.nd[j]
		for _, c := range kw.corner[gi][j] {
			if c.slot < 0 {
				continue
			}
			row := kg.k[c.slot*rowLen : (c.slot+1)*rowLen]
			cw := f * c.w
			for bb, b := range blk {
				dst := a[bb*ng : (bb+1)*ng]
				for q, v := range row[b*ng : (b+1)*ng] {
					dst[q] += cw * float64(v)
				}
			}
		}
	}
}

// multiplyTransmissionBins multiplies the transmissions of the bins blk by
// that of the gas in kw.alpha: along each ray, the optical depth at every
// node, then sum_g W_g exp(-tau_g).
func (m *Model) multiplyTransmissionBins(w *Workspace, jlo int, blk []int) {
	km, kw := m.k, w.k
	n, nb, ng := len(m.pLayer), km.nb, km.ng
	stride := kw.bpb * ng
	cols := len(blk) * ng
	tau := kw.tau[:cols]
	for i := jlo; i < n; i++ {
		tr := kw.transAll[i*nb : (i+1)*nb]
		alive := false
		for _, b := range blk {
			alive = alive || tr[b] != 0
		}
		if !alive {
			continue
		}
		ds := w.path[i*n : (i+1)*n]
		floats.ScaleTo(tau, ds[i], kw.alpha[i*stride:i*stride+cols])
		check := i + 1
		saturated := false
		for j := i + 1; j < n; j++ {
			floats.AddScaled(tau, ds[j], kw.alpha[j*stride:j*stride+cols])
			if j == check {
				if allSaturated(tau) {
					saturated = true
					break
				}
				check += check - i
			}
		}
		for bb, b := range blk {
			if tr[b] == 0 {
				continue
			}
			if saturated {
				tr[b] = 0
				continue
			}
			t := 0.0
			for q, v := range tau[bb*ng : (bb+1)*ng] {
				if v >= satTau { // tau rises with g: the rest is 0 too
					break
				}
				t += km.w[q] * expNeg(v)
			}
			tr[b] *= t
		}
	}
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

// expNeg returns exp(-t) for t >= 0, 0 from satTau on, with the table and
// polynomial of oneMinusExpNeg (absolute error a few 1e-16).
func expNeg(t float64) float64 {
	if t >= satTau {
		return 0
	}
	return 1 - oneMinusExpNeg(t)
}
