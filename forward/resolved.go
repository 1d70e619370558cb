package forward

import (
	"fmt"
	"math"
	"runtime"
	"sync"

	"gonum.org/v1/gonum/floats"

	"chord/forward/opacity"
)

// LineSource computes one gas's cross-sections line by line at any
// pressure and temperature, for the resolved mode (lbl.LineSet is one).
type LineSource interface {
	// CrossSections fills dst with the cross-sections (m^2 per molecule)
	// at points k0, k0+1, ... of grid g, at pressure p (Pa) and
	// temperature t (K). It must be safe for concurrent use.
	CrossSections(dst []float64, g opacity.LnGrid, k0 int, p, t float64)
	// CheckTemperature reports whether the source can be used at t (K).
	CheckTemperature(t float64) error
}

// ResolvedOptions controls TransitResolved. Zero values pick the stated
// defaults.
type ResolvedOptions struct {
	// R is the resolving power nu/dnu of the fine grid; 0 means 1e6.
	// The grid must resolve the narrowest line (a third of the Doppler
	// half-width at the lowest temperature is the rule of
	// opacity.FineResolution); the answer's convergence in R is the check.
	R float64
	// Workers is the number of goroutines; 0 means GOMAXPROCS. The result
	// does not depend on it.
	Workers int
	// Progress, when not nil, is called with the fraction of the spectrum
	// done, from one goroutine at a time.
	Progress func(done, total int)
}

// resolvedChunk is the number of fine points whose absorption coefficients
// (all layers) are computed together.
const resolvedChunk = 1 << 14

// TransitResolved fills dst (length OutputLen) with the transit depth of
// state s computed line by line: the absorption of every layer at every
// point of a fine grid uniform in ln(nu) from the line sources at the
// layer's own pressure and temperature, plus collision-induced absorption,
// Rayleigh scattering, haze and the grey absorber at that point; the
// transit depth at every point; and its mean over each bin (box-car in
// wavelength): the transmission is averaged, never the opacity. It is the
// reference the k-distribution path is checked against. m must be a
// per-bin model (built with Bins and without a wavelength grid); its
// k-tables, if any, are not used. src maps gas names of the composition to
// their lines; gases without a source absorb nothing.
//
// Cost: the line-by-line evaluation, about lines x layers x 2000 profile
// evaluations, plus layers^2/2 operations per fine point for the path
// integrals (see the README's "resolved mode"); it allocates its buffers.
func (m *Model) TransitResolved(dst []float64, s *State, src map[string]LineSource, opt ResolvedOptions) error {
	if m.k == nil {
		return fmt.Errorf("forward: the resolved mode needs a per-bin model (bins, no model wavelength grid)")
	}
	if len(dst) != m.nOut {
		panic(badOutputLen)
	}
	r := opt.R
	if r == 0 {
		r = 1e6
	}
	if !(r > 0) || math.IsInf(r, 0) {
		return fmt.Errorf("forward: resolved mode: resolving power %g, must be positive", r)
	}
	type gasSrc struct {
		sp  int
		src LineSource
	}
	var gases []gasSrc
	for name, ls := range src {
		sp := m.speciesIndex(name)
		if sp < 0 || sp >= m.nTrace {
			return fmt.Errorf("forward: resolved mode: lines for %q, not a trace gas of the composition (%s)", name, m.composition())
		}
		gases = append(gases, gasSrc{sp, ls})
	}
	// Deterministic order (map iteration is random): by species index.
	for i := range gases {
		for j := i + 1; j < len(gases); j++ {
			if gases[j].sp < gases[i].sp {
				gases[i], gases[j] = gases[j], gases[i]
			}
		}
	}
	w := m.NewWorkspace()
	g, err := m.atmosphere(s, w)
	if err != nil {
		return err
	}
	for _, gs := range gases {
		for _, t := range w.temp {
			if err := gs.src.CheckTemperature(t); err != nil {
				return fmt.Errorf("forward: resolved mode: %w", err)
			}
		}
	}
	km := m.k
	if g.covered() {
		g.fillCovered(dst, s)
		return nil
	}
	// The fine grid spans every bin, with one point to spare at each end.
	lmin, lmax := km.lo[0], km.hi[0]
	for b := range km.lo {
		lmin, lmax = min(lmin, km.lo[b]), max(lmax, km.hi[b])
	}
	grid := opacity.LnGrid{Nu0: 1 / lmax / 100 * math.Exp(-1/r), R: r}
	nFine := int(math.Ceil(grid.Index(1/lmin/100))) + 2
	depth := make([]float64, nFine)
	nChunks := (nFine + resolvedChunk - 1) / resolvedChunk

	workers := opt.Workers
	if workers == 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	chunks := make(chan int)
	done := make(chan struct{})
	var wg sync.WaitGroup
	for range min(workers, nChunks) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			rw := m.newResolvedWork(w, g)
			for c := range chunks {
				k0 := c * resolvedChunk
				k1 := min(k0+resolvedChunk, nFine)
				rw.alpha(m, s, grid, k0, k1, func(sigma []float64, j int, buf []float64) {
					for _, gs := range gases {
						gs.src.CrossSections(buf, grid, k0, m.pLayer[j], w.temp[j])
						floats.AddScaled(sigma, w.x[gs.sp], buf)
					}
				})
				rw.depths(m, g, depth[k0:k1])
				done <- struct{}{}
			}
		}()
	}
	go func() {
		for c := range nChunks {
			chunks <- c
		}
		close(chunks)
	}()
	for c := range nChunks {
		<-done
		if opt.Progress != nil {
			opt.Progress(c+1, nChunks)
		}
	}
	wg.Wait()

	// Bin means of the depth, box-car in wavelength: point k's cell spans
	// half a step either side in ln(nu).
	half := math.Exp(0.5 / r)
	for b := range km.lo {
		lo, hi := km.lo[b], km.hi[b]
		kHi := int(math.Ceil(grid.Index(1/lo/100) + 0.5))
		kLo := int(math.Floor(grid.Index(1/hi/100) - 0.5))
		sum := 0.0
		for k := max(kLo, 0); k <= min(kHi, nFine-1); k++ {
			nu := grid.Nu(k) * 100
			ov := min(half/nu, hi) - max(1/(nu*half), lo)
			if ov > 0 {
				sum += ov * depth[k]
			}
		}
		dst[b] = sum / (hi - lo)
	}
	return nil
}

