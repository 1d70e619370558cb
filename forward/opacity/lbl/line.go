package lbl

import (
	"fmt"
	"math"
	"slices"
)

// Line is one spectral line of a line list. Its fields keep the units of the
// spectroscopic databases (HITRAN definitions, Rothman et al. 1998, JQSRT
// 60, 665): the line-by-line engine is the edge where they meet SI, and its
// output tables are SI.
type Line struct {
	Mol int // HITRAN molecule id (1 H2O, 2 CO2, 3 O3, 5 CO, 6 CH4, 7 O2, 9 SO2, 11 NH3, ...)
	Iso int // HITRAN isotopologue number within the molecule (1 = most abundant)

	Nu        float64 // vacuum wavenumber, cm^-1
	S         float64 // intensity at 296 K, cm^-1/(molecule cm^-2), abundance-weighted as in HITRAN
	A         float64 // Einstein A coefficient, s^-1 (0 when unknown)
	GammaAir  float64 // air-broadened Lorentz half-width (HWHM) at 296 K, cm^-1/atm
	GammaSelf float64 // self-broadened Lorentz half-width at 296 K, cm^-1/atm
	Elower    float64 // lower-state energy, cm^-1
	NAir      float64 // temperature exponent of GammaAir
	DeltaAir  float64 // air pressure shift at 296 K, cm^-1/atm
	GUpper    float64 // upper-state statistical weight (0 when unknown)
	GLower    float64 // lower-state statistical weight (0 when unknown)
	// Broad holds the line's own broadening by H2, He, CO2 and H2O where
	// the list gives it (HITRAN planetary broadeners, ExoMol .broad).
	Broad [NumBroadeners]BroadParams
}

// Validate rejects physically impossible values: a line list with them is
// corrupt, and they would poison every cross-section built from it.
func (l *Line) Validate() error {
	switch {
	case !(l.Nu > 0):
		return fmt.Errorf("wavenumber %g cm^-1 must be positive", l.Nu)
	case l.S < 0:
		return fmt.Errorf("intensity %g must not be negative", l.S)
	case l.A < 0:
		return fmt.Errorf("Einstein A %g must not be negative", l.A)
	case l.GammaAir < 0 || l.GammaSelf < 0:
		return fmt.Errorf("half-widths (%g, %g) must not be negative", l.GammaAir, l.GammaSelf)
	case l.GUpper < 0 || l.GLower < 0:
		return fmt.Errorf("statistical weights (%g, %g) must not be negative", l.GUpper, l.GLower)
	}
	for b, p := range l.Broad {
		if p.Has&HasGamma != 0 && !(p.Gamma >= 0) || math.IsInf(float64(p.Gamma), 0) || math.IsNaN(float64(p.N)) || math.IsInf(float64(p.N), 0) ||
			math.IsNaN(float64(p.Delta)) || math.IsInf(float64(p.Delta), 0) {
			return fmt.Errorf("%s broadening (gamma %g, n %g, delta %g) must be finite, gamma not negative", Broadener(b), p.Gamma, p.N, p.Delta)
		}
	}
	return nil
}

// MoleculeNames are the HITRAN molecule names by HITRAN molecule id
// (index 0 unused), as in HITRAN's molparam table (HITRAN2020 edition,
// ids 1-55).
var MoleculeNames = [...]string{"",
	"H2O", "CO2", "O3", "N2O", "CO", "CH4", "O2", "NO", "SO2", "NO2",
	"NH3", "HNO3", "OH", "HF", "HCl", "HBr", "HI", "ClO", "OCS", "H2CO",
	"HOCl", "N2", "HCN", "CH3Cl", "H2O2", "C2H2", "C2H6", "PH3", "COF2", "SF6",
	"H2S", "HCOOH", "HO2", "O", "ClONO2", "NO+", "HOBr", "C2H4", "CH3OH", "CH3Br",
	"CH3CN", "CF4", "C4H2", "HC3N", "H2", "CS", "SO3", "C2N2", "COCl2", "SO",
	"CH3F", "GeH4", "CS2", "CH3I", "NF3",
}

// MoleculeID returns the HITRAN id of a molecule name ("H2O" -> 1), or 0.
func MoleculeID(name string) int {
	for i, n := range MoleculeNames {
		if i > 0 && n == name {
			return i
		}
	}
	return 0
}

// MergeLines merges line lists (for example from overlapping download
// windows) into one list sorted by wavenumber, keeping one copy of lines
// that appear in more than one list (same molecule, isotopologue,
// wavenumber, intensity and lower-state energy). The copy kept carries
// the broadening parameters of all copies (a list of the lines with their
// H2 shifts merged with one of the same lines with their widths gives
// both); where two copies give the same parameter, the first list's wins.
func MergeLines(lists ...[]Line) []Line {
	var n int
	for _, l := range lists {
		n += len(l)
	}
	out := make([]Line, 0, n)
	for _, l := range lists {
		out = append(out, l...)
	}
	slices.SortStableFunc(out, compareLines)
	k := 0
	for i := range out {
		if k > 0 && compareLines(out[k-1], out[i]) == 0 {
			mergeBroad(&out[k-1], &out[i])
			continue
		}
		out[k] = out[i]
		k++
	}
	return out[:k]
}

// mergeBroad adds to dst the broadening parameters of src that dst lacks.
func mergeBroad(dst, src *Line) {
	for b := range dst.Broad {
		d, s := &dst.Broad[b], &src.Broad[b]
		if s.Has&HasGamma != 0 && d.Has&HasGamma == 0 {
			d.Gamma, d.Has = s.Gamma, d.Has|HasGamma
		}
		if s.Has&HasN != 0 && d.Has&HasN == 0 {
			d.N, d.Has = s.N, d.Has|HasN
		}
		if s.Has&HasDelta != 0 && d.Has&HasDelta == 0 {
			d.Delta, d.Has = s.Delta, d.Has|HasDelta
		}
	}
}

func compareLines(a, b Line) int {
	switch {
	case a.Nu != b.Nu:
		return cmpFloat(a.Nu, b.Nu)
	case a.Mol != b.Mol:
		return a.Mol - b.Mol
	case a.Iso != b.Iso:
		return a.Iso - b.Iso
	case a.S != b.S:
		return cmpFloat(a.S, b.S)
	}
	return cmpFloat(a.Elower, b.Elower)
}

func cmpFloat(a, b float64) int {
	if a < b {
		return -1
	}
	if a > b {
		return 1
	}
	return 0
}
