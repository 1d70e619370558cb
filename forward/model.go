package forward

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"chord/forward/opacity"
)

// Config describes a model to prepare: grids, composition and opacity
// sources. Zero values mean the default where one is stated; other fields
// are required.
type Config struct {
	// Wavelength is the model grid in m, strictly ascending (see
	// WavelengthGrid). Required.
	Wavelength []float64

	TopPressure    float64 // Pa, top level; required (DefaultTopPressure is common)
	BottomPressure float64 // Pa, bottom level; required, above TopPressure
	Layers         int     // number of layers; required, at least 1
	// RefPressure is the pressure (Pa) at which State.RefRadius is pinned;
	// 0 means DefaultRefPressure (10 bar). It must lie within the grid.
	RefPressure float64

	// Gases are the trace gases; State.VMR holds their volume mixing
	// ratios in this order.
	Gases []string
	// Fill is the gas filling the rest: FillH2He (the default, for "")
	// with He/H2 = State.HeH2, or one gas name such as "N2" or "CO2".
	Fill string

	XSec     []*opacity.XSecTable // cross-section tables, at most one per gas of the composition
	CIA      []*opacity.CIATable  // collision-induced absorption, pairs of gases of the composition
	Rayleigh []string             // gases of the composition that scatter (see opacity.Rayleigh)
	Grey     opacity.Grey         // grey absorber on every molecule; Sigma 0 (default) means none

	// HazeRefWavelength is lambda_ref of the haze power law (m); 0 means
	// 0.35 um.
	HazeRefWavelength float64

	// KTables are k-distribution tables, at most one per gas of the
	// composition. With them the model works per bin (k-distribution
	// mode): Bins are required, XSec must be empty, and Wavelength is not
	// used (leave it nil). Each table is merged onto the bins
	// (opacity.KTable.Rebin), so its bins must tile every model bin.
	KTables []*opacity.KTable
	// Overlap is how the k-distributions of several gases combine in a
	// bin (k-distribution mode only); "" means OverlapProduct.
	Overlap Overlap
	// BinTolerance is how far (a fraction of a bin's width) a model bin's
	// edge may lie from a k-table bin edge and be taken as that edge; 0
	// means DefaultBinTolerance.
	BinTolerance float64

	// Bins, when not nil, are the wavelength bins Transit averages onto;
	// nil means Transit returns the model grid.
	Bins *Bins
	// MinBinPoints is the fewest model points a bin must hold; 0 means 2.
	MinBinPoints int
}

// Model is a prepared forward model: grids, tables resampled onto the model
// wavenumber grid, Rayleigh cross-sections and bin weights, all computed
// once. A Model is read-only after NewModel and safe for concurrent use;
// each goroutine needs its own Workspace.
type Model struct {
	wl  []float64 // model wavelengths, m, ascending
	nu  []float64 // 1/wl, m^-1 (descending)
	lnw []float64 // ln(wl/hazeRef)

	pLevel []float64 // level pressures, bottom (0) to top (N)
	pLayer []float64 // layer pressures sqrt(p_j p_j+1)
	dlnp   []float64 // ln(p_j/p_j+1) per layer
	log10P []float64 // log10 of layer pressures
	refP   float64
	refLay int // layer holding refP

	gases   []string // trace gases
	fill    string
	species []string  // trace gases, then fill species
	mass    []float64 // u, per species
	nTrace  int

	groups []*tableGroup

	rayleigh [][]float64 // sigma per point for each species (nil when none)
	grey     opacity.Grey
	hazeSig  float64 // H2 Rayleigh at hazeRef, m^2
	hazeRef  float64 // lambda_ref of the haze, m

	bins *binner
	nOut int

	k *kModel // k-distribution mode; nil for cross-section tables
}

// tableGroup is a set of tables on one (log10 P, T) grid; it is mixed
// per call on the grid rows the layers touch.
type tableGroup struct {
	log10P  []float64 // nil for CIA (one row in P)
	t       []float64
	nP, nT  int
	cia     bool // absorption scales with n^2 instead of n
	members []groupMember
}

type groupMember struct {
	name string
	sp   [2]int    // species indices; sp[1] is -1 for a gas
	data []float64 // (nP*nT) rows of len(wl), model-grid order
}

// NewModel prepares a model, or returns an error naming what is wrong in
// cfg.
func NewModel(cfg Config) (*Model, error) {
	m := &Model{}
	if len(cfg.KTables) > 0 || (cfg.Wavelength == nil && cfg.Bins != nil) {
		return newKModel(m, cfg)
	}
	if err := m.setGrid(cfg); err != nil {
		return nil, err
	}
	if err := m.setLayers(cfg); err != nil {
		return nil, err
	}
	if err := m.setComposition(cfg); err != nil {
		return nil, err
	}
	if err := m.setTables(cfg); err != nil {
		return nil, err
	}
	if err := m.setScattering(cfg); err != nil {
		return nil, err
	}
	m.nOut = len(m.wl)
	if cfg.Bins != nil {
		minPts := cfg.MinBinPoints
		if minPts == 0 {
			minPts = 2
		}
		if minPts < 1 {
			return nil, fmt.Errorf("forward: minimum points per bin %d, must be at least 1", cfg.MinBinPoints)
		}
		bn, err := newBinner(*cfg.Bins, m.wl, minPts)
		if err != nil {
			return nil, err
		}
		m.bins, m.nOut = bn, cfg.Bins.Len()
	}
	return m, nil
}

