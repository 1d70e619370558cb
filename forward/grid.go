package forward

import (
	"fmt"
	"math"
)

// Default atmosphere grid: levels log-spaced from 1e-7 bar to 100 bar, 100
// layers, reference pressure 10 bar (DESIGN.md section 2).
const (
	DefaultTopPressure    = 1e-7 * Bar
	DefaultBottomPressure = 100 * Bar
	DefaultLayers         = 100
	DefaultRefPressure    = 10 * Bar
)

// Default haze power law: index gamma = -4, Rayleigh's (the enhanced
// Rayleigh scattering of Lecavelier des Etangs et al. 2008, A&A 481, L83),
// at the pivot wavelength 0.35 um of MacDonald & Madhusudhan (2017, MNRAS
// 469, 1979; from memory).
const (
	DefaultHazeSlope     = -4.0
	DefaultHazeReference = 0.35 * Micron
)

// PressureLevels returns n+1 level pressures (Pa) of n layers, log-spaced
// from bottom (index 0) to top (index n):
//
//	p_i = bottom (top/bottom)^(i/n).
func PressureLevels(top, bottom float64, n int) ([]float64, error) {
	if n < 1 {
		return nil, fmt.Errorf("forward: %d layers, need at least 1", n)
	}
	if !(top > 0) || math.IsInf(top, 0) {
		return nil, fmt.Errorf("forward: top pressure %g Pa, must be positive and finite", top)
	}
	if !(bottom > top) || math.IsInf(bottom, 0) {
		return nil, fmt.Errorf("forward: bottom pressure %g Pa must be finite and above the top pressure %g Pa", bottom, top)
	}
	p := make([]float64, n+1)
	lr := math.Log(top / bottom)
	for i := range p {
		p[i] = bottom * math.Exp(lr*float64(i)/float64(n))
	}
	p[0], p[n] = bottom, top
	return p, nil
}

// WavelengthGrid returns wavelengths (m) from lo to hi, both included,
// evenly spaced in ln lambda at a resolving power lambda/dlambda of at
// least resolvingPower: n = ceil(R ln(hi/lo)) + 1 points.
func WavelengthGrid(lo, hi, resolvingPower float64) ([]float64, error) {
	if !(lo > 0) || !(hi > lo) || math.IsInf(hi, 0) {
		return nil, fmt.Errorf("forward: wavelength range %g-%g m: need 0 < low < high, finite", lo, hi)
	}
	if !(resolvingPower > 0) || math.IsInf(resolvingPower, 0) {
		return nil, fmt.Errorf("forward: resolving power %g, must be positive and finite", resolvingPower)
	}
	steps := math.Ceil(resolvingPower*math.Log(hi/lo) - 1e-9)
	if steps > 1e7 {
		return nil, fmt.Errorf("forward: wavelength range %g-%g m at resolving power %g needs %g points, more than 1e7", lo, hi, resolvingPower, steps+1)
	}
	return WavelengthGridN(lo, hi, max(int(steps), 1)+1)
}

// WavelengthGridN returns n wavelengths (m) log-spaced from lo to hi,
// both included.
func WavelengthGridN(lo, hi float64, n int) ([]float64, error) {
	if !(lo > 0) || !(hi > lo) || math.IsInf(hi, 0) {
		return nil, fmt.Errorf("forward: wavelength range %g-%g m: need 0 < low < high, finite", lo, hi)
	}
	if n < 2 {
		return nil, fmt.Errorf("forward: %d wavelength points, need at least 2", n)
	}
	w := make([]float64, n)
	lr := math.Log(hi / lo)
	for k := range w {
		w[k] = lo * math.Exp(lr*float64(k)/float64(n-1))
	}
	w[0], w[n-1] = lo, hi
	return w, nil
}
