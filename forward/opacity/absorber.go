package opacity

// Absorber is an opacity source as the forward model sees it: a cross-section
// on a wavenumber grid at one pressure and temperature. The absorption
// coefficient (m^-1) it adds to a layer is the cross-section times the
// number densities of Species: one gas (cross-section in m^2), a pair
// (collision-induced absorption, m^5), or none, meaning every molecule of
// the gas (m^2; the grey absorber).
//
// The forward model's prepared fast path handles each kind of source
// directly (tables are resampled once onto the model grid); Absorber is the
// plain, per-layer definition that path must agree with (tests compare the two).
type Absorber interface {
	Species() []string
	// CrossSectionTo fills dst[k] with the cross-section at wavenumber
	// nu[k] (m^-1) for pressure p (Pa) and temperature temp (K).
	CrossSectionTo(dst, nu []float64, p, temp float64)
}

var (
	_ Absorber = (*XSecTable)(nil)
	_ Absorber = (*CIATable)(nil)
	_ Absorber = Rayleigh{}
	_ Absorber = Grey{}
)
