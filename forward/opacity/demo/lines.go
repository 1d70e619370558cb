package demo

import (
	"math"

	"chord/forward/opacity/lbl"
)

// The demo line lists: synthetic bands at the real band centres of eight
// gases, so the demo runs on a fresh clone with no downloads. They are
// demo, not for science.
//
// Each band is a rigid-rotor band of a linear molecule with the same
// rotational constant B in both vibrational states: R-branch lines at
// nu0 + 2B (J+1) (J = 0, 1, ...), P-branch lines at nu0 - 2B J (J = 1, 2,
// ...), so neighbouring lines are 2B apart with a gap of 4B at the band
// origin. Line intensities at 296 K follow the Boltzmann envelope of the
// lower state, (2J+1) exp(-c2 B J(J+1) / 296 K), and sum to the band's
// integrated strength; perpendicular bands put a fraction of it into a Q
// branch near nu0. The lower-state energy of each line is B J(J+1), so the
// line-by-line engine moves the envelope with temperature. Real molecules
// (asymmetric tops, inversion doubling, K structure, hot bands) are far
// richer; these bands only put the absorption where it belongs, with about
// the right strength.
//
// Sources of the numbers: band origins, rotational constants and molar
// masses are handbook values (Herzberg 1945, "Infrared and Raman Spectra of
// Polyatomic Molecules"; Herzberg 1950, "Spectra of Diatomic Molecules";
// NIST Chemistry WebBook), written here from memory, rounded. Band strengths
// are from memory and rough (a factor of about 2), except those of CO, O2
// and the CO2 1.6 um bands, which are the sums of the lines of those bands
// in the HITRAN files in ../shared/data (comments give the sums); where
// those files hold a whole band, the tests compare the demo strength with
// the sum of its lines. Abundances and masses of the main isotopologues are
// those of HITRAN's molparam table.

// demoBand is one vibrational band of a demo gas.
type demoBand struct {
	Nu0      float64 // band origin, cm^-1
	Strength float64 // integrated band intensity at 296 K, cm^-1/(molecule cm^-2)
	QFrac    float64 // fraction of the strength in a Q branch (0 for a parallel band)
}

// demoGas is one gas of the demo set.
type demoGas struct {
	Name      string
	Mol       int     // HITRAN molecule id
	B         float64 // effective rotational constant, cm^-1
	Mass      float64 // molar mass of the main isotopologue, g/mol
	Abundance float64 // HITRAN abundance of the main isotopologue
	Gamma     float64 // air-broadened half-width at 296 K, cm^-1/atm (typical value, from memory)
	N         float64 // temperature exponent of Gamma
	Bands     []demoBand
}

