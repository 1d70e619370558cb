// Package exomol reads ExoMol line lists into lbl.Lines, with the
// partition function summed from their states, and two-column
// cross-section files such as ExoMol's cross-section service writes.
//
// ExoMol line lists (Tennyson et al. 2016, J. Mol. Spectrosc. 327, 73,
// "The ExoMol database: molecular line lists for exoplanet and other hot
// atmospheres") come as three kinds of file per isotopologue and data set:
//
//   - <slug>__<dataset>.def: key facts, one value per line, each followed by
//     a "#" comment that names it;
//   - <slug>__<dataset>.states: one state per line, columns
//     i, E (cm^-1), g_tot, J, then optional columns (uncertainty, lifetime,
//     Lande g) and quantum labels, which this reader does not need;
//   - <slug>__<dataset>.trans, or several <slug>__<dataset>__<lo>-<hi>.trans:
//     one transition per line, columns i_upper, i_lower, A (s^-1) and
//     optionally the wavenumber (cm^-1) as the last column.
//
// Any of the .states and .trans files may be bzip2-compressed (.bz2), as
// ExoMol distributes them. All files are streamed.
package exomol

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"chord/forward/opacity/lbl"
	"chord/internal/compressed"
)

// exomolBarPerAtm converts per-bar half-widths to per-atm: 1 atm = 1.01325 bar
// (exact by definition).
const exomolBarPerAtm = lbl.StandardAtmosphere / 1e5

// DefaultGamma and DefaultN are the Lorentz half-width
// (cm^-1/bar at 296 K) and temperature exponent used when a .def file gives
// no default broadening. They equal the defaults the ExoMol CO and CaH .def
// files state (0.07 cm^-1/bar, 0.5), a typical value for broadening by H2.
const (
	DefaultGamma = 0.07
	DefaultN     = 0.5
)

// Def holds the facts of an ExoMol .def file that the reader uses.
// Zero values mean "not stated in the file".
type Def struct {
	Path       string  // file the definition was read from ("" if parsed from a reader)
	IsoFormula string  // e.g. "(12C)(16O)"
	IsoSlug    string  // e.g. "12C-16O"
	Dataset    string  // data set name as the file states it
	Version    string  // YYYYMMDD
	MassDa     float64 // isotopologue mass in dalton (u)
	NumStates  int64   // number of states in the .states file
	NumTrans   int64   // total number of transitions
	MaxTemp    float64 // maximum temperature of the line list, K
	// Gamma is the default Lorentz half-width, cm^-1/bar at 296 K, and N
	// its temperature exponent. Zero when the file gives none.
	Gamma, N float64
}

// Molecule returns the chemical formula of the isotopologue without mass
// numbers, from IsoFormula: "(12C)(16O)" gives "CO", "(1H)2(16O)" gives
// "H2O". It is "" when the file gives no formula.
func (d *Def) Molecule() string {
	var b strings.Builder
	f := d.IsoFormula
	for i := 0; i < len(f); i++ {
		switch c := f[i]; {
		case c == '(':
			for i+1 < len(f) && f[i+1] >= '0' && f[i+1] <= '9' {
				i++ // mass number
			}
		case c == ')':
		default:
			b.WriteByte(c)
		}
	}
	return b.String()
}

// ReadDef reads an ExoMol .def file.
func ReadDef(path string) (*Def, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("exomol: %w", err)
	}
	defer f.Close()
	d, err := ParseDef(f, path)
	if err != nil {
		return nil, err
	}
	d.Path = path
	return d, nil
}

