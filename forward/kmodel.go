package forward

import (
	"fmt"

	"chord/forward/opacity"
	"math"
	"slices"
)

// Overlap names how the k-distributions of several gases combine within
// a bin.
type Overlap string

const (
	// OverlapProduct takes the gases' absorption as statistically
	// independent within a bin (random overlap) and each gas's
	// k-distribution as correlated along a ray, so that a ray's
	// transmission is the product of the gases' own transmissions,
	//
	//	T = exp(-tau_grey) prod_gases sum_i W_i exp(-tau_gas(G_i)),
	//
	// the multiplication property of the transmissions of randomly
	// overlapping absorbers (Goody & Yung 1989, Atmospheric Radiation, 2nd
	// ed., Oxford University Press; from memory of its band-model chapter).
	// Its cost grows with the number of gases, without any sorting.
	OverlapProduct Overlap = "product"
	// OverlapResortRebin combines the gases in every layer by random
	// overlap with resorting and rebinning (Lacis & Oinas 1991, J. Geophys.
	// Res. 96, 9027; Amundsen et al. 2017, A&A 598, A97): the G x G sums of
	// two gases' k values, weighted by the products of their weights, are
	// sorted and sampled at the quadrature nodes, and so on for each further
	// gas; the mixture is then taken as correlated along a ray.
	OverlapResortRebin Overlap = "resort-rebin"
)

// Overlaps lists the overlap methods.
var Overlaps = []Overlap{OverlapProduct, OverlapResortRebin}

// DefaultBinTolerance is how far, as a fraction of a model bin's width, its
// edges may lie from k-table bin edges and be taken as those edges: 1e-3,
// enough for bin edges printed to 4 or 5 significant digits in published
// files. Moving an edge by that fraction moves at most 1e-3 of the bin's
// wavelengths into its neighbour, changing the depth by under 1e-3 of the
// depth difference between neighbouring table bins (about 1 ppm for a
// 1000 ppm band contrast).
const DefaultBinTolerance = 1e-3

// kSub is the number of points per bin at which grey quantities (Rayleigh
// scattering, haze, collision-induced absorption) are averaged: the
// midpoints of kSub equal parts of the bin in wavelength.
const kSub = 8

// kModel is the k-distribution part of a Model.
type kModel struct {
	nb, ng  int
	g, w    []float64 // quadrature nodes and weights
	lo, hi  []float64 // bins, m
	gases   []kGas
	cia     []kCIA
	overlap Overlap
	merged  []string // gases whose tables were merged into the bins
	// rayleigh (per species, nil when it does not scatter) and lnw are on
	// the kSub sub-points of every bin (bin-major).
	rayleigh [][]float64
	lnw      []float64

	// For the resolved mode: the scattering gas of each species ("" for
	// none) and the CIA tables as given.
	rayleighGas []string
	ciaTables   []*opacity.CIATable
	ciaSpecies  [][2]int
}

// kGas is one gas's k-table on the model's bins.
type kGas struct {
	name      string
	sp        int       // species index
	log10P, t []float64 // table axes
	nT        int
	k         []float32 // rows (iP*nT+iT) of nb*ng values
	mean      []float64 // rows of nb values: sum_g W_g k
	top       []float64 // rows of nb values: k at the last node, its largest
	topMax    []float64 // per bin: the largest of top over the rows
	meanMax   []float64 // per bin: the largest of mean over the rows
}

// kCIA is one collision-induced-absorption table averaged over the model's
// bins.
type kCIA struct {
	name string
	sp   [2]int
	t    []float64
	k    []float64 // rows iT of nb values, m^5
}

