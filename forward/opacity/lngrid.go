package opacity

import "math"

// LnGrid is a wavenumber grid uniform in ln(nu), that is of constant
// resolving power: Nu(k) = Nu0 exp(k/R) cm^-1 for integer k. Doppler widths
// scale with nu, so on such a grid every line has the same number of points
// per Doppler width.
type LnGrid struct {
	Nu0 float64 // cm^-1 at k = 0
	R   float64 // nu/dnu
}

// Nu returns the wavenumber (cm^-1) of point k.
func (g LnGrid) Nu(k int) float64 { return g.Nu0 * math.Exp(float64(k)/g.R) }

// Index returns the (fractional) point index of wavenumber nu (cm^-1).
func (g LnGrid) Index(nu float64) float64 { return g.R * math.Log(nu/g.Nu0) }
