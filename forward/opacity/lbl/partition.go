package lbl

import (
	"fmt"
	"math"
	"strings"

	"chord/forward/opacity"
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
	if err := opacity.CheckAxis(t, "partition-table temperature"); err != nil {
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
	i, _ := opacity.Weights(p.T, T)
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
	// QSource says where Q comes from, for the table's provenance: the
	// edition and file, e.g. "TIPS-2021 (q26_CO_26_tips2021_hapi.txt)";
	// see PartitionSource.
	QSource string
}

// Editions of partition sums, as QSource values begin.
const (
	EditionTIPS2025 = "TIPS-2025"
	EditionTIPS2021 = "TIPS-2021"
	EditionTIPS2017 = "TIPS-2017" // HITRAN's qN.txt files without an edition header (TIPS-2017 or later)
	EditionTIPS2011 = "TIPS-2011"
	EditionExoMolPF = "ExoMol .pf"
	EditionStates   = "summed over ExoMol states"
	EditionRotor    = "rigid rotor (approximate)"
)

// EditionRank orders partition-sum sources from least to most preferred:
// a rigid rotor, the sum over a line list's states, TIPS-2011, TIPS-2017,
// TIPS-2021, TIPS-2025, and an ExoMol .pf file (computed by the line
// list's authors from their complete set of levels). Sources that begin
// with none of the editions rank 0.
func EditionRank(source string) int {
	for i, e := range []string{EditionRotor, EditionStates, EditionTIPS2011, EditionTIPS2017, EditionTIPS2021, EditionTIPS2025, EditionExoMolPF} {
		if strings.HasPrefix(source, e) {
			return i + 1
		}
	}
	return 0
}

// PartitionSource describes where an isotopologue's partition sum q comes
// from: d.QSource when set, "rigid rotor (approximate)" for a RigidRotor,
// "table" otherwise.
func PartitionSource(d *Isotopologue, q PartitionFunc) string {
	if _, ok := q.(*RigidRotor); ok {
		return EditionRotor
	}
	if d != nil && d.QSource != "" {
		return d.QSource
	}
	return "table"
}

// partitionWarning returns a warning when the partition sum of an
// isotopologue is used above 1000 K from a source known to be off there,
// or "". Expected sizes (facts measured from the tables in shared data,
// SOURCES.md): TIPS-2011 is 0.65 % above TIPS-2021 for CO at 1000 K and
// 1.0 % at 1500 K; a rigid rotor leaves out vibrational excitation, which
// for polyatomic molecules raises Q by tens of percent at 1000 K and by
// factors at 2000 K (fact of the trade).
func partitionWarning(name string, key IsoKey, source string, tMax float64) string {
	if tMax <= 1000 {
		return ""
	}
	switch {
	case strings.HasPrefix(source, EditionTIPS2011):
		return fmt.Sprintf("%s (%v): TIPS-2011 partition sums used up to %g K: later editions differ by about 0.7 %% at 1000 K and 1 %% at 1500 K for CO and more for polyatomic molecules at higher temperatures; give a TIPS-2021 or TIPS-2025 table", name, key, tMax)
	case source == EditionRotor:
		return fmt.Sprintf("%s (%v): rigid-rotor partition sum used up to %g K: it leaves out vibrational excitation, which raises Q by tens of percent at 1000 K and by factors at 2000 K for polyatomic molecules; intensities there are too strong by the same factor; give a TIPS or ExoMol table", name, key, tMax)
	}
	return ""
}

// IsoData maps isotopologues to their data.
type IsoData map[IsoKey]*Isotopologue