// ParseDef parses an ExoMol .def file from r; name is used in errors.
// Each line is "value # description"; the reader keys on the description, so
// the order of lines and unknown lines do not matter. Keys it needs (mass)
// must be present and well formed; optional keys it uses (state count,
// default broadening) must be well formed when present.
func ParseDef(r io.Reader, name string) (*Def, error) {
	d := &Def{}
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 0, 4096), 1<<20)
	n := 0
	sawID := false
	for sc.Scan() {
		n++
		line := sc.Text()
		if strings.TrimSpace(line) == "" {
			continue
		}
		val, desc, ok := strings.Cut(line, "#")
		if !ok {
			return nil, fmt.Errorf("exomol: %s:%d: no '#' comment naming the value", name, n)
		}
		val = strings.TrimSpace(val)
		desc = strings.ToLower(strings.TrimSpace(desc))
		f := strings.Fields(val)
		errf := func(what string) error {
			return fmt.Errorf("exomol: %s:%d: %s: cannot read %q", name, n, what, val)
		}
		switch {
		case desc == "id":
			if val != "EXOMOL.def" {
				return nil, fmt.Errorf("exomol: %s:%d: ID is %q, want EXOMOL.def", name, n, val)
			}
			sawID = true
		case desc == "isoformula":
			d.IsoFormula = val
		case desc == "iso-slug":
			d.IsoSlug = val
		case strings.HasPrefix(desc, "isotopologue dataset name"):
			d.Dataset = val
		case strings.HasPrefix(desc, "version number"):
			d.Version = val
		case strings.HasPrefix(desc, "isotopologue mass"):
			if len(f) == 0 {
				return nil, errf("isotopologue mass")
			}
			m, err := strconv.ParseFloat(f[0], 64)
			if err != nil || !(m > 0) || math.IsInf(m, 0) {
				return nil, errf("isotopologue mass")
			}
			d.MassDa = m
		case strings.HasPrefix(desc, "no. of states in .states file"):
			v, err := strconv.ParseInt(val, 10, 64)
			if err != nil || v < 0 {
				return nil, errf("number of states")
			}
			d.NumStates = v
		case strings.HasPrefix(desc, "total number of transitions"):
			v, err := strconv.ParseInt(val, 10, 64)
			if err != nil || v < 0 {
				return nil, errf("number of transitions")
			}
			d.NumTrans = v
		case strings.HasPrefix(desc, "maximum temperature of linelist"):
			v, err := strconv.ParseFloat(val, 64)
			if err != nil || !(v >= 0) {
				return nil, errf("maximum temperature")
			}
			d.MaxTemp = v
		case strings.HasPrefix(desc, "default value of lorentzian half-width"):
			v, err := strconv.ParseFloat(val, 64)
			if err != nil || !(v >= 0) || math.IsInf(v, 0) {
				return nil, errf("default Lorentzian half-width")
			}
			d.Gamma = v
		case strings.HasPrefix(desc, "default value of temperature exponent"):
			v, err := strconv.ParseFloat(val, 64)
			if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, errf("default temperature exponent")
			}
			d.N = v
		}
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("exomol: %s: line %d: %w", name, n+1, err)
	}
	if n == 0 {
		return nil, fmt.Errorf("exomol: %s: empty .def file", name)
	}
	if !sawID {
		return nil, fmt.Errorf("exomol: %s: not an ExoMol .def file (no \"EXOMOL.def # ID\" line)", name)
	}
	if d.MassDa == 0 {
		return nil, fmt.Errorf("exomol: %s: no isotopologue mass line", name)
	}
	return d, nil
}

// States holds the states of an ExoMol .states file: energy and total
// degeneracy by state id.
type States struct {
	ID []int64   // state ids, strictly ascending
	E  []float64 // state energy above the ground state, cm^-1
	G  []float64 // total degeneracy g_tot (nuclear spin included, ExoMol convention)
	J  []float64 // total angular momentum quantum number
	// TMax is the upper end of the temperature range where Q is trusted, K
	// (the .def file's maximum temperature; 0 means 5000 K).
	TMax float64

	dense bool // ID[k] == k+1 for all k, so lookup is by index
}

// ReadStates reads an ExoMol .states file, bzip2-compressed when the
// name ends in .bz2.
func ReadStates(path string) (*States, error) {
	r, err := compressed.Open(path, 1)
	if err != nil {
		return nil, fmt.Errorf("exomol: %w", err)
	}
	defer r.Close()
	return ParseStates(r, path)
}

