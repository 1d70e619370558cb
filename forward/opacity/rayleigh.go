package opacity

import (
	"fmt"
	"math"
	"sort"
)

// Rayleigh is the Rayleigh-scattering cross-section of one gas, a function
// of wavenumber only. Where a gas's formula comes from a refractive index,
// the cross-section is
//
//	sigma(nu) = 24 pi^3 nu^4 / N^2 ((n^2-1)/(n^2+2))^2 F_K(nu)
//
// (the standard form, e.g. Sneep & Ubachs 2005, JQSRT 92, 293, eq. 2), with
// nu the wavenumber, N the number density at which the refractive index n
// was measured and F_K the King correction factor for depolarisation.
//
// Formulas by gas:
//   - H2: Dalgarno & Williams (1962, ApJ 136, 690):
//     sigma = 8.14e-13/l^4 + 1.28e-6/l^6 + 1.61/l^8 cm^2, l in angstrom.
//   - He: refractive index of Mansfield & Peck (1969, JOSA 59, 199),
//     n-1 = 0.01470091/(423.98 - l^-2), l in um, at 273.15 K and 1 atm;
//     F_K = 1 (an atom).
//   - N2: refractive index and King factor as given by Sneep & Ubachs
//     (2005), after Peck & Khanna (1966) and Bates (1984):
//     (n-1) 1e8 = 6498.2 + 307.43305e12/(14.4e9 - s^2) for s > 21360 cm^-1,
//     5677.465 + 318.81874e12/(14.4e9 - s^2) below (s in cm^-1), at
//     288.15 K and 1013.25 hPa; F_K = 1.034 + 3.17e-12 s^2.
//   - O2: refractive index and King factor of Bates (1984, Planet. Space
//     Sci. 32, 785) as tabulated by Bodhaine et al. (1999, J. Atmos. Ocean.
//     Tech. 16, 1854): (n-1) 1e8 = 20564.8 + 2.480899e13/(4.09e9 - s^2),
//     F_K = 1.096 + 1.385e-11 s^2 + 1.448e-20 s^4 (coefficients from memory).
//   - CO2: Sneep & Ubachs (2005) after Bideau-Mehu et al. (1973):
//     n-1 = 1.1427e3 (5799.25/(128908.9^2 - s^2) + 120.05/(89223.8^2 - s^2)
//   - 5.3334/(75037.5^2 - s^2) + 4.3244/(67837.7^2 - s^2)
//   - 0.1218145e-4/(2418.136^2 - s^2)), at 288.15 K and 1013.25 hPa;
//     F_K = 1.1364 + 25.3e-12 s^2.
//   - H2O: refractivity of pure water vapour of Ciddor (1996, Appl. Opt. 35,
//     1566): n-1 = 1.022e-8 (295.235 + 2.6422 k^2 - 0.032380 k^4 +
//     0.004028 k^6), k in um^-1, at 293.15 K and 1333 Pa; King factor from
//     a depolarisation ratio of 3e-4 (Marshall & Smith 1990, from memory).
//
// Each refractive-index formula is a fit over a stated range of
// wavelengths; beyond the long-wavelength end of that range the
// refractivity and King factor are held at their values there, so the
// cross-section falls as nu^4 (the dispersion is negligible in the
// infrared, and the CO2 fit has a pole at 4.1 um that must not be reached).
// Beyond the short-wavelength end the formula is used as it is.
type Rayleigh struct {
	gas string
	f   func(nu float64) float64 // m^-1 -> m^2
}

// Number densities at the reference conditions of the refractive indices,
// from the ideal-gas law with CODATA 2018 k_B.
const (
	kB          = 1.380649e-23                // J/K, CODATA 2018 (exact)
	loschmidt0  = 101325 / (kB * 273.15)      // m^-3 at 273.15 K, 101325 Pa
	loschmidt15 = 101325 / (kB * 288.15)      // m^-3 at 288.15 K, 101325 Pa
	ciddorH2ON  = 1333 / (kB * 293.15)        // m^-3 at 293.15 K, 1333 Pa
	h2oKing     = (6 + 3*3e-4) / (6 - 7*3e-4) // depolarisation ratio 3e-4
)

var rayleighFormulas = map[string]func(nu float64) float64{
	"H2":  rayleighH2,
	"He":  rayleighHe,
	"N2":  rayleighN2,
	"O2":  rayleighO2,
	"CO2": rayleighCO2,
	"H2O": rayleighH2O,
}

// RayleighGases returns the names of the gases with a Rayleigh formula,
// sorted.
func RayleighGases() []string {
	names := make([]string, 0, len(rayleighFormulas))
	for g := range rayleighFormulas {
		names = append(names, g)
	}
	sort.Strings(names)
	return names
}

