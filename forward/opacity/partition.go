package opacity

import (
	"bufio"
	"bytes"
	"fmt"
	"math"
	"os"
	"strconv"
	"strings"
)

// PartitionFunc is the total internal partition sum Q(T) of one
// isotopologue, with the temperature range where it is valid.
type PartitionFunc interface {
	Q(T float64) float64
	// Range is the validity range in K; BuildXSec refuses temperatures
	// outside it.
	Range() (lo, hi float64)
}

// QTable is a tabulated partition sum Q(T), interpolated by the four-point
// Lagrange formula on the bracketing points (as the TIPS Fortran routine of
// Laraia et al. 2011, Icarus 215, 391, does on its tables); near the ends
// of the table the four points are the first or last four. A table needs at
// least four points; T must be strictly ascending.
type QTable struct {
	T   []float64 // K
	Sum []float64 // Q(T)
}

var _ PartitionFunc = (*QTable)(nil)

// NewQTable checks and returns a tabulated partition sum.
func NewQTable(t, q []float64) (*QTable, error) {
	if len(t) != len(q) {
		return nil, fmt.Errorf("opacity: partition table has %d temperatures but %d values", len(t), len(q))
	}
	if len(t) < 4 {
		return nil, fmt.Errorf("opacity: partition table has %d points, need at least 4", len(t))
	}
	if err := checkAxis(t, "partition-table temperature"); err != nil {
		return nil, fmt.Errorf("opacity: %w", err)
	}
	for i, v := range q {
		if !(v > 0) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("opacity: partition table value at T = %g K is %g, must be positive", t[i], v)
		}
	}
	return &QTable{T: t, Sum: q}, nil
}

// Range returns the table's temperature span.
func (p *QTable) Range() (lo, hi float64) { return p.T[0], p.T[len(p.T)-1] }

// Q interpolates the table at T (K). Outside Range it extrapolates with
// the end polynomial, which soon becomes meaningless: callers check Range
// (BuildXSec does).
func (p *QTable) Q(T float64) float64 {
	i, _ := Weights(p.T, T)
	// Four points i-1 .. i+2 around the bracket [i, i+1], shifted inside.
	j := min(max(i-1, 0), len(p.T)-4)
	x, y := p.T[j:j+4], p.Sum[j:j+4]
	var s float64
	for a := range 4 {
		w := 1.0
		for b := range 4 {
			if b != a {
				w *= (T - x[b]) / (x[a] - x[b])
			}
		}
		s += w * y[a]
	}
	return s
}

// RigidRotor is the approximate partition sum used when no table is given:
// a rigid rotor, Q_rot proportional to T (linear molecules) or T^1.5
// (non-linear ones), times harmonic-oscillator factors
// prod_i (1 - exp(-c2 w_i / T))^(-d_i) for the given vibrational
// fundamentals, normalised to Q296 at 296 K (textbook statistical
// mechanics, e.g. Herzberg 1945, "Infrared and Raman Spectra", ch. V).
// It ignores centrifugal distortion, anharmonicity and rotation-vibration
// coupling, so it underestimates Q at high temperature; without vibrational
// fundamentals it is the rigid rotor alone. An atom (Exponent 0) keeps
// Q296. Valid, by stated choice, for 10-5000 K.
type RigidRotor struct {
	Q296     float64   // Q at 296 K, e.g. from HITRAN's molparam table
	Exponent float64   // 1 for linear molecules, 1.5 for non-linear ones, 0 for atoms
	Vib      []float64 // vibrational fundamentals, cm^-1 (may be empty)
	Degen    []int     // degeneracy of each fundamental (empty: all 1)
}

var _ PartitionFunc = (*RigidRotor)(nil)

// Range returns the stated validity range of the approximation.
func (p *RigidRotor) Range() (lo, hi float64) { return 10, 5000 }

// Q evaluates the approximation at T (K).
func (p *RigidRotor) Q(T float64) float64 {
	return p.Q296 * math.Pow(T/TRef, p.Exponent) * p.vib(T) / p.vib(TRef)
}

func (p *RigidRotor) vib(T float64) float64 {
	q := 1.0
	for i, w := range p.Vib {
		d := 1
		if i < len(p.Degen) {
			d = p.Degen[i]
		}
		q /= math.Pow(-math.Expm1(-C2*w/T), float64(d))
	}
	return q
}