func (m *Model) setGrid(cfg Config) error {
	wl := cfg.Wavelength
	if len(wl) < 2 {
		return fmt.Errorf("forward: model wavelength grid has %d points, need at least 2", len(wl))
	}
	for k, v := range wl {
		if !(v > 0) || math.IsInf(v, 0) {
			return fmt.Errorf("forward: model wavelength %d is %g m, must be positive and finite", k+1, v)
		}
		if k > 0 && !(v > wl[k-1]) {
			return fmt.Errorf("forward: model wavelengths not strictly ascending at point %d", k+1)
		}
	}
	m.wl = append([]float64(nil), wl...)
	m.nu = make([]float64, len(wl))
	for k, v := range wl {
		m.nu[k] = 1 / v
	}
	return nil
}

func (m *Model) setLayers(cfg Config) error {
	lv, err := PressureLevels(cfg.TopPressure, cfg.BottomPressure, cfg.Layers)
	if err != nil {
		return err
	}
	n := cfg.Layers
	m.pLevel = lv
	m.pLayer = make([]float64, n)
	m.dlnp = make([]float64, n)
	m.log10P = make([]float64, n)
	for j := range n {
		m.pLayer[j] = math.Sqrt(lv[j] * lv[j+1])
		m.dlnp[j] = math.Log(lv[j] / lv[j+1])
		m.log10P[j] = math.Log10(m.pLayer[j])
	}
	m.refP = cfg.RefPressure
	if m.refP == 0 {
		m.refP = DefaultRefPressure
	}
	if !(m.refP >= lv[n] && m.refP <= lv[0]) {
		return fmt.Errorf("forward: reference pressure %g bar lies outside the grid %g-%g bar", m.refP/Bar, lv[n]/Bar, lv[0]/Bar)
	}
	m.refLay = n - 1
	for j := range n {
		if m.refP >= lv[j+1] {
			m.refLay = j
			break
		}
	}
	return nil
}

func (m *Model) setComposition(cfg Config) error {
	m.fill = cfg.Fill
	if m.fill == "" {
		m.fill = FillH2He
	}
	var fillSp []string
	if m.fill == FillH2He {
		fillSp = []string{"H2", "He"}
	} else {
		fillSp = []string{m.fill}
	}
	seen := map[string]bool{}
	for _, g := range cfg.Gases {
		if _, err := MolecularMass(g); err != nil {
			return err
		}
		if seen[g] {
			return fmt.Errorf("forward: gas %q listed twice", g)
		}
		for _, f := range fillSp {
			if f == g {
				return fmt.Errorf("forward: gas %q is part of the balance gas %q and cannot also be a trace gas", g, m.fill)
			}
		}
		seen[g] = true
	}
	for _, f := range fillSp {
		if _, err := MolecularMass(f); err != nil {
			return fmt.Errorf("forward: balance gas: %w (or %q)", err, FillH2He)
		}
	}
	m.gases = append([]string(nil), cfg.Gases...)
	m.nTrace = len(m.gases)
	m.species = append(append([]string(nil), m.gases...), fillSp...)
	m.mass = make([]float64, len(m.species))
	for i, s := range m.species {
		m.mass[i], _ = MolecularMass(s)
	}
	return nil
}

func (m *Model) speciesIndex(name string) int {
	for i, s := range m.species {
		if s == name {
			return i
		}
	}
	return -1
}

func (m *Model) composition() string { return strings.Join(m.species, ", ") }

func (m *Model) setTables(cfg Config) error {
	nuAsc := make([]float64, len(m.nu))
	for k := range nuAsc {
		nuAsc[k] = m.nu[len(m.nu)-1-k]
	}
	lo, hi := nuAsc[0], nuAsc[len(nuAsc)-1]
	wlRange := fmt.Sprintf("%g-%g um", m.wl[0]/Micron, m.wl[len(m.wl)-1]/Micron)
	seen := map[string]bool{}
	for _, t := range cfg.XSec {
		if t == nil {
			return fmt.Errorf("forward: nil cross-section table")
		}
		if err := t.Validate(); err != nil {
			return err
		}
		sp := m.speciesIndex(t.Gas)
		if sp < 0 {
			return fmt.Errorf("forward: cross-section table for %q, a gas not in the composition (%s)", t.Gas, m.composition())
		}
		if seen[t.Gas] {
			return fmt.Errorf("forward: two cross-section tables for %q", t.Gas)
		}
		seen[t.Gas] = true
		if !t.Covers(lo, hi) {
			return fmt.Errorf("forward: model wavelength range %s lies outside the %s table's range %g-%g um",
				wlRange, t.Gas, 1/t.Wavenumber[len(t.Wavenumber)-1]/Micron, 1/t.Wavenumber[0]/Micron)
		}
		r := t.Resample(nuAsc)
		g := m.group(t.Log10P, t.T, false)
		g.members = append(g.members, groupMember{name: t.Gas, sp: [2]int{sp, -1}, data: reverseRows(r.Sigma, len(nuAsc))})
	}
	seenPair := map[[2]string]bool{}
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
		if seenPair[key] {
			return fmt.Errorf("forward: two CIA tables for the pair %s", name)
		}
		seenPair[key] = true
		if t.Wavenumber[len(t.Wavenumber)-1] < lo || t.Wavenumber[0] > hi {
			return fmt.Errorf("forward: CIA table %s (%g-%g um) does not overlap the model wavelength range %s",
				name, 1/t.Wavenumber[len(t.Wavenumber)-1]/Micron, 1/t.Wavenumber[0]/Micron, wlRange)
		}
		r := t.Resample(nuAsc)
		g := m.group(nil, t.T, true)
		g.members = append(g.members, groupMember{name: name, sp: [2]int{a, b}, data: reverseRows(r.K, len(nuAsc))})
	}
	return nil
}

