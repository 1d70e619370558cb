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

// WavelengthGrid returns wavelengths (m) from lo to about hi at constant
// resolving power R = lambda/dlambda, spaced evenly in ln lambda by 1/R;
// the last point is the largest not above hi.
func WavelengthGrid(lo, hi, resolvingPower float64) ([]float64, error) {
	if !(lo > 0) || !(hi > lo) || math.IsInf(hi, 0) {
		return nil, fmt.Errorf("forward: wavelength range %g-%g m: need 0 < low < high, finite", lo, hi)
	}
	if !(resolvingPower > 0) || math.IsInf(resolvingPower, 0) {
		return nil, fmt.Errorf("forward: resolving power %g, must be positive and finite", resolvingPower)
	}
	n := int(math.Floor(resolvingPower*math.Log(hi/lo)*(1+1e-12))) + 1
	if n < 2 {
		return nil, fmt.Errorf("forward: wavelength range %g-%g m at resolving power %g holds fewer than 2 points", lo, hi, resolvingPower)
	}
	if n > 10_000_000 {
		return nil, fmt.Errorf("forward: wavelength range %g-%g m at resolving power %g needs %d points, more than 1e7", lo, hi, resolvingPower, n)
	}
	w := make([]float64, n)
	for k := range w {
		w[k] = lo * math.Exp(float64(k)/resolvingPower)
	}
	return w, nil
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