// linearMolecules are the HITRAN molecules that are linear (or diatomic),
// by id; O (34) is an atom.
var linearMolecules = map[int]bool{2: true, 4: true, 5: true, 7: true, 8: true, 13: true, 14: true, 15: true,
	16: true, 17: true, 18: true, 19: true, 22: true, 23: true, 26: true, 36: true, 43: true, 44: true,
	45: true, 46: true, 48: true, 50: true, 53: true}

// RotorExponent returns the rigid-rotor temperature exponent of a HITRAN
// molecule: 1 for linear molecules, 0 for the oxygen atom, 1.5 otherwise.
func RotorExponent(mol int) float64 {
	switch {
	case mol == 34:
		return 0
	case linearMolecules[mol]:
		return 1
	}
	return 1.5
}

// IsoKey names a HITRAN isotopologue: molecule id and isotopologue number.
type IsoKey struct{ Mol, Iso int }

func (k IsoKey) String() string {
	name := "?"
	if k.Mol > 0 && k.Mol < len(MoleculeNames) {
		name = MoleculeNames[k.Mol]
	}
	return fmt.Sprintf("%s (molecule %d) isotopologue %d", name, k.Mol, k.Iso)
}

// Isotopologue holds what the line-by-line engine needs of one
// isotopologue besides its lines.
type Isotopologue struct {
	Name      string        // HITRAN label, e.g. "CO2_626" (molecule name, "_", AFGL code)
	Abundance float64       // terrestrial abundance as used in HITRAN intensities
	Q296      float64       // Q(296 K) from molparam
	Mass      float64       // molar mass, g/mol (equal to the molecular mass in Da)
	Q         PartitionFunc // nil: BuildXSec uses a RigidRotor from Q296 and warns
}

// IsoData maps isotopologues to their data.
type IsoData map[IsoKey]*Isotopologue

// ReadMolParam reads HITRAN's molparam table: lines "NAME (id)" open a
// molecule; each following line "code abundance Q296 gj mass [global id]"
// is the next isotopologue (numbered 1, 2, ... in file order, as HITRAN
// numbers them).
func ReadMolParam(path string) (IsoData, error) {
	fh, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("opacity: %w", err)
	}
	defer fh.Close()
	sc := bufio.NewScanner(fh)
	out := IsoData{}
	mol, iso, lineNo := 0, 0, 0
	for sc.Scan() {
		lineNo++
		s := strings.TrimSpace(string(bytes.TrimSuffix(sc.Bytes(), []byte{'\r'})))
		if s == "" || strings.HasPrefix(s, "Molecule") || strings.HasPrefix(s, "#") {
			continue
		}
		if o := strings.IndexByte(s, '('); o > 0 && strings.HasSuffix(s, ")") {
			name := strings.TrimSpace(s[:o])
			id, err := strconv.Atoi(s[o+1 : len(s)-1])
			if err != nil || id < 1 || id >= len(MoleculeNames) || MoleculeNames[id] != name {
				return nil, fmt.Errorf("opacity: %s:%d: molecule header %q is not a known HITRAN molecule", path, lineNo, s)
			}
			mol, iso = id, 0
			continue
		}
		f := strings.Fields(s)
		if mol == 0 {
			return nil, fmt.Errorf("opacity: %s:%d: isotopologue line before any molecule header", path, lineNo)
		}
		if len(f) < 5 {
			return nil, fmt.Errorf("opacity: %s:%d: %d fields, want code, abundance, Q(296 K), gj, molar mass", path, lineNo, len(f))
		}
		var v [4]float64
		for i, name := range [...]string{"abundance", "Q(296 K)", "gj", "molar mass"} {
			if v[i], err = strconv.ParseFloat(f[i+1], 64); err != nil || !(v[i] > 0) || math.IsInf(v[i], 0) {
				return nil, fmt.Errorf("opacity: %s:%d: %s %q is not a positive number", path, lineNo, name, f[i+1])
			}
		}
		iso++
		out[IsoKey{mol, iso}] = &Isotopologue{Name: MoleculeNames[mol] + "_" + f[0], Abundance: v[0], Q296: v[1], Mass: v[3]}
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("opacity: %s: %w", path, err)
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("opacity: %s: no isotopologues (empty file)", path)
	}
	return out, nil
}

