package lbl

import (
	"cmp"
	"encoding/json"
	"fmt"
	"math"
	"runtime"
	"slices"
	"sort"
	"strconv"
	"strings"
	"sync"

	"chord/forward/opacity"
)

// Physical constants, CODATA 2018 (Tiesinga et al. 2021, Rev. Mod. Phys.
// 93, 025010): h, c and k are exact; m_u is measured.
const (
	planck     = 6.62607015e-34    // J s
	boltzmann  = 1.380649e-23      // J/K
	atomicMass = 1.66053906660e-27 // kg

	// SpeedOfLight is c in m/s (exact by definition).
	SpeedOfLight = 299792458
	// StandardAtmosphere is the pressure of 1 atm in Pa (exact by
	// definition), the unit of HITRAN's half-widths and shifts.
	StandardAtmosphere = 101325
	// C2 is the second radiation constant hc/k in cm K (1.438776877 cm K).
	C2 = 100 * planck * SpeedOfLight / boltzmann
	// TRef is HITRAN's reference temperature, K.
	TRef = 296.0
)

// DefaultWingCutoff is the line-wing cut-off used when none is given:
// 25 cm^-1 from the line centre (fact of the trade, common practice in
// line-by-line work).
const DefaultWingCutoff = 25.0

// LineIntensity returns the intensity of a line at temperature T from its
// HITRAN value at 296 K (Rothman et al. 1998, JQSRT 60, 665, eq. A11;
// Simeckova et al. 2006, JQSRT 98, 130, eq. 3):
//
//	S(T) = S(296) Q(296)/Q(T) exp(-c2 E''/T)/exp(-c2 E''/296)
//	       (1 - exp(-c2 nu/T))/(1 - exp(-c2 nu/296))
//
// with c2 = hc/k. q296 and qT are the partition sums at 296 K and T.
func LineIntensity(l *Line, T, q296, qT float64) float64 {
	boltz := math.Exp(-C2 * l.Elower * (1/T - 1/TRef))
	stim := math.Expm1(-C2*l.Nu/T) / math.Expm1(-C2*l.Nu/TRef)
	return l.S * q296 / qT * boltz * stim
}

// DopplerHWHM returns the Doppler half-width at half maximum (cm^-1) of a
// line at nu (cm^-1) for a molecule of molar mass massG (g/mol) at T (K):
// alpha_D = nu/c sqrt(2 ln2 k T / m).
func DopplerHWHM(nu, T, massG float64) float64 {
	m := massG * atomicMass
	return nu / SpeedOfLight * math.Sqrt(2*math.Ln2*boltzmann*T/m)
}

// Broadening says which gas broadens the lines apart from the absorber
// itself. HITRAN's 160-character records carry air- and self-broadening
// only; for a hydrogen/helium background the air values are scaled by a
// factor the user states (no default guess: H2-broadened widths of many
// molecules are within some tens of percent of air-broadened ones and He
// widths usually smaller, fact of the trade; take a value from the
// literature for the gas at hand).
type Broadening struct {
	Name  string  // background gas, for provenance; "" means "air"
	Scale float64 // gamma_background = Scale * gamma_air; 0 means 1 (air)
	N     float64 // temperature exponent of gamma_background; 0 means the line's n_air
}

