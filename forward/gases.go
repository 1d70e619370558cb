package forward

import (
	"fmt"
	"sort"
	"strings"
	"unicode"
)

// Standard atomic weights, conventional or abridged values of IUPAC
// (CIAAW 2021; Prohaska et al. 2022, Pure Appl. Chem. 94, 573; from memory).
var atomicWeight = map[string]float64{
	"H": 1.008, "He": 4.002602, "C": 12.011, "N": 14.007, "O": 15.999,
	"Na": 22.98976928, "Si": 28.085, "P": 30.973761998, "S": 32.06,
	"Cl": 35.45, "Ar": 39.95, "K": 39.0983, "Ca": 40.078, "Ti": 47.867,
	"V": 50.9415, "Fe": 55.845,
}

// knownGases are the gases chord knows by name; each name is its chemical
// formula, and its molecular mass is the sum of the atomic weights.
var knownGases = []string{
	"Ar", "C2H2", "C2H4", "C2H6", "CH4", "CO", "CO2", "CaH", "FeH", "H2",
	"H2O", "H2S", "HCN", "HCl", "He", "K", "N2", "N2O", "NH3", "NO", "NO2",
	"Na", "NaH", "O2", "O3", "OH", "PH3", "SO2", "SiO", "TiO", "VO",
}

var gasMass = func() map[string]float64 {
	m := make(map[string]float64, len(knownGases))
	for _, g := range knownGases {
		w, err := formulaMass(g)
		if err != nil {
			panic(err) // the list above is ours
		}
		m[g] = w
	}
	return m
}()

// formulaMass sums the atomic weights of a formula such as "C2H6".
func formulaMass(f string) (float64, error) {
	var total float64
	r := []rune(f)
	for i := 0; i < len(r); {
		if !unicode.IsUpper(r[i]) {
			return 0, fmt.Errorf("forward: bad formula %q", f)
		}
		j := i + 1
		for j < len(r) && unicode.IsLower(r[j]) {
			j++
		}
		el := string(r[i:j])
		w, ok := atomicWeight[el]
		if !ok {
			return 0, fmt.Errorf("forward: unknown element %q in %q", el, f)
		}
		n := 0
		for j < len(r) && unicode.IsDigit(r[j]) {
			n = 10*n + int(r[j]-'0')
			j++
		}
		if n == 0 {
			n = 1
		}
		total += float64(n) * w
		i = j
	}
	return total, nil
}

// MolecularMass returns the molecular mass of a gas in atomic mass units
// (g/mol), from IUPAC standard atomic weights, or an error naming the gas.
func MolecularMass(gas string) (float64, error) {
	m, ok := gasMass[gas]
	if !ok {
		return 0, fmt.Errorf("forward: unknown gas %q (known gases: %s)", gas, strings.Join(KnownGases(), ", "))
	}
	return m, nil
}

// KnownGases returns the names of the gases chord knows, sorted.
func KnownGases() []string {
	s := append([]string(nil), knownGases...)
	sort.Strings(s)
	return s
}

// FillH2He names the fill gas of giant planets: H2 and He in the number
// ratio State.HeH2.
const FillH2He = "H2+He"

// DefaultHeH2 is the He/H2 number ratio of a solar-composition fill gas:
// He/H = 0.085 by number (Asplund et al. 2009, ARA&A 47, 481) gives
// He/H2 = 0.17.
const DefaultHeH2 = 0.17

// ScaleHeight returns the pressure scale height H = k_B T/(mu m_u g) in m,
// for temperature T (K), mean molecular weight mu (u) and gravity g (m s^-2).
func ScaleHeight(T, mu, g float64) float64 {
	return Boltzmann * T / (mu * AtomicMass * g)
}