// group returns the table group on the grid (log10P, t), making it if new.
func (m *Model) group(log10P, t []float64, cia bool) *tableGroup {
	for _, g := range m.groups {
		if g.cia == cia && slices.Equal(g.log10P, log10P) && slices.Equal(g.t, t) {
			return g
		}
	}
	g := &tableGroup{log10P: log10P, t: t, nP: max(1, len(log10P)), nT: len(t), cia: cia}
	m.groups = append(m.groups, g)
	return g
}

// reverseRows converts rows of n float32 or float64 values on an ascending wavenumber
// grid into float64 rows on the model's (ascending wavelength) order.
func reverseRows[E float32 | float64](src []E, n int) []float64 {
	dst := make([]float64, len(src))
	for o := 0; o < len(src); o += n {
		for k := range n {
			dst[o+k] = float64(src[o+n-1-k])
		}
	}
	return dst
}

func (m *Model) setScattering(cfg Config) error {
	var err error
	m.rayleigh, m.lnw, err = m.scatteringTables(cfg, m.wl)
	return err
}

// scatteringTables validates the scattering and grey settings of cfg, sets
// the grey absorber and the haze reference cross-section, and returns the
// Rayleigh cross-section of each scattering species at the wavelengths wl
// (nil for the others) and ln(wl/lambda_ref) for the haze.
func (m *Model) scatteringTables(cfg Config, wl []float64) (rayleigh [][]float64, lnw []float64, err error) {
	nu := make([]float64, len(wl))
	for k, v := range wl {
		nu[k] = 1 / v
	}
	rayleigh = make([][]float64, len(m.species))
	for _, g := range cfg.Rayleigh {
		r, err := opacity.NewRayleigh(g)
		if err != nil {
			return nil, nil, err
		}
		sp := m.speciesIndex(g)
		if sp < 0 {
			return nil, nil, fmt.Errorf("forward: Rayleigh scattering by %q, a gas not in the composition (%s)", g, m.composition())
		}
		if rayleigh[sp] != nil {
			return nil, nil, fmt.Errorf("forward: Rayleigh scattering by %q listed twice", g)
		}
		s := make([]float64, len(nu))
		r.SigmaTo(s, nu)
		rayleigh[sp] = s
	}
	if err := cfg.Grey.Validate(); err != nil {
		return nil, nil, fmt.Errorf("forward: %w", err)
	}
	m.grey = cfg.Grey
	ref := cfg.HazeRefWavelength
	if ref == 0 {
		ref = DefaultHazeReference
	}
	if !(ref > 0) || math.IsInf(ref, 0) {
		return nil, nil, fmt.Errorf("forward: haze reference wavelength %g m, must be positive", ref)
	}
	h2, _ := opacity.NewRayleigh("H2")
	m.hazeSig, m.hazeRef = h2.Sigma(1/ref), ref
	lnw = make([]float64, len(wl))
	for k, v := range wl {
		lnw[k] = math.Log(v / ref)
	}
	return rayleigh, lnw, nil
}

// Gases returns the trace gases in State.VMR order.
func (m *Model) Gases() []string { return append([]string(nil), m.gases...) }

// Fill returns the fill gas (FillH2He or a gas name).
func (m *Model) Fill() string { return m.fill }

// Wavelength returns the model grid (m).
func (m *Model) Wavelength() []float64 { return append([]float64(nil), m.wl...) }

// Layers returns the number of layers.
func (m *Model) Layers() int { return len(m.pLayer) }

// LevelPressures returns the level pressures (Pa), bottom first.
func (m *Model) LevelPressures() []float64 { return append([]float64(nil), m.pLevel...) }

// RefPressure returns the pressure (Pa) at which State.RefRadius applies.
func (m *Model) RefPressure() float64 { return m.refP }

// OutputLen returns the length Transit fills: the number of bins, or of
// model points when unbinned.
func (m *Model) OutputLen() int { return m.nOut }

// Binned reports whether Transit averages onto bins (always so in
// k-distribution mode).
func (m *Model) Binned() bool { return m.bins != nil || m.k != nil }