// XSecSettings controls BuildXSec. Zero values of the optional fields pick
// the stated defaults.
type XSecSettings struct {
	Gas        string    // gas name of the table, e.g. "H2O" (required)
	Log10P     []float64 // grid: log10 of pressure in Pa, strictly ascending (required)
	T          []float64 // grid: temperature in K, strictly ascending, positive (required)
	Wavenumber []float64 // grid: m^-1, strictly ascending, positive (required)

	// WingCutoff is the distance from the line's catalogue position (cm^-1)
	// beyond which it contributes nothing; 0 means DefaultWingCutoff (25 cm^-1).
	// The profile is cut, not renormalised or shifted down (no pedestal).
	WingCutoff float64
	// MinIntensity skips lines whose intensity at the table temperature is
	// below it, cm^-1/(molecule cm^-2); 0 keeps every line.
	MinIntensity float64
	// SelfFraction is the volume mixing ratio of the absorber itself used
	// for self-broadening, in [0, 1]; 0 (the default) is the dilute limit.
	SelfFraction float64
	// Mixture and Broadening give the background's Lorentz widths and
	// shifts as for LineSettings.
	Mixture    Mixture
	Broadening Broadening
	// NoPressureShift turns the air pressure shift delta_air p off (by
	// default line centres are shifted).
	NoPressureShift bool

	// Workers is the number of goroutines; 0 means GOMAXPROCS. The result
	// does not depend on it.
	Workers int
	// Observer receives the build's progress (one step per wavenumber
	// chunk of a grid point) and its warnings (also recorded in Meta under
	// MetaWarnings); the zero Observer reports nothing.
	Observer Observer

	// Version is the program version, stored in
	// Meta[opacity.MetaProgramVersion]; "" leaves it out.
	Version string
	// Sources is stored as it is in Meta[opacity.MetaSources] (the JSON
	// list of input files and checksums, see opacity.SourcesMeta); ""
	// leaves it out.
	Sources string
}

// BuildXSec computes cross-sections sigma(log10 P, T, wavenumber) in m^2
// per molecule from a line list, line by line:
//
//   - intensity at T: LineIntensity, with each isotopologue's partition
//     function (iso[k].Q; a RigidRotor from Q296 with a warning when nil);
//   - Lorentz half-width (296/T)^n (gamma_bg (p - p_self) + gamma_self p_self),
//     p in atm, gamma_bg = Broadening.Scale gamma_air;
//   - line centre nu + delta_air p (unless NoPressureShift);
//   - Doppler half-width from the isotopologue's mass (DopplerHWHM);
//   - Voigt profile (Voigt, Humlicek 1982 w4), each line evaluated only
//     within WingCutoff of its catalogue (unshifted) position.
//
// By default the values are the cross-section at the grid wavenumbers
// (point samples): a grid coarser than the line widths samples the lines
// rather than averaging them, so build on a grid fine enough for the
// widths at the lowest pressure. (Means over grid cells are not offered:
// averaging cross-sections before the exponential is not radiative
// transfer; k-tables are the fast path.)
//
// The work is split over grid points and wavenumber chunks on Workers
// goroutines; every value sums the same lines in the same order whatever
// the split, so the result is bit-for-bit independent of Workers.
// The lines need not be sorted. Settings and provenance go into Meta.
func BuildXSec(lines []Line, iso IsoData, s *XSecSettings) (*opacity.XSecTable, error) {
	b, err := newBuild(lines, iso, s)
	if err != nil {
		return nil, err
	}
	b.run()
	// Absurd line data (a huge E'' with a sizeable S) can overflow; say so
	// here rather than hand on a table that fails later.
	t := b.table
	for i, v := range t.Sigma {
		if math.IsInf(float64(v), 0) || math.IsNaN(float64(v)) {
			n := len(t.Wavenumber)
			ip, it := i/n/len(t.T), i/n%len(t.T)
			return nil, fmt.Errorf("opacity: BuildXSec %s: cross-section overflows at log10 P %g, T %g K, %g m^-1: check the line list's intensities and lower-state energies",
				s.Gas, t.Log10P[ip], t.T[it], t.Wavenumber[i%n])
		}
	}
	return t, nil
}

// lineBuild is the prepared state of one BuildXSec call.
type lineBuild struct {
	s       *XSecSettings
	lines   []Line      // sorted by Nu
	lineIso []*isoState // per line
	nuCm    []float64   // grid wavenumbers, cm^-1
	cut     float64
	bgScale float64
	width   widthRule
	qRatio  [][]float64
	isos    []*isoState
	table   *opacity.XSecTable
	workers int
	chunks  int
}

