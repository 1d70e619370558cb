package opacity

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
}