// demoGases lists the demo gases. Values from memory unless a comment says
// otherwise; the strengths whose comment gives a HITRAN sum were set to it.
var demoGases = []demoGas{
	{Name: "H2O", Mol: 1, B: 14.51, Mass: 18.010565, Abundance: 0.997317, Gamma: 0.08, N: 0.7, Bands: []demoBand{
		{Nu0: 1594.7, Strength: 1.05e-17},  // nu2, 6.3 um
		{Nu0: 3151.6, Strength: 7.5e-20},   // 2 nu2, 3.2 um
		{Nu0: 3657.1, Strength: 5.0e-19},   // nu1, 2.7 um
		{Nu0: 3755.9, Strength: 7.2e-18},   // nu3, 2.7 um
		{Nu0: 5331.3, Strength: 8.0e-19},   // nu2 + nu3, 1.9 um
		{Nu0: 7249.8, Strength: 7.0e-19},   // nu1 + nu3, 1.4 um
		{Nu0: 8807.0, Strength: 6.0e-20},   // nu1 + nu2 + nu3, 1.13 um
		{Nu0: 10613.4, Strength: 6.0e-20},  // 2 nu1 + nu3, 0.94 um
		{Nu0: 13830.9, Strength: 3.0e-21}}, // 3 nu1 + nu3, 0.72 um
	},
	{Name: "CH4", Mol: 6, B: 5.24, Mass: 16.0313, Abundance: 0.98827, Gamma: 0.06, N: 0.75, Bands: []demoBand{
		{Nu0: 1306.2, Strength: 5.5e-18, QFrac: 0.2},  // nu4, 7.7 um
		{Nu0: 3018.9, Strength: 1.1e-17, QFrac: 0.2},  // nu3, 3.3 um
		{Nu0: 4319.0, Strength: 6.0e-19, QFrac: 0.2},  // nu3 + nu4 (and nu2 + nu3), 2.3 um
		{Nu0: 6005.0, Strength: 2.0e-20, QFrac: 0.2},  // 2 nu3, 1.67 um
		{Nu0: 7250.0, Strength: 8.0e-21, QFrac: 0.2},  // 2 nu3 + nu4 region, 1.38 um
		{Nu0: 8700.0, Strength: 3.0e-21, QFrac: 0.2}}, // 3 nu3 region, 1.15 um
	},
	{Name: "CO2", Mol: 2, B: 0.3902, Mass: 43.98983, Abundance: 0.984204, Gamma: 0.07, N: 0.75, Bands: []demoBand{
		{Nu0: 667.4, Strength: 8.0e-18, QFrac: 0.5}, // nu2, 15 um
		{Nu0: 2349.1, Strength: 9.5e-17},            // nu3, 4.3 um
		{Nu0: 3612.8, Strength: 1.0e-18},            // Fermi dyad 2 nu2 + nu3, 2.77 um
		{Nu0: 3714.8, Strength: 1.5e-18},            // Fermi dyad nu1 + nu3, 2.69 um
		{Nu0: 4977.8, Strength: 3.5e-20},            // 2.0 um triad
		{Nu0: 5099.7, Strength: 1.2e-20},            // 2.0 um triad
		{Nu0: 6227.9, Strength: 4.8e-22},            // 1.6 um, 30013 (HITRAN sum in ../shared/data: 4.8e-22)
		{Nu0: 6347.9, Strength: 4.9e-22}},           // 1.6 um, 30012 (HITRAN sum in ../shared/data: 4.9e-22)
	},
	{Name: "CO", Mol: 5, B: 1.9225, Mass: 27.994915, Abundance: 0.986544, Gamma: 0.06, N: 0.7, Bands: []demoBand{
		{Nu0: 2143.27, Strength: 9.8e-18},  // 1-0, 4.7 um (HITRAN2012 sum: 9.97e-18)
		{Nu0: 4260.06, Strength: 7.5e-20},  // 2-0, 2.35 um (HITRAN2012 sum: 7.57e-20)
		{Nu0: 6350.44, Strength: 4.6e-22}}, // 3-0, 1.57 um (HITRAN2012 sum: 4.57e-22)
	},
	{Name: "NH3", Mol: 11, B: 9.44, Mass: 17.026549, Abundance: 0.995872, Gamma: 0.09, N: 0.7, Bands: []demoBand{
		{Nu0: 950.0, Strength: 1.2e-17, QFrac: 0.3},  // nu2 (inversion doublet 932/968), 10.5 um
		{Nu0: 1626.3, Strength: 3.0e-18, QFrac: 0.3}, // nu4, 6.1 um
		{Nu0: 3336.2, Strength: 2.0e-19, QFrac: 0.3}, // nu1, 3.0 um
		{Nu0: 3443.6, Strength: 4.0e-19, QFrac: 0.3}, // nu3, 2.9 um
		{Nu0: 5000.0, Strength: 1.0e-19, QFrac: 0.3}, // combination bands, 2.0 um
		{Nu0: 6610.0, Strength: 4.0e-20, QFrac: 0.3}, // nu1 + nu3 region, 1.5 um
	}},
	{Name: "O3", Mol: 3, B: 0.42, Mass: 47.984745, Abundance: 0.992901, Gamma: 0.07, N: 0.76, Bands: []demoBand{
		{Nu0: 700.9, Strength: 4.0e-19, QFrac: 0.3},  // nu2, 14.3 um
		{Nu0: 1042.1, Strength: 1.4e-17},             // nu3, 9.6 um
		{Nu0: 1103.1, Strength: 5.0e-19, QFrac: 0.3}, // nu1, 9.1 um
		{Nu0: 2110.8, Strength: 1.2e-18},             // nu1 + nu3, 4.7 um
		{Nu0: 3046.1, Strength: 1.0e-19}},            // 3 nu3, 3.3 um
	},
	{Name: "O2", Mol: 7, B: 1.4377, Mass: 31.98983, Abundance: 0.995262, Gamma: 0.045, N: 0.7, Bands: []demoBand{
		{Nu0: 7882.4, Strength: 3.2e-24, QFrac: 0.3},   // a-X 0-0, 1.27 um (HITRAN2012 sum: 3.2e-24)
		{Nu0: 13122.0, Strength: 2.2e-22, QFrac: 0.3},  // b-X 0-0, A band, 0.76 um (HITRAN2012 sum: 2.23e-22)
		{Nu0: 14525.7, Strength: 1.5e-23, QFrac: 0.3}}, // b-X 1-0, B band, 0.69 um (HITRAN2012 sum: 1.52e-23)
	},
	{Name: "SO2", Mol: 9, B: 0.32, Mass: 63.961901, Abundance: 0.945678, Gamma: 0.1, N: 0.75, Bands: []demoBand{
		{Nu0: 517.9, Strength: 3.5e-18, QFrac: 0.3},  // nu2, 19.3 um
		{Nu0: 1151.7, Strength: 3.5e-18, QFrac: 0.3}, // nu1, 8.7 um
		{Nu0: 1361.8, Strength: 3.0e-17, QFrac: 0.3}, // nu3, 7.3 um
		{Nu0: 2499.9, Strength: 4.0e-19, QFrac: 0.3}, // nu1 + nu3, 4.0 um
	}},
}