// resolvedWork is one goroutine's memory for TransitResolved.
type resolvedWork struct {
	w      *Workspace // shared state of the call (read only here)
	jlo, n int
	nu     []float64 // chunk wavenumbers, m^-1
	lnw    []float64 // ln(lambda/lambda_ref)
	scat   []float64 // Rayleigh + haze per molecule
	al     []float64 // (n-jlo) x resolvedChunk absorption coefficients
	sigma  []float64 // one layer's sum of x sigma over gases
	buf    []float64
	cia    [][]float64 // per CIA table: rows iT on the chunk
	tau    []float64
	acc    []float64
	low    []float64
	tkc    []float64
}

func (m *Model) newResolvedWork(w *Workspace, g geometry) *resolvedWork {
	n := len(m.pLayer)
	c := resolvedChunk
	rw := &resolvedWork{
		w: w, jlo: g.jlo, n: n,
		nu: make([]float64, c), lnw: make([]float64, c), scat: make([]float64, c),
		al: make([]float64, (n-g.jlo)*c), sigma: make([]float64, c), buf: make([]float64, c),
		tau: make([]float64, blockLen), acc: make([]float64, blockLen), low: make([]float64, blockLen), tkc: make([]float64, blockLen),
	}
	for _, t := range m.k.ciaTables {
		rw.cia = append(rw.cia, make([]float64, len(t.T)*c))
	}
	return rw
}

// alpha fills rw.al with the absorption coefficients of points [k0, k1) of
// grid; lines adds the gases' x sigma of layer j into sigma.
func (rw *resolvedWork) alpha(m *Model, s *State, grid opacity.LnGrid, k0, k1 int, lines func(sigma []float64, j int, buf []float64)) {
	nb := k1 - k0
	w := rw.w
	nu, lnw, scat := rw.nu[:nb], rw.lnw[:nb], rw.scat[:nb]
	for k := range nu {
		nu[k] = grid.Nu(k0+k) * 100
		lnw[k] = math.Log(1 / nu[k] / m.hazeRef)
	}
	clear(scat)
	buf := rw.buf[:nb]
	for sp, g := range m.k.rayleighGas {
		if g == "" || w.x[sp] == 0 {
			continue
		}
		r, _ := opacity.NewRayleigh(g)
		r.SigmaTo(buf, nu)
		floats.AddScaled(scat, w.x[sp], buf)
	}
	if s.HazeFactor > 0 {
		a := s.HazeFactor * m.hazeSig
		for k := range scat {
			scat[k] += a * math.Exp(s.HazeSlope*lnw[k])
		}
	}
	for ci, t := range m.k.ciaTables {
		for it := range t.T {
			row := rw.cia[ci][it*resolvedChunk : it*resolvedChunk+nb]
			one := &opacity.CIATable{Pair: t.Pair, T: t.T[it : it+1], Wavenumber: t.Wavenumber, K: t.Row(it)}
			one.CrossSectionTo(row, nu, 0, t.T[it])
		}
	}
	for j := rw.jlo; j < rw.n; j++ {
		row := rw.al[(j-rw.jlo)*resolvedChunk : (j-rw.jlo)*resolvedChunk+nb]
		nd := w.nd[j]
		grey := m.grey.SigmaAt(m.pLayer[j])
		sigma := rw.sigma[:nb]
		copy(sigma, scat)
		lines(sigma, j, buf)
		for k, v := range sigma {
			row[k] = nd * (v + grey)
		}
		for ci, t := range m.k.ciaTables {
			c := m.k.ciaSpecies[ci]
			x := w.x[c[0]] * w.x[c[1]]
			if x == 0 {
				continue
			}
			it, wt := opacity.Weights(t.T, w.temp[j])
			lo := rw.cia[ci][it*resolvedChunk : it*resolvedChunk+nb]
			floats.AddScaled(row, x*nd*nd*(1-wt), lo)
			if wt != 0 {
				floats.AddScaled(row, x*nd*nd*wt, rw.cia[ci][(it+1)*resolvedChunk:(it+1)*resolvedChunk+nb])
			}
		}
	}
}

// depths fills out with the transit depth at the chunk's points from rw.al.
func (rw *resolvedWork) depths(m *Model, g geometry, out []float64) {
	n, w := rw.n, rw.w
	for b0 := 0; b0 < len(out); b0 += blockLen {
		b1 := min(b0+blockLen, len(out))
		nb := b1 - b0
		acc, low, tkc := rw.acc[:nb], rw.low[:nb], rw.tkc[:nb]
		clear(acc)
		clear(low)
		clear(tkc)
		tau := rw.tau[:nb]
		for i := g.jlo; i < n; i++ {
			ds := w.path[i*n : (i+1)*n]
			clear(tau)
			for j := i; j < n; j++ {
				o := (j-rw.jlo)*resolvedChunk + b0
				floats.AddScaled(tau, ds[j], rw.al[o:o+nb])
			}
			a, d := g.rayArea(i, w), g.rayDest(i, acc, low, tkc)
			addAbsorbed(d, a, tau)
		}
		g.depths(out[b0:b1], acc, low, tkc)
	}
}
