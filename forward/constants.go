package forward

// Physical constants, SI. CODATA 2018 recommended values (Tiesinga et al.
// 2021, Rev. Mod. Phys. 93, 025010); k_B, h and c are exact by the 2019 SI.
const (
	Boltzmann   = 1.380649e-23      // k_B, J K^-1 (CODATA 2018, exact)
	Planck      = 6.62607015e-34    // h, J s (CODATA 2018, exact)
	SpeedLight  = 299792458         // c, m s^-1 (exact)
	AtomicMass  = 1.66053906660e-27 // m_u, kg (CODATA 2018)
	Gravitation = 6.67430e-11       // G, m^3 kg^-1 s^-2 (CODATA 2018)
)

// Nominal solar, terrestrial and jovian values of IAU 2015 Resolution B3
// (Prsa et al. 2016, AJ 152, 41). Masses follow from the nominal GM and
// CODATA 2018 G, as the resolution recommends.
const (
	SolarRadius   = 6.957e8      // R_sun^N, m
	JupiterRadius = 7.1492e7     // R_J^N equatorial, m
	EarthRadius   = 6.3781e6     // R_E^N equatorial, m
	GMSun         = 1.3271244e20 // (GM)_sun^N, m^3 s^-2
	GMJupiter     = 1.2668653e17 // (GM)_J^N, m^3 s^-2
	GMEarth       = 3.986004e14  // (GM)_E^N, m^3 s^-2
	SolarMass     = GMSun / Gravitation
	JupiterMass   = GMJupiter / Gravitation
	EarthMass     = GMEarth / Gravitation
)

// Unit conversions (definitions).
const (
	Bar        = 1e5                 // Pa
	Micron     = 1e-6                // m
	eulerGamma = 0.57721566490153286 // Euler-Mascheroni constant
)