// ParseStates parses a .states file from r; name is used in errors.
// Ids must be positive and strictly ascending (as ExoMol writes them),
// energies finite and non-negative, degeneracies positive.
func ParseStates(r io.Reader, name string) (*States, error) {
	s := &States{dense: true}
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 0, 64*1024), 1<<20)
	var fields []string
	n := 0
	for sc.Scan() {
		n++
		fields = exomolFields(fields[:0], sc.Text())
		if len(fields) == 0 {
			continue
		}
		if len(fields) < 4 {
			return nil, fmt.Errorf("exomol: %s:%d: %d columns, want at least 4 (i, E, g, J)", name, n, len(fields))
		}
		id, err := strconv.ParseInt(fields[0], 10, 64)
		if err != nil || id <= 0 {
			return nil, fmt.Errorf("exomol: %s:%d: state id %q is not a positive integer", name, n, fields[0])
		}
		if k := len(s.ID); k > 0 && id <= s.ID[k-1] {
			return nil, fmt.Errorf("exomol: %s:%d: state id %d does not follow %d (ids must ascend)", name, n, id, s.ID[k-1])
		}
		e, err := strconv.ParseFloat(fields[1], 64)
		if err != nil || !(e >= 0) || math.IsInf(e, 0) {
			return nil, fmt.Errorf("exomol: %s:%d: energy %q is not a finite non-negative number", name, n, fields[1])
		}
		g, err := strconv.ParseFloat(fields[2], 64)
		if err != nil || !(g > 0) || math.IsInf(g, 0) {
			return nil, fmt.Errorf("exomol: %s:%d: degeneracy %q is not a positive number", name, n, fields[2])
		}
		j, err := strconv.ParseFloat(fields[3], 64)
		if err != nil || !(j >= 0) || math.IsInf(j, 0) {
			return nil, fmt.Errorf("exomol: %s:%d: J %q is not a non-negative number", name, n, fields[3])
		}
		if id != int64(len(s.ID))+1 {
			s.dense = false
		}
		s.ID = append(s.ID, id)
		s.E = append(s.E, e)
		s.G = append(s.G, g)
		s.J = append(s.J, j)
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("exomol: %s: line %d: %w", name, n+1, err)
	}
	if len(s.ID) == 0 {
		return nil, fmt.Errorf("exomol: %s: no states", name)
	}
	return s, nil
}

// Index returns the position of state id in the arrays, or false.
func (s *States) Index(id int64) (int, bool) {
	if s.dense {
		if id >= 1 && id <= int64(len(s.ID)) {
			return int(id - 1), true
		}
		return 0, false
	}
	k := sort.Search(len(s.ID), func(i int) bool { return s.ID[i] >= id })
	if k < len(s.ID) && s.ID[k] == id {
		return k, true
	}
	return 0, false
}

// Q returns the partition function summed over the states,
//
//	Q(T) = sum_i g_i exp(-c2 E_i / T),
//
// with c2 = hc/k_B (Tennyson et al. 2016, section on partition functions).
// It is as complete as the states file: above the line list's maximum
// temperature it underestimates Q.
func (s *States) Q(T float64) float64 {
	q := 0.0
	b := -lbl.C2 / T
	for i, e := range s.E {
		q += s.G[i] * math.Exp(b*e)
	}
	return q
}

// Range is the temperature range over which Q is trusted: from 1 K to TMax
// (5000 K when TMax is 0). Together with Q it makes the states an
// lbl.PartitionFunc for the line-by-line engine.
func (s *States) Range() (lo, hi float64) {
	if s.TMax > 0 {
		return 1, s.TMax
	}
	return 1, 5000
}

// Options control the conversion of ExoMol transitions to Lines.
// The zero value converts every transition with the .def file's broadening.
type Options struct {
	// Mol and Iso label the lines with HITRAN molecule and isotopologue ids
	// (0 when the molecule has none).
	Mol, Iso int
	// Abundance multiplies the intensities, to weight them by the
	// isotopologue's terrestrial abundance as HITRAN does (0 means 1: ExoMol
	// intensities are per molecule of the isotopologue).
	Abundance float64
	// Gamma (cm^-1/bar at 296 K) and N override the .def defaults when Gamma
	// is positive; with neither, DefaultGamma and DefaultN are
	// used. The same half-width is used for air and self broadening.
	Gamma, N float64
	// SMin drops lines weaker than this at 296 K, cm^-1/(molecule cm^-2)
	// (0 keeps all).
	SMin float64
	// NuMin and NuMax keep only lines in [NuMin, NuMax] cm^-1 (0 = no bound).
	NuMin, NuMax float64
	// Broad are the .broad files whose J-dependent widths the lines carry
	// as their own broadening by each file's broadener.
	Broad []*Broad
}