type isoState struct {
	key  IsoKey
	name string
	src  string // partition-sum source
	mass float64
	q    PartitionFunc
	idx  int
}

func newBuild(lines []Line, iso IsoData, s *XSecSettings) (*lineBuild, error) {
	if err := checkSettings(s, len(lines)); err != nil {
		return nil, err
	}
	b := &lineBuild{s: s, cut: s.WingCutoff, bgScale: s.Broadening.Scale}
	if b.cut == 0 {
		b.cut = DefaultWingCutoff
	}
	if b.bgScale == 0 {
		b.bgScale = 1
	}
	var err error
	if b.width, err = newWidthRule(s.Mixture, s.Broadening, s.SelfFraction, s.NoPressureShift); err != nil {
		return nil, fmt.Errorf("opacity: BuildXSec %s: %w", s.Gas, err)
	}
	warnings, err := b.setLines(lines, iso)
	if err != nil {
		return nil, err
	}
	if err := b.setPartitionRatios(); err != nil {
		return nil, err
	}
	for _, st := range b.isos {
		if w := partitionWarning(st.name, st.key, st.src, s.T[len(s.T)-1]); w != "" {
			warnings = append(warnings, w)
		}
	}
	if w := fallbackNote(b.width.fallbacks(b.lines), len(b.lines)); w != "" {
		warnings = append(warnings, w)
	}
	b.setGrid()
	if w := b.samplingWarning(); w != "" {
		warnings = append(warnings, w)
	}
	b.workers = s.Workers
	if b.workers == 0 {
		b.workers = runtime.GOMAXPROCS(0)
	}
	// Enough tasks to keep every worker busy: at least 4 per worker, with
	// wavenumber chunks no shorter than 256 points.
	nPT := len(s.Log10P) * len(s.T)
	b.chunks = max(1, min((4*b.workers+nPT-1)/nPT, len(b.nuCm)/256))

	b.table = &opacity.XSecTable{
		Gas:        s.Gas,
		Log10P:     slices.Clone(s.Log10P),
		T:          slices.Clone(s.T),
		Wavenumber: slices.Clone(s.Wavenumber),
		Sigma:      make([]float32, nPT*len(s.Wavenumber)),
		Meta:       b.meta(warnings),
	}
	for _, w := range warnings {
		s.Observer.warn(w)
	}
	return b, nil
}

// checkSettings checks the settings of a build of nLines lines.
func checkSettings(s *XSecSettings, nLines int) error {
	if s == nil {
		return fmt.Errorf("opacity: BuildXSec: no settings")
	}
	if s.Gas == "" {
		return fmt.Errorf("opacity: BuildXSec: no gas name")
	}
	for _, ax := range []struct {
		x    []float64
		name string
	}{{s.Log10P, "log10 pressure"}, {s.T, "temperature"}, {s.Wavenumber, "wavenumber"}} {
		if err := opacity.CheckAxis(ax.x, ax.name); err != nil {
			return fmt.Errorf("opacity: BuildXSec %s: grid: %w", s.Gas, err)
		}
	}
	if !(s.T[0] > 0) {
		return fmt.Errorf("opacity: BuildXSec %s: grid temperature %g K must be positive", s.Gas, s.T[0])
	}
	if !(s.Wavenumber[0] > 0) {
		return fmt.Errorf("opacity: BuildXSec %s: grid wavenumber %g m^-1 must be positive", s.Gas, s.Wavenumber[0])
	}
	if s.WingCutoff < 0 || math.IsNaN(s.WingCutoff) || math.IsInf(s.WingCutoff, 0) {
		return fmt.Errorf("opacity: BuildXSec %s: wing cut-off %g cm^-1 must be positive (0 for the default %g)", s.Gas, s.WingCutoff, DefaultWingCutoff)
	}
	if s.MinIntensity < 0 || math.IsNaN(s.MinIntensity) {
		return fmt.Errorf("opacity: BuildXSec %s: minimum intensity %g must not be negative", s.Gas, s.MinIntensity)
	}
	if !(s.SelfFraction >= 0 && s.SelfFraction <= 1) {
		return fmt.Errorf("opacity: BuildXSec %s: self-broadening fraction %g must be in [0, 1]", s.Gas, s.SelfFraction)
	}
	if s.Broadening.Scale < 0 || math.IsNaN(s.Broadening.Scale) || math.IsInf(s.Broadening.Scale, 0) {
		return fmt.Errorf("opacity: BuildXSec %s: broadening scale %g must be positive (0 for 1)", s.Gas, s.Broadening.Scale)
	}
	if s.Broadening.N < 0 || math.IsNaN(s.Broadening.N) || math.IsInf(s.Broadening.N, 0) {
		return fmt.Errorf("opacity: BuildXSec %s: broadening temperature exponent %g must not be negative", s.Gas, s.Broadening.N)
	}
	if s.Workers < 0 {
		return fmt.Errorf("opacity: BuildXSec %s: %d workers", s.Gas, s.Workers)
	}
	if nLines == 0 {
		return fmt.Errorf("opacity: BuildXSec %s: no lines to build from", s.Gas)
	}
	return nil
}

