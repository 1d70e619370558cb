package forward

import (
	"errors"
	"fmt"
	"math"
	"sort"
)

// Profile is a temperature profile T(P).
type Profile interface {
	// TemperatureTo fills dst[j] with the temperature (K) at pressure p[j]
	// (Pa). g is the gravity (m s^-2) at the reference radius, used by
	// profiles defined on optical depth. It returns ErrTemperature (wrapped
	// or bare) for parameters that give no usable temperature.
	TemperatureTo(dst, p []float64, g float64) error
}

// ErrTemperature reports a temperature profile whose parameters or values
// are not usable (not finite, not positive).
var ErrTemperature = errors.New("forward: temperature profile gives a temperature that is not positive and finite")

// Isothermal is a profile of one temperature T (K) at every pressure.
type Isothermal struct {
	T float64 // K, must be positive
}

// TemperatureTo fills dst with T.
func (iso *Isothermal) TemperatureTo(dst, p []float64, _ float64) error {
	if !(iso.T > 0) || math.IsInf(iso.T, 0) {
		return ErrTemperature
	}
	for j := range dst[:len(p)] {
		dst[j] = iso.T
	}
	return nil
}

// Guillot is the analytic radiative-equilibrium profile of Guillot (2010,
// A&A 520, A27), eq. 29, with an infrared optical depth tau = KappaIR P/g:
//
//	T^4 = 3/4 TInt^4 (2/3 + tau)
//	    + 3/4 TIrr^4 F [2/3 + 1/(Gamma sqrt3) + (Gamma/sqrt3 - 1/(Gamma sqrt3)) exp(-Gamma tau sqrt3)]
//
// TIrr is the irradiation temperature (T_irr = sqrt(R_star/a) T_star) and F
// the redistribution factor (1 at the substellar point, 1/2 for a dayside
// average, 1/4 for a planet-wide average). Gamma is the ratio of visible to
// infrared mean opacities.
type Guillot struct {
	TInt    float64 // internal temperature, K (>= 0)
	TIrr    float64 // irradiation temperature, K (>= 0)
	KappaIR float64 // infrared mean opacity, m^2 kg^-1 (> 0)
	Gamma   float64 // kappa_visible/kappa_IR (> 0)
	F       float64 // redistribution factor (> 0; 1/4 planet average)
}

// TemperatureTo fills dst with the Guillot (2010) temperatures at p.
func (gp *Guillot) TemperatureTo(dst, p []float64, g float64) error {
	ok := func(v float64) bool { return v >= 0 && !math.IsInf(v, 0) }
	if !ok(gp.TInt) || !ok(gp.TIrr) || !(gp.KappaIR > 0) || !(gp.Gamma > 0) || !(gp.F > 0) ||
		math.IsInf(gp.KappaIR, 0) || math.IsInf(gp.Gamma, 0) || math.IsInf(gp.F, 0) || !(g > 0) {
		return ErrTemperature
	}
	s3 := math.Sqrt(3)
	ti4 := gp.TInt * gp.TInt * gp.TInt * gp.TInt
	tr4 := gp.TIrr * gp.TIrr * gp.TIrr * gp.TIrr
	a := 2.0/3 + 1/(gp.Gamma*s3)
	b := gp.Gamma/s3 - 1/(gp.Gamma*s3)
	for j, pj := range p {
		tau := gp.KappaIR * pj / g
		t4 := 0.75*ti4*(2.0/3+tau) + 0.75*tr4*gp.F*(a+b*math.Exp(-gp.Gamma*tau*s3))
		t := math.Sqrt(math.Sqrt(t4))
		if !(t > 0) || math.IsInf(t, 0) {
			return ErrTemperature
		}
		dst[j] = t
	}
	return nil
}

// TableProfile is a user's temperature table, linear in log P between its
// points and constant beyond its ends.
type TableProfile struct {
	logP []float64 // ascending
	t    []float64
}

// NewTableProfile returns the profile through the points (p[i] Pa, t[i] K),
// or an error naming the first bad point.
func NewTableProfile(p, t []float64) (*TableProfile, error) {
	if len(p) != len(t) || len(p) == 0 {
		return nil, fmt.Errorf("forward: temperature table has %d pressures and %d temperatures; need the same number, at least one", len(p), len(t))
	}
	idx := make([]int, len(p))
	for i := range idx {
		idx[i] = i
		if !(p[i] > 0) || math.IsInf(p[i], 0) {
			return nil, fmt.Errorf("forward: temperature table point %d: pressure %g Pa, must be positive and finite", i+1, p[i])
		}
		if !(t[i] > 0) || math.IsInf(t[i], 0) {
			return nil, fmt.Errorf("forward: temperature table point %d: temperature %g K, must be positive and finite", i+1, t[i])
		}
	}
	sort.Slice(idx, func(a, b int) bool { return p[idx[a]] < p[idx[b]] })
	tp := &TableProfile{logP: make([]float64, len(p)), t: make([]float64, len(p))}
	for k, i := range idx {
		tp.logP[k] = math.Log(p[i])
		tp.t[k] = t[i]
		if k > 0 && tp.logP[k] == tp.logP[k-1] {
			return nil, fmt.Errorf("forward: temperature table has pressure %g Pa twice", p[i])
		}
	}
	return tp, nil
}

// TemperatureTo fills dst with the tabulated temperatures at p.
func (tp *TableProfile) TemperatureTo(dst, p []float64, _ float64) error {
	n := len(tp.logP)
	for j, pj := range p {
		x := math.Log(pj)
		switch {
		case n == 1 || x <= tp.logP[0]:
			dst[j] = tp.t[0]
		case x >= tp.logP[n-1]:
			dst[j] = tp.t[n-1]
		default:
			i := sort.SearchFloat64s(tp.logP, x) - 1
			w := (x - tp.logP[i]) / (tp.logP[i+1] - tp.logP[i])
			dst[j] = (1-w)*tp.t[i] + w*tp.t[i+1]
		}
	}
	return nil
}

var (
	_ Profile = (*Isothermal)(nil)
	_ Profile = (*Guillot)(nil)
	_ Profile = (*TableProfile)(nil)
)