// Converter turns transitions into Lines at the reference temperature
// 296 K with the intensity
//
//	S = I_a g' A / (8 pi c nu^2) exp(-c2 E''/T) (1 - exp(-c2 nu/T)) / Q(T)
//
// in cm^-1/(molecule cm^-2), with c in cm/s and nu in cm^-1 (Simeckova et
// al. 2006, JQSRT 98, 130, eq. 20; the same relation in Tennyson et al.
// 2016). Q(296 K) is summed from the states.
type Converter struct {
	States *States
	Q296   float64 // partition function at 296 K
	opt    Options
	gamma  float64 // cm^-1/atm
	n      float64
	abund  float64
}

// NewConverter prepares the conversion of transitions of the given
// states; def may be nil (then the stated defaults are used for broadening).
func NewConverter(def *Def, states *States, opt Options) (*Converter, error) {
	if states == nil || len(states.E) == 0 {
		return nil, errors.New("exomol: no states")
	}
	c := &Converter{States: states, opt: opt, Q296: states.Q(lbl.TRef)}
	switch {
	case opt.Gamma > 0:
		c.gamma, c.n = opt.Gamma, opt.N
	case def != nil && def.Gamma > 0:
		c.gamma, c.n = def.Gamma, def.N
	default:
		c.gamma, c.n = DefaultGamma, DefaultN
	}
	if opt.Gamma < 0 || math.IsNaN(opt.Gamma) || math.IsInf(opt.Gamma, 0) || math.IsNaN(opt.N) || math.IsInf(opt.N, 0) {
		return nil, fmt.Errorf("exomol: broadening half-width %g, exponent %g: must be finite, half-width >= 0", opt.Gamma, opt.N)
	}
	c.gamma *= exomolBarPerAtm // cm^-1/bar -> cm^-1/atm
	c.abund = opt.Abundance
	if c.abund == 0 {
		c.abund = 1
	}
	if !(c.abund > 0 && c.abund <= 1) {
		return nil, fmt.Errorf("exomol: abundance %g must be in (0, 1]", opt.Abundance)
	}
	if !(opt.SMin >= 0) || opt.NuMin < 0 || opt.NuMax < 0 || (opt.NuMax > 0 && opt.NuMax < opt.NuMin) {
		return nil, fmt.Errorf("exomol: bad selection: SMin %g, wavenumber window [%g, %g]", opt.SMin, opt.NuMin, opt.NuMax)
	}
	if !(c.Q296 > 0) || math.IsInf(c.Q296, 0) {
		return nil, fmt.Errorf("exomol: partition function at 296 K is %g, must be positive and finite", c.Q296)
	}
	return c, nil
}

// Line converts one transition (upper and lower state index into States,
// Einstein A in s^-1, wavenumber in cm^-1) to an lbl.Line.
func (c *Converter) Line(up, lo int, a, nu float64) lbl.Line {
	st := c.States
	gu := st.G[up]
	el := st.E[lo]
	s := c.abund * gu * a / (8 * math.Pi * (100 * lbl.SpeedOfLight) * nu * nu) *
		math.Exp(-lbl.C2*el/lbl.TRef) * -math.Expm1(-lbl.C2*nu/lbl.TRef) / c.Q296
	l := lbl.Line{
		Mol: c.opt.Mol, Iso: c.opt.Iso,
		Nu: nu, S: s, A: a,
		GammaAir: c.gamma, GammaSelf: c.gamma, NAir: c.n,
		Elower: el, GUpper: gu, GLower: st.G[lo],
	}
	for _, b := range c.opt.Broad {
		b.set(&l, st.J[lo], st.J[up])
	}
	return l
}