// newKModel prepares m in k-distribution mode.
func newKModel(m *Model, cfg Config) (*Model, error) {
	if len(cfg.XSec) > 0 {
		return nil, fmt.Errorf("forward: a model takes either k-tables or cross-section tables, not both (%d k-tables, %d cross-section tables)", len(cfg.KTables), len(cfg.XSec))
	}
	if cfg.Bins == nil || cfg.Bins.Len() == 0 {
		return nil, fmt.Errorf("forward: k-distribution mode needs the bins to compute")
	}
	if cfg.Wavelength != nil {
		return nil, fmt.Errorf("forward: k-distribution mode works per bin and takes no model wavelength grid")
	}
	if err := m.setLayers(cfg); err != nil {
		return nil, err
	}
	if err := m.setComposition(cfg); err != nil {
		return nil, err
	}
	b := *cfg.Bins
	if len(b.Lo) != len(b.Hi) {
		return nil, fmt.Errorf("forward: %d bin lower edges and %d upper edges", len(b.Lo), len(b.Hi))
	}
	for i := range b.Lo {
		if !(b.Lo[i] > 0) || !(b.Hi[i] > b.Lo[i]) || math.IsInf(b.Hi[i], 0) {
			return nil, fmt.Errorf("forward: bin %d: %g-%g um: need 0 < low < high", i+1, b.Lo[i]/Micron, b.Hi[i]/Micron)
		}
	}
	km := &kModel{nb: b.Len(), lo: slices.Clone(b.Lo), hi: slices.Clone(b.Hi), overlap: cfg.Overlap}
	if km.overlap == "" {
		km.overlap = OverlapProduct
	}
	if !slices.Contains(Overlaps, km.overlap) {
		return nil, fmt.Errorf("forward: overlap method %q, want one of %v", km.overlap, Overlaps)
	}
	tol := cfg.BinTolerance
	if tol == 0 {
		tol = DefaultBinTolerance
	}
	if !(tol > 0 && tol < 0.5) {
		return nil, fmt.Errorf("forward: bin tolerance %g, must be in (0, 0.5)", tol)
	}
	seen := map[string]bool{}
	for _, t := range cfg.KTables {
		if t == nil {
			return nil, fmt.Errorf("forward: nil k-table")
		}
		if err := t.Validate(); err != nil {
			return nil, err
		}
		sp := m.speciesIndex(t.Gas)
		if sp < 0 {
			return nil, fmt.Errorf("forward: k-table for %q, a gas not in the composition (%s)", t.Gas, m.composition())
		}
		if seen[t.Gas] {
			return nil, fmt.Errorf("forward: two k-tables for %q", t.Gas)
		}
		seen[t.Gas] = true
		if km.w == nil {
			km.ng, km.g, km.w = len(t.G), slices.Clone(t.G), slices.Clone(t.W)
		} else if !slices.Equal(km.w, t.W) || km.ng != len(t.G) {
			return nil, fmt.Errorf("forward: k-table %s has another g quadrature (%d nodes) than %s (%d nodes); build all tables with the same one",
				t.Gas, len(t.G), km.gases[0].name, km.ng)
		}
		r, err := t.Rebin(b.Lo, b.Hi, tol)
		if err != nil {
			return nil, fmt.Errorf("forward: %w", err)
		}
		if r != t && r.Meta[opacity.MetaRebinned] != "" {
			km.merged = append(km.merged, t.Gas)
		}
		kg := kGas{name: t.Gas, sp: sp, log10P: r.Log10P, t: r.T, nT: len(r.T), k: r.K}
		ng := len(r.G)
		kg.mean = make([]float64, len(r.K)/ng)
		kg.top = make([]float64, len(r.K)/ng)
		for i := range kg.mean {
			for q, v := range r.K[i*ng : (i+1)*ng] {
				kg.mean[i] += r.W[q] * float64(v)
			}
			kg.top[i] = float64(r.K[(i+1)*ng-1])
		}
		kg.topMax, kg.meanMax = make([]float64, km.nb), make([]float64, km.nb)
		for i, v := range kg.top {
			b := i % km.nb
			kg.topMax[b] = max(kg.topMax[b], v)
			kg.meanMax[b] = max(kg.meanMax[b], kg.mean[i])
		}
		km.gases = append(km.gases, kg)
	}
	// Sub-points of every bin, for grey quantities.
	sub := make([]float64, km.nb*kSub)
	for i := range km.nb {
		for s := range kSub {
			sub[i*kSub+s] = b.Lo[i] + (float64(s)+0.5)/kSub*(b.Hi[i]-b.Lo[i])
		}
	}
	if err := km.setCIA(m, cfg, sub); err != nil {
		return nil, err
	}
	var err error
	if km.rayleigh, km.lnw, err = m.scatteringTables(cfg, sub); err != nil {
		return nil, err
	}
	km.rayleighGas = make([]string, len(m.species))
	for _, g := range cfg.Rayleigh {
		km.rayleighGas[m.speciesIndex(g)] = g
	}
	m.k, m.nOut = km, km.nb
	return m, nil
}

// setCIA averages each CIA table over the sub-points of every bin.
func (km *kModel) setCIA(m *Model, cfg Config, sub []float64) error {
	nu := make([]float64, len(sub))
	for i, v := range sub {
		nu[i] = 1 / v
	}
	seen := map[[2]string]bool{}
	for _, t := range cfg.CIA {
		if t == nil {
			return fmt.Errorf("forward: nil CIA table")
		}
		if err := t.Validate(); err != nil {
			return err
		}
		name := t.Pair[0] + "-" + t.Pair[1]
		a, b := m.speciesIndex(t.Pair[0]), m.speciesIndex(t.Pair[1])
		if a < 0 || b < 0 {
			return fmt.Errorf("forward: CIA table %s needs gases not in the composition (%s)", name, m.composition())
		}
		key := t.Pair
		if key[0] > key[1] {
			key[0], key[1] = key[1], key[0]
		}
		if seen[key] {
			return fmt.Errorf("forward: two CIA tables for the pair %s", name)
		}
		seen[key] = true
		r := t.Resample(nu) // 0 where the table says nothing
		c := kCIA{name: name, sp: [2]int{a, b}, t: r.T, k: make([]float64, len(r.T)*km.nb)}
		any := false
		for it := range r.T {
			row := r.Row(it)
			for i := range km.nb {
				s := 0.0
				for _, v := range row[i*kSub : (i+1)*kSub] {
					s += v
				}
				c.k[it*km.nb+i] = s / kSub
				any = any || s > 0
			}
		}
		if !any {
			return fmt.Errorf("forward: CIA table %s (%g-%g um) does not overlap the model's bins", name,
				1/t.Wavenumber[len(t.Wavenumber)-1]/Micron, 1/t.Wavenumber[0]/Micron)
		}
		km.cia = append(km.cia, c)
		km.ciaTables = append(km.ciaTables, t)
		km.ciaSpecies = append(km.ciaSpecies, [2]int{a, b})
	}
	return nil
}

// GPoints returns the number of quadrature nodes per bin in k-distribution
// mode, 0 otherwise.
func (m *Model) GPoints() int {
	if m.k == nil {
		return 0
	}
	return m.k.ng
}

// MergedK returns the gases whose k-tables were merged from finer bins into
// the model's bins (opacity.KTable.Rebin), in table order.
func (m *Model) MergedK() []string {
	if m.k == nil {
		return nil
	}
	return slices.Clone(m.k.merged)
}