// NewRayleigh returns the Rayleigh cross-section of gas, or an error naming
// the gas and the gases that have a formula.
func NewRayleigh(gas string) (Rayleigh, error) {
	f, ok := rayleighFormulas[gas]
	if !ok {
		return Rayleigh{}, fmt.Errorf("opacity: no Rayleigh-scattering formula for gas %q (have %v)", gas, RayleighGases())
	}
	return Rayleigh{gas: gas, f: f}, nil
}

// Gas returns the scattering gas's name.
func (r Rayleigh) Gas() string { return r.gas }

// Sigma returns the cross-section in m^2 per molecule at wavenumber nu
// (m^-1, positive).
func (r Rayleigh) Sigma(nu float64) float64 { return r.f(nu) }

// SigmaTo fills dst[k] with the cross-section at wavenumber nu[k].
func (r Rayleigh) SigmaTo(dst, nu []float64) {
	if len(dst) != len(nu) {
		panic("opacity: Rayleigh.SigmaTo: length mismatch")
	}
	for k, v := range nu {
		dst[k] = r.f(v)
	}
}

// Species returns the scattering gas.
func (r Rayleigh) Species() []string { return []string{r.gas} }

// CrossSectionTo fills dst with the cross-section at wavenumbers nu; it does
// not depend on pressure or temperature.
func (r Rayleigh) CrossSectionTo(dst, nu []float64, _, _ float64) { r.SigmaTo(dst, nu) }

// fromIndex is sigma = 24 pi^3 nu^4/N^2 ((n^2-1)/(n^2+2))^2 F_K in SI units.
func fromIndex(nu, nMinus1, numDens, king float64) float64 {
	n2 := (1 + nMinus1) * (1 + nMinus1)
	lf := (n2 - 1) / (n2 + 2)
	nu2 := nu * nu
	return 24 * math.Pi * math.Pi * math.Pi * nu2 * nu2 / (numDens * numDens) * lf * lf * king
}

func rayleighH2(nu float64) float64 {
	// Dalgarno & Williams (1962): lambda in angstrom, sigma in cm^2.
	l := 1e10 / nu // m^-1 -> angstrom
	l2 := l * l
	l4 := l2 * l2
	s := 8.14e-13/l4 + 1.28e-6/(l4*l2) + 1.61/(l4*l4)
	return s * 1e-4
}

func rayleighHe(nu float64) float64 {
	// Mansfield & Peck (1969); their fit spans 0.5-2.0 um.
	s := math.Max(nu*1e-6, 1/2.0) // um^-1, held beyond 2 um
	nm1 := 0.01470091 / (423.98 - s*s)
	return fromIndex(nu, nm1, loschmidt0, 1)
}

func rayleighN2(nu float64) float64 {
	// Sneep & Ubachs (2005): formulas for 4860 cm^-1 < s; held below.
	s := math.Max(nu*1e-2, 4860) // cm^-1
	s2 := s * s
	var nm1 float64
	if s > 21360 {
		nm1 = (6498.2 + 307.43305e12/(14.4e9-s2)) * 1e-8
	} else {
		nm1 = (5677.465 + 318.81874e12/(14.4e9-s2)) * 1e-8
	}
	return fromIndex(nu, nm1, loschmidt15, 1.034+3.17e-12*s2)
}

func rayleighO2(nu float64) float64 {
	// Bates (1984) fit, stated for 0.2-2 um; held beyond 2 um.
	s := math.Max(nu*1e-2, 5000) // cm^-1
	s2 := s * s
	nm1 := (20564.8 + 2.480899e13/(4.09e9-s2)) * 1e-8
	return fromIndex(nu, nm1, loschmidt15, 1.096+1.385e-11*s2+1.448e-20*s2*s2)
}

func rayleighCO2(nu float64) float64 {
	// Bideau-Mehu et al. (1973) fit, measured 0.48-1.82 um; held beyond
	// 1.82 um (5495 cm^-1), well short of the 2418 cm^-1 pole.
	s := math.Max(nu*1e-2, 5495) // cm^-1
	s2 := s * s
	nm1 := 1.1427e3 * (5799.25/(128908.9*128908.9-s2) +
		120.05/(89223.8*89223.8-s2) +
		5.3334/(75037.5*75037.5-s2) +
		4.3244/(67837.7*67837.7-s2) +
		0.1218145e-4/(2418.136*2418.136-s2))
	return fromIndex(nu, nm1, loschmidt15, 1.1364+25.3e-12*s2)
}

func rayleighH2O(nu float64) float64 {
	// Ciddor (1996) water-vapour term, fitted 0.35-1.2 um; held beyond 1.2 um.
	k := math.Max(nu*1e-6, 1/1.2) // um^-1
	k2 := k * k
	nm1 := 1.022e-8 * (295.235 + 2.6422*k2 - 0.032380*k2*k2 + 0.004028*k2*k2*k2)
	return fromIndex(nu, nm1, ciddorH2ON, h2oKing)
}
