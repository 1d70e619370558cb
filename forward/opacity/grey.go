package opacity

import (
	"fmt"
	"math"
)

// Grey is a grey absorber: a cross-section per molecule of the whole gas
// that does not depend on wavenumber,
//
//	sigma(P) = Sigma (P/RefPressure)^Exponent.
//
// With Exponent 0 (the default) it is a constant cross-section, the
// classic test case of an isothermal atmosphere with constant opacity
// kappa = Sigma/(mu m_u) (Heng & Kitzmann 2017, MNRAS 470, 2972); a
// positive Exponent gives opacity rising as a power of pressure, as for
// collision-induced absorption (n = 1; Gkouvelis 2025, arXiv:2511.07656).
// It exists for tests and for users' sanity checks.
type Grey struct {
	Sigma       float64 // m^2 per molecule at RefPressure; 0 means no grey absorber
	Exponent    float64 // pressure exponent n; 0 (default) is constant
	RefPressure float64 // Pa; needed only when Exponent is not 0
}

// Validate reports whether the absorber's fields are usable.
func (g Grey) Validate() error {
	if !(g.Sigma >= 0) || math.IsInf(g.Sigma, 0) {
		return fmt.Errorf("opacity: grey cross-section %g m^2, must be finite and non-negative", g.Sigma)
	}
	if math.IsNaN(g.Exponent) || math.IsInf(g.Exponent, 0) {
		return fmt.Errorf("opacity: grey pressure exponent %g, must be finite", g.Exponent)
	}
	if g.Exponent != 0 && !(g.RefPressure > 0 && !math.IsInf(g.RefPressure, 0)) {
		return fmt.Errorf("opacity: grey reference pressure %g Pa, must be positive with a pressure exponent", g.RefPressure)
	}
	return nil
}

// SigmaAt returns the cross-section in m^2 at pressure p (Pa).
func (g Grey) SigmaAt(p float64) float64 {
	if g.Exponent == 0 {
		return g.Sigma
	}
	return g.Sigma * math.Pow(p/g.RefPressure, g.Exponent)
}

// Species returns nil: the grey absorber acts on every molecule.
func (g Grey) Species() []string { return nil }

// CrossSectionTo fills dst with the cross-section at pressure p.
func (g Grey) CrossSectionTo(dst, _ []float64, p, _ float64) {
	s := g.SigmaAt(p)
	for k := range dst {
		dst[k] = s
	}
}