// ScanTrans streams the transitions of one .trans file from r and
// calls fn for each line that passes the options' selection; name is used in
// errors. Rows have the columns i_upper, i_lower, A and optionally further
// columns of which the last is the wavenumber (some published files carry an
// extra integer before it); without a wavenumber it is E_upper - E_lower. A state id
// not in the states file, a non-positive wavenumber or a negative A is an
// error with file and line.
func (c *Converter) ScanTrans(r io.Reader, name string, fn func(lbl.Line) error) error {
	br := bufio.NewReaderSize(r, 256*1024)
	var fields [][]byte // aliases the reader's buffer: no allocation per row
	n := 0
	for {
		raw, err := br.ReadSlice('\n')
		if err == bufio.ErrBufferFull {
			return fmt.Errorf("exomol: %s:%d: line longer than %d bytes", name, n+1, br.Size())
		}
		if len(raw) == 0 && err != nil {
			if err == io.EOF {
				return nil
			}
			return fmt.Errorf("exomol: %s: line %d: %w", name, n+1, err)
		}
		n++
		fields = exomolFields(fields[:0], raw)
		if len(fields) == 0 {
			if err == io.EOF {
				return nil
			}
			continue
		}
		if len(fields) < 3 {
			return fmt.Errorf("exomol: %s:%d: %d columns, want at least 3 (i_upper, i_lower, A)", name, n, len(fields))
		}
		iu, e1 := strconv.ParseInt(string(fields[0]), 10, 64)
		il, e2 := strconv.ParseInt(string(fields[1]), 10, 64)
		if e1 != nil || e2 != nil {
			return fmt.Errorf("exomol: %s:%d: state ids %q %q are not integers", name, n, fields[0], fields[1])
		}
		up, ok1 := c.States.Index(iu)
		lo, ok2 := c.States.Index(il)
		if !ok1 || !ok2 {
			bad := iu
			if ok1 {
				bad = il
			}
			return fmt.Errorf("exomol: %s:%d: state id %d is not in the states file", name, n, bad)
		}
		a, perr := strconv.ParseFloat(string(fields[2]), 64)
		if perr != nil || !(a >= 0) || math.IsInf(a, 0) {
			return fmt.Errorf("exomol: %s:%d: Einstein A %q is not a finite non-negative number", name, n, fields[2])
		}
		var nu float64
		if len(fields) >= 4 {
			nu, perr = strconv.ParseFloat(string(fields[len(fields)-1]), 64)
			if perr != nil {
				return fmt.Errorf("exomol: %s:%d: wavenumber %q is not a number", name, n, fields[len(fields)-1])
			}
		} else {
			nu = c.States.E[up] - c.States.E[lo]
		}
		if !(nu > 0) || math.IsInf(nu, 0) {
			return fmt.Errorf("exomol: %s:%d: wavenumber %g cm^-1 must be positive and finite", name, n, nu)
		}
		o := c.opt
		if (o.NuMin == 0 || nu >= o.NuMin) && (o.NuMax == 0 || nu <= o.NuMax) {
			l := c.Line(up, lo, a, nu)
			if math.IsInf(l.S, 0) || math.IsNaN(l.S) {
				return fmt.Errorf("exomol: %s:%d: line intensity is %g (A %g, wavenumber %g, g' %g)", name, n, l.S, a, nu, l.GUpper)
			}
			if l.S >= o.SMin {
				if err := fn(l); err != nil {
					return err
				}
			}
		}
		if err == io.EOF {
			return nil
		}
	}
}

// List is a line list read from ExoMol files.
type List struct {
	Def    *Def
	States *States
	Lines  []lbl.Line // in file order
	Files  []string   // the .def, .states and .trans files read
	Q296   float64    // partition function at 296 K summed from the states

	abundance float64 // the weight applied to the intensities
}

