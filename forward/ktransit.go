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
	km, kw := m.k, w.k
	n, ng := g.n, km.ng
	m.prepareK(w, g.jlo, s)
	for b0 := 0; b0 < km.nb; b0 += kw.bpb {
		b1 := min(b0+kw.bpb, km.nb)
		nbb := b1 - b0
		m.greyAlphaK(w, g.jlo, b0, b1)
		if km.overlap == OverlapResortRebin {
			m.resortRebin(w, g.jlo, b0, b1)
		} else {
			m.greyTransmission(w, g.jlo, nbb)
			for gi := range km.gases {
				if kw.active[gi] {
					m.gasAlphaK(w, gi, g.jlo, b0, b1)
					m.multiplyTransmission(w, g.jlo, nbb)
				}
			}
		}
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
	_ = ng
	return nil
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

// greyTransmission sets kw.trans to the transmission of the grey
// absorbers along each ray.
func (m *Model) greyTransmission(w *Workspace, jlo, nbb int) {
	kw := w.k
	n := len(m.pLayer)
	for i := jlo; i < n; i++ {
		ds := w.path[i*n : (i+1)*n]
		tr := kw.trans[i*kw.bpb : i*kw.bpb+nbb]
		clear(tr)
		for j := i; j < n; j++ {
			floats.AddScaled(tr, ds[j], kw.ag[j*kw.bpb:j*kw.bpb+nbb])
		}
		for bb, t := range tr {
			if t >= satTau {
				tr[bb] = 0
			} else {
				tr[bb] = math.Exp(-t)
			}
		}
	}
}

// gasAlphaK fills kw.alpha with gas gi's absorption coefficients of layers
// jlo.. for bins [b0, b1), interpolated bilinearly in (log10 P, T) at fixed g.
func (m *Model) gasAlphaK(w *Workspace, gi, jlo, b0, b1 int) {
	km, kw := m.k, w.k
	kg := &km.gases[gi]
	ng := km.ng
	stride := kw.bpb * ng
	rowLen := km.nb * ng
	x := w.x[kg.sp]
	for j := jlo; j < len(m.pLayer); j++ {
		a := kw.alpha[j*stride : j*stride+(b1-b0)*ng]
		clear(a)
		f := x * w.nd[j]
		for _, c := range kw.corner[gi][j] {
			if c.slot < 0 {
				continue
			}
			src := kg.k[c.slot*rowLen+b0*ng : c.slot*rowLen+b1*ng]
			cw := f * c.w
			for k, v := range src {
				a[k] += cw * float64(v)
			}
		}
	}
}

// multiplyTransmission multiplies kw.trans by the transmission of the gas
// whose absorption coefficients are in kw.alpha: along ray i, the optical
// depth at each node, then sum_g W_g exp(-tau_g) per bin.
func (m *Model) multiplyTransmission(w *Workspace, jlo, nbb int) {
	km, kw := m.k, w.k
	n, ng := len(m.pLayer), km.ng
	stride := kw.bpb * ng
	cols := nbb * ng
	tau := kw.tau[:cols]
	for i := jlo; i < n; i++ {
		tr := kw.trans[i*kw.bpb : i*kw.bpb+nbb]
		if allZero(tr) {
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
		if saturated {
			clear(tr)
			continue
		}
		for bb := range tr {
			if tr[bb] == 0 {
				continue
			}
			t := 0.0
			for q, v := range tau[bb*ng : (bb+1)*ng] {
				if v >= satTau { // tau rises with g: the rest is 0 too
					break
				}
				t += km.w[q] * math.Exp(-v)
			}
			tr[bb] *= t
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