// ReadTIPSTable reads a TIPS partition-sum table laid out as a header row
// "Temp(K) NAME_code NAME_code ..." followed by rows "T Q Q ..." (the
// TIPS-2011 table of Laraia et al. 2011) and attaches a QTable to every
// isotopologue of d whose Name matches a column. It returns how many were
// attached; columns with no isotopologue in d, and columns of zeros (not
// tabulated), are ignored.
func ReadTIPSTable(path string, d IsoData) (int, error) {
	fh, err := os.Open(path)
	if err != nil {
		return 0, fmt.Errorf("opacity: %w", err)
	}
	defer fh.Close()
	sc := bufio.NewScanner(fh)
	sc.Buffer(make([]byte, 0, 64<<10), 4<<20)
	var (
		names  []string
		cols   [][]float64
		temps  []float64
		lineNo int
	)
	for sc.Scan() {
		lineNo++
		f := strings.Fields(string(sc.Bytes()))
		if len(f) == 0 {
			continue
		}
		if names == nil {
			if !strings.HasPrefix(f[0], "Temp") {
				return 0, fmt.Errorf("opacity: %s:%d: header should start with Temp(K), found %q", path, lineNo, f[0])
			}
			names = f[1:]
			cols = make([][]float64, len(names))
			continue
		}
		if len(f) != len(names)+1 {
			return 0, fmt.Errorf("opacity: %s:%d: %d fields, want %d (temperature and %d partition sums)", path, lineNo, len(f), len(names)+1, len(names))
		}
		for i, s := range f {
			v, err := strconv.ParseFloat(s, 64)
			if err != nil || math.IsInf(v, 0) || math.IsNaN(v) {
				return 0, fmt.Errorf("opacity: %s:%d: field %d %q is not a number", path, lineNo, i+1, s)
			}
			if i == 0 {
				temps = append(temps, v)
			} else {
				cols[i-1] = append(cols[i-1], v)
			}
		}
	}
	if err := sc.Err(); err != nil {
		return 0, fmt.Errorf("opacity: %s: %w", path, err)
	}
	if names == nil {
		return 0, fmt.Errorf("opacity: %s: empty file", path)
	}
	byName := map[string]*Isotopologue{}
	for _, iso := range d {
		byName[iso.Name] = iso
	}
	n := 0
	for i, name := range names {
		iso := byName[name]
		if iso == nil || allZero(cols[i]) {
			continue // not in d, or not tabulated (TIPS-2011 fills such columns with 0)
		}
		q, err := NewQTable(temps, cols[i])
		if err != nil {
			return 0, fmt.Errorf("opacity: %s: column %s: %w", path, name, err)
		}
		iso.Q = q
		n++
	}
	return n, nil
}

func allZero(x []float64) bool {
	for _, v := range x {
		if v != 0 {
			return false
		}
	}
	return true
}

// ReadQFile reads a two-column partition-sum file "T Q" (HITRAN's qN.txt
// files of TIPS-2017 and later, Gamache et al. 2017, JQSRT 203, 70).
func ReadQFile(path string) (*QTable, error) {
	fh, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("opacity: %w", err)
	}
	defer fh.Close()
	sc := bufio.NewScanner(fh)
	var t, q []float64
	lineNo := 0
	for sc.Scan() {
		lineNo++
		f := strings.Fields(string(sc.Bytes()))
		if len(f) == 0 || strings.HasPrefix(f[0], "#") {
			continue
		}
		if len(f) != 2 {
			return nil, fmt.Errorf("opacity: %s:%d: %d fields, want 2 (T, Q)", path, lineNo, len(f))
		}
		a, err1 := strconv.ParseFloat(f[0], 64)
		b, err2 := strconv.ParseFloat(f[1], 64)
		if err1 != nil || err2 != nil {
			return nil, fmt.Errorf("opacity: %s:%d: %q is not two numbers", path, lineNo, strings.Join(f, " "))
		}
		t, q = append(t, a), append(q, b)
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("opacity: %s: %w", path, err)
	}
	tab, err := NewQTable(t, q)
	if err != nil {
		return nil, fmt.Errorf("opacity: %s: %w", path, err)
	}
	return tab, nil
}