// Read reads a complete ExoMol line list given its .def file: the
// states file <base>.states[.bz2] and the transitions <base>.trans[.bz2] or
// <base>__*.trans[.bz2] (a list split by wavenumber), where <base> is the .def
// path without its extension. Lines are kept as selected by opt.
func Read(defPath string, opt Options) (*List, error) {
	def, err := ReadDef(defPath)
	if err != nil {
		return nil, err
	}
	base := strings.TrimSuffix(defPath, ".def")
	statesPath, err := exomolFindOne(base+".states", base+".states.bz2", base+".states.gz")
	if err != nil {
		return nil, fmt.Errorf("exomol: %s: states file: %w", defPath, err)
	}
	states, err := ReadStates(statesPath)
	if err != nil {
		return nil, err
	}
	states.TMax = def.MaxTemp
	if def.NumStates > 0 && int64(len(states.ID)) != def.NumStates {
		return nil, fmt.Errorf("exomol: %s has %d states, %s says %d", statesPath, len(states.ID), defPath, def.NumStates)
	}
	transPaths, err := TransFiles(defPath)
	if err != nil {
		return nil, fmt.Errorf("exomol: %s: %w", defPath, err)
	}
	conv, err := NewConverter(def, states, opt)
	if err != nil {
		return nil, fmt.Errorf("%w (for %s)", err, defPath)
	}
	list := &List{Def: def, States: states, Q296: conv.Q296, Files: []string{defPath, statesPath}, abundance: conv.abund}
	for _, p := range transPaths {
		r, err := compressed.Open(p, 1)
		if err != nil {
			return nil, fmt.Errorf("exomol: %w", err)
		}
		err = conv.ScanTrans(r, p, func(l lbl.Line) error {
			list.Lines = append(list.Lines, l)
			return nil
		})
		r.Close()
		if err != nil {
			return nil, err
		}
		list.Files = append(list.Files, p)
	}
	return list, nil
}

// Isotopologue returns what the line-by-line engine needs of the list's
// isotopologue: the .def file's mass, Q(296 K) and the partition function
// summed from the states, and the abundance the intensities were weighted
// with. Use it under the lbl.IsoKey the lines carry (Options Mol, Iso).
func (l *List) Isotopologue() *lbl.Isotopologue {
	return &lbl.Isotopologue{
		Name:      l.Def.IsoSlug + "__" + l.Def.Dataset,
		Abundance: l.abundance,
		Q296:      l.Q296,
		Mass:      l.Def.MassDa,
		Q:         l.States,
	}
}

// TransFiles finds the transition files of an ExoMol list given its
// .def file: <base>.trans, or the chunks <base>__*.trans, each plain or
// compressed (.bz2, .gz), in name order (ExoMol names chunks by their
// wavenumber range, so name order is wavenumber order).
func TransFiles(def string) ([]string, error) {
	base := strings.TrimSuffix(def, ".def")
	if p, err := exomolFindOne(base+".trans", base+".trans.bz2", base+".trans.gz"); err == nil {
		return []string{p}, nil
	}
	var out []string
	for _, pat := range []string{base + "__*.trans", base + "__*.trans.bz2", base + "__*.trans.gz"} {
		m, err := filepath.Glob(pat)
		if err != nil {
			return nil, err
		}
		out = append(out, m...)
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("no transitions file %s.trans[.bz2|.gz] or %s__*.trans[.bz2|.gz]", base, base)
	}
	sort.Strings(out)
	return out, nil
}

// exomolFindOne returns the first of the paths that exists.
func exomolFindOne(paths ...string) (string, error) {
	for _, p := range paths {
		if _, err := os.Stat(p); err == nil {
			return p, nil
		}
	}
	return "", fmt.Errorf("none of %s found", strings.Join(paths, ", "))
}

// exomolFields appends the whitespace-separated fields of s to dst; the
// fields alias s.
func exomolFields[S string | []byte](dst []S, s S) []S {
	i := 0
	for i < len(s) {
		for i < len(s) && exomolSpace(s[i]) {
			i++
		}
		j := i
		for j < len(s) && !exomolSpace(s[j]) {
			j++
		}
		if j > i {
			dst = append(dst, s[i:j])
		}
		i = j
	}
	return dst
}

func exomolSpace(b byte) bool {
	return b == ' ' || b == '\t' || b == '\r' || b == '\n' || b == '\v' || b == '\f'
}