// setLines sorts a copy of the lines by wavenumber, checks each, and
// gives each the state of its isotopologue, whose partition function must
// cover the grid's temperatures and 296 K. It returns the warnings about
// isotopologues without a partition table, which get a RigidRotor.
func (b *lineBuild) setLines(lines []Line, iso IsoData) (warnings []string, err error) {
	s := b.s
	b.lines = slices.Clone(lines)
	slices.SortStableFunc(b.lines, func(a, c Line) int { return cmpFloat(a.Nu, c.Nu) })
	byKey := map[IsoKey]*isoState{}
	b.lineIso = make([]*isoState, len(b.lines))
	for i := range b.lines {
		l := &b.lines[i]
		if err := l.Validate(); err != nil {
			return nil, fmt.Errorf("opacity: BuildXSec %s: line of %v at %g cm^-1: %w", s.Gas, IsoKey{l.Mol, l.Iso}, l.Nu, err)
		}
		k := IsoKey{l.Mol, l.Iso}
		st := byKey[k]
		if st == nil {
			var warning string
			if st, warning, err = b.newIsoState(k, iso[k]); err != nil {
				return nil, err
			}
			if warning != "" {
				warnings = append(warnings, warning)
			}
			byKey[k] = st
			b.isos = append(b.isos, st)
		}
		b.lineIso[i] = st
	}
	return warnings, nil
}

// newIsoState returns the state of isotopologue k with data d, and a
// warning when it has no partition table and gets a RigidRotor.
func (b *lineBuild) newIsoState(k IsoKey, d *Isotopologue) (st *isoState, warning string, err error) {
	s := b.s
	if d == nil {
		return nil, "", fmt.Errorf("opacity: BuildXSec %s: no isotopologue data (mass, partition function) for %v", s.Gas, k)
	}
	if !(d.Mass > 0) {
		return nil, "", fmt.Errorf("opacity: BuildXSec %s: %v has mass %g, must be positive", s.Gas, k, d.Mass)
	}
	st = &isoState{key: k, name: d.Name, mass: d.Mass, q: d.Q, idx: len(b.isos)}
	if st.q == nil {
		if !(d.Q296 > 0) {
			return nil, "", fmt.Errorf("opacity: BuildXSec %s: %v has neither a partition table nor Q(296 K)", s.Gas, k)
		}
		st.q = &RigidRotor{Q296: d.Q296, Exponent: RotorExponent(k.Mol)}
		warning = fmt.Sprintf("no partition-function table for %s (%v): rigid-rotor approximation Q = Q(296 K) (T/296)^%g used, intensities away from 296 K are approximate",
			d.Name, k, RotorExponent(k.Mol))
	}
	st.src = PartitionSource(d, st.q)
	lo, hi := st.q.Range()
	if s.T[0] < lo || s.T[len(s.T)-1] > hi || TRef < lo || TRef > hi {
		return nil, "", fmt.Errorf("opacity: BuildXSec %s: partition function of %v covers %g-%g K, grid needs %g-%g K and 296 K",
			s.Gas, k, lo, hi, s.T[0], s.T[len(s.T)-1])
	}
	return st, warning, nil
}