// demoTMax is the highest temperature the demo line lists are made for, K:
// every band carries rotational levels up to where the lower-state
// population at demoTMax has fallen below exp(-demoPopCut) of the ground
// level's.
const (
	demoTMax   = 3000.0
	demoPopCut = 12.0
)

// demoQSpread is the spread of a demo Q branch: its lines sit at
// nu0 - demoQSpread B J(J+1), a stand-in for the difference of the
// rotational constants of the two vibrational states (a demo choice).
const demoQSpread = 0.002

// jMax returns the highest rotational level of a demo band of a gas with
// rotational constant b (cm^-1).
func demoJMax(b float64) int {
	// c2 B J(J+1) / TMax = demoPopCut  =>  J(J+1) = demoPopCut TMax / (c2 B)
	x := demoPopCut * demoTMax / (lbl.C2 * b)
	return int(math.Ceil(0.5 * (math.Sqrt(1+4*x) - 1)))
}

// lines returns the demo line list of the gas, sorted by wavenumber.
func (g *demoGas) lines() []lbl.Line {
	jmax := demoJMax(g.B)
	var out []lbl.Line
	for _, band := range g.Bands {
		// Boltzmann envelope w_J = (2J+1) exp(-c2 E_J / 296 K), E_J = B J(J+1).
		w := make([]float64, jmax+1)
		sumR, sumP := 0.0, 0.0
		for j := range w {
			w[j] = float64(2*j+1) * math.Exp(-lbl.C2*g.B*float64(j*(j+1))/lbl.TRef)
			sumR += w[j] // R branch: J = 0 .. jmax
			if j > 0 {
				sumP += w[j] // P and Q branches: J = 1 .. jmax
			}
		}
		sR := band.Strength * (1 - band.QFrac) / 2 / sumR
		sP := band.Strength * (1 - band.QFrac) / 2 / sumP
		sQ := band.Strength * band.QFrac / sumP
		add := func(nu, s float64, j int) {
			if nu <= 0 || s <= 0 {
				return
			}
			out = append(out, lbl.Line{
				Mol: g.Mol, Iso: 1, Nu: nu, S: s,
				GammaAir: g.Gamma, GammaSelf: g.Gamma, NAir: g.N,
				Elower: g.B * float64(j*(j+1)),
				GLower: float64(2*j + 1),
			})
		}
		for j := 0; j <= jmax; j++ {
			add(band.Nu0+2*g.B*float64(j+1), sR*w[j], j)
			if j > 0 {
				add(band.Nu0-2*g.B*float64(j), sP*w[j], j)
				if band.QFrac > 0 {
					add(band.Nu0-demoQSpread*g.B*float64(j*(j+1)), sQ*w[j], j)
				}
			}
		}
	}
	return lbl.MergeLines(out)
}

// demoPartition is the partition function that belongs to the demo
// bands: the rigid-rotor sum Q(T) = sum_J (2J+1) exp(-c2 B J(J+1) / T) over
// the levels the line list carries, with no vibrational factor (the demo
// bands stand for a band system whose total strength does not change with
// temperature, hot bands included). It makes the integrated strength of a
// demo band independent of T apart from stimulated emission.
type demoPartition struct {
	b    float64
	jmax int
}

var _ lbl.PartitionFunc = demoPartition{}

// Q evaluates the rotational sum at T (K).
func (p demoPartition) Q(T float64) float64 {
	q := 0.0
	for j := 0; j <= p.jmax; j++ {
		q += float64(2*j+1) * math.Exp(-lbl.C2*p.b*float64(j*(j+1))/T)
	}
	return q
}

// Range is the temperature range the demo lists are made for.
func (p demoPartition) Range() (lo, hi float64) { return 10, demoTMax }

// isotopologue returns the engine's view of the demo gas's main isotopologue.
func (g *demoGas) isotopologue() *lbl.Isotopologue {
	q := demoPartition{b: g.B, jmax: demoJMax(g.B)}
	return &lbl.Isotopologue{
		Name:      g.Name + "_demo",
		Abundance: g.Abundance,
		Q296:      q.Q(lbl.TRef),
		Mass:      g.Mass,
		Q:         q,
	}
}