// setPartitionRatios sets the partition-function ratios Q(296)/Q(T) per
// isotopologue and grid temperature.
func (b *lineBuild) setPartitionRatios() error {
	s := b.s
	b.qRatio = make([][]float64, len(b.isos))
	for i, st := range b.isos {
		b.qRatio[i] = make([]float64, len(s.T))
		q296 := st.q.Q(TRef)
		for j, T := range s.T {
			qT := st.q.Q(T)
			b.qRatio[i][j] = q296 / qT
			if !(q296 > 0 && qT > 0) || math.IsInf(b.qRatio[i][j], 0) {
				return fmt.Errorf("opacity: BuildXSec %s: partition function of %v gives Q(296 K) = %g, Q(%g K) = %g; both must be positive",
					s.Gas, st.key, q296, T, qT)
			}
		}
	}
	return nil
}

// setGrid sets the grid wavenumbers in cm^-1.
func (b *lineBuild) setGrid() {
	b.nuCm = make([]float64, len(b.s.Wavenumber))
	for k, v := range b.s.Wavenumber {
		b.nuCm[k] = v / 100
	}
}

// samplingWarning says when the grid is coarse against the lines: if the
// largest grid spacing exceeds twice the median Voigt half-width at the
// lowest pressure and temperature, line cores fall
// between grid points and point values are samples of a spiky function,
// not averages over the spacing.
func (b *lineBuild) samplingWarning() string {
	s := b.s
	dmax, med := spacingAndWidth(b.nuCm, b.lines, func(i int) float64 { return b.lineIso[i].mass }, b.bgScale, s.Log10P[0], s.T[0])
	if dmax == 0 || dmax <= CoarseGridRatio*med {
		return ""
	}
	return fmt.Sprintf("grid spacing up to %.3g cm^-1 is %.0f times the median line half-width at %g Pa and %g K (%.3g cm^-1): "+
		"the table holds point samples of the cross-section (opacity sampling), not averages over the spacing; use a finer grid, or a k-table, where that matters",
		dmax, dmax/med, math.Pow(10, s.Log10P[0]), s.T[0], med)
}

// CoarseGridRatio is the ratio of grid spacing to median line half-width
// above which BuildXSec warns that point values sample
// the lines rather than resolve them: 2, i.e. fewer than about one grid
// point per line full width.
const CoarseGridRatio = 2.0

// spacingAndWidth returns the largest spacing of nuCm and the median Voigt
// half-width (cm^-1) of the lines at log10 P (Pa) and T.
func spacingAndWidth(nuCm []float64, lines []Line, mass func(i int) float64, bgScale, log10P, T float64) (dmax, med float64) {
	for k := 1; k < len(nuCm); k++ {
		dmax = max(dmax, nuCm[k]-nuCm[k-1])
	}
	pAtm := math.Pow(10, log10P) / StandardAtmosphere
	hw := make([]float64, len(lines))
	for i := range lines {
		l := &lines[i]
		gL := bgScale * l.GammaAir * math.Pow(TRef/T, l.NAir) * pAtm
		aD := DopplerHWHM(l.Nu, T, mass(i))
		hw[i] = 0.5346*gL + math.Sqrt(0.2166*gL*gL+aD*aD)
	}
	slices.Sort(hw)
	return dmax, hw[len(hw)/2]
}

// MetaWarnings is the table metadata key under which BuildXSec records its
// warnings (one per line), for example about approximate partition sums.
const MetaWarnings = "warnings"

// buildSettings is what BuildXSec records in
// Meta[opacity.MetaBuildSettings] (JSON).
type buildSettings struct {
	Method          string            `json:"method"`
	Profile         string            `json:"profile"`
	Intensity       string            `json:"intensity"`
	Sampling        string            `json:"sampling"`
	Lines           int               `json:"lines"`
	WingCutoff      float64           `json:"wing_cutoff_cm-1"`
	MinIntensity    float64           `json:"min_intensity_cm-1_per_molecule_cm-2"`
	SelfFraction    float64           `json:"self_fraction"`
	Broadener       string            `json:"broadener"`
	BroadenerScale  float64           `json:"broadener_scale"`
	BroadenerN      string            `json:"broadener_temperature_exponent"`
	PressureShift   bool              `json:"pressure_shift"`
	PartitionSource map[string]string `json:"partition_functions"`
	Mixture         string            `json:"broadening_mixture"`
	Fallback        map[string]int    `json:"broadening_fallback_lines,omitempty"`
}

// samplingPoint is the build_settings "sampling" value.
const samplingPoint = "point values at the grid wavenumbers"

func (b *lineBuild) meta(warnings []string) map[string]string {
	s := b.s
	bs := buildSettings{
		Method:          "line by line",
		Profile:         "Voigt; Faddeeva function by Humlicek (1982, JQSRT 27, 437), w4",
		Intensity:       "HITRAN temperature scaling (Rothman et al. 1998, JQSRT 60, 665); c2 = hc/k, CODATA 2018",
		Sampling:        samplingPoint,
		Lines:           len(b.lines),
		WingCutoff:      b.cut,
		MinIntensity:    s.MinIntensity,
		SelfFraction:    s.SelfFraction,
		Broadener:       cmp.Or(s.Broadening.Name, "air"),
		BroadenerScale:  b.bgScale,
		BroadenerN:      "line n_air",
		PressureShift:   !s.NoPressureShift,
		PartitionSource: map[string]string{},
		Mixture:         s.Mixture.String(),
		Fallback:        b.width.fallbacks(b.lines),
	}
	if s.Broadening.N > 0 {
		bs.BroadenerN = strconv.FormatFloat(s.Broadening.N, 'g', -1, 64)
	}
	for _, st := range b.isos {
		bs.PartitionSource[fmt.Sprintf("%d/%d", st.key.Mol, st.key.Iso)] = st.src
	}
	js, err := json.Marshal(bs)
	if err != nil {
		panic(err) // plain struct of strings and finite numbers
	}
	m := map[string]string{opacity.MetaBuildSettings: string(js)}
	if len(warnings) > 0 {
		m[MetaWarnings] = strings.Join(warnings, "\n")
	}
	if s.Version != "" {
		m[opacity.MetaProgramVersion] = s.Version
	}
	if s.Sources != "" {
		m[opacity.MetaSources] = s.Sources
	}
	return m
}

// task is one wavenumber chunk of one (P, T) grid point.
type task struct{ ip, it, k0, k1 int }

func (b *lineBuild) run() {
	s := b.s
	nNu := len(b.nuCm)
	var tasks []task
	for ip := range s.Log10P {
		for it := range s.T {
			for c := range b.chunks {
				tasks = append(tasks, task{ip, it, c * nNu / b.chunks, (c + 1) * nNu / b.chunks})
			}
		}
	}
	work := make(chan task)
	done := make(chan struct{}, len(tasks))
	var wg sync.WaitGroup
	for range min(b.workers, len(tasks)) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			acc := make([]float64, nNu/b.chunks+1)
			for t := range work {
				row := b.table.Row(t.ip, t.it)[t.k0:t.k1]
				b.chunk(row, acc[:t.k1-t.k0], t)
				done <- struct{}{}
			}
		}()
	}
	go func() {
		for _, t := range tasks {
			work <- t
		}
		close(work)
	}()
	for i := range tasks {
		<-done
		s.Observer.progress(i+1, len(tasks))
	}
	wg.Wait()
}

// lineState is one line's parameters at one (P, T) grid point.
type lineState struct {
	S, gammaL, nu0, alphaD float64
}

// ptState holds what every line needs at one (P, T) grid point.
type ptState struct {
	it           int
	T, pAtm, lnT float64
}

func (b *lineBuild) pt(t task) ptState {
	s := b.s
	T := s.T[t.it]
	return ptState{it: t.it, T: T, pAtm: math.Pow(10, s.Log10P[t.ip]) / StandardAtmosphere, lnT: math.Log(TRef / T)}
}

// line returns line i's intensity, widths and centre at ps; ok is false
// when the line is left out (below MinIntensity, or zero).
func (b *lineBuild) line(i int, ps *ptState) (ls lineState, ok bool) {
	s := b.s
	l := &b.lines[i]
	st := b.lineIso[i]
	S := LineIntensity(l, ps.T, b.qRatio[st.idx][ps.it], 1)
	if S < s.MinIntensity || S == 0 {
		return ls, false
	}
	gammaL, shift := b.width.at(l, ps.pAtm, ps.lnT)
	return lineState{
		S:      S,
		gammaL: gammaL,
		nu0:    l.Nu + shift,
		alphaD: DopplerHWHM(l.Nu, ps.T, st.mass),
	}, true
}

// chunk fills dst (float32 cross-sections, m^2) for grid points
// k0..k1-1 of grid point (ip, it), using acc as float64 workspace.
func (b *lineBuild) chunk(dst []float32, acc []float64, t task) {
	clear(acc)
	b.pointChunk(acc, t)
	for k, v := range acc {
		dst[k] = float32(v * 1e-4) // cm^2 -> m^2
	}
}

// pointChunk adds the point values of the lines at grid points k0..k1-1
// to acc (cm^2).
func (b *lineBuild) pointChunk(acc []float64, t task) {
	nu := b.nuCm[t.k0:t.k1]
	ps := b.pt(t)
	// Lines whose window [Nu - cut, Nu + cut] meets the chunk.
	lo := sort.Search(len(b.lines), func(i int) bool { return b.lines[i].Nu >= nu[0]-b.cut })
	hi := sort.Search(len(b.lines), func(i int) bool { return b.lines[i].Nu > nu[len(nu)-1]+b.cut })
	for i := lo; i < hi; i++ {
		l := &b.lines[i]
		ls, ok := b.line(i, &ps)
		if !ok {
			continue
		}
		a := sort.SearchFloat64s(nu, l.Nu-b.cut)
		z := sort.SearchFloat64s(nu, l.Nu+b.cut)
		if z < len(nu) && nu[z] == l.Nu+b.cut {
			z++
		}
		if a >= z {
			continue
		}
		nu0 := ls.nu0
		r := sqrtLn2 / ls.alphaD
		y := ls.gammaL * r
		amp := ls.S * sqrtLn2OverPi / ls.alphaD
		// Humlicek's region I (|x| + y >= 15) covers the far wings, where
		// most grid points of a window lie; there Re w has the closed form
		// of wingRe, evaluated in tight loops either side of the inner part.
		inner := max(15-y, 0) / r
		b0 := a + sort.SearchFloat64s(nu[a:z], nu0-inner)
		b1 := b0 + sort.SearchFloat64s(nu[b0:z], nu0+inner)
		q, y2 := 0.5+y*y, y*y
		ay := amp * 0.5641896 * y
		for k := a; k < b0; k++ {
			acc[k] += ay * wingRe((nu[k]-nu0)*r, q, y2)
		}
		for k := b0; k < b1; k++ {
			acc[k] += amp * voigtRe((nu[k]-nu0)*r, y)
		}
		for k := b1; k < z; k++ {
			acc[k] += ay * wingRe((nu[k]-nu0)*r, q, y2)
		}
	}
}
