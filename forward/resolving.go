package forward

import (
	"fmt"
	"math"
)

// ResolvingPowerBins returns adjacent bins of constant resolving power
// R = lambda/delta-lambda covering [lo, hi] (m): the i-th bin has centre
// c_i and width c_i/R, so consecutive edges grow by the factor
// (2R+1)/(2R-1). The last bin ends at or below hi; a range too narrow for
// one bin, R <= 0.5 or bad bounds are errors.
func ResolvingPowerBins(lo, hi, r float64) (Bins, error) {
	if !(lo > 0) || !(hi > lo) || math.IsInf(hi, 0) {
		return Bins{}, fmt.Errorf("wavelength range %g-%g um: need 0 < low < high", lo/Micron, hi/Micron)
	}
	if !(r > 0.5) || math.IsInf(r, 0) {
		return Bins{}, fmt.Errorf("resolving power %g: must be finite and above 0.5", r)
	}
	f := (2*r + 1) / (2*r - 1)
	n := int(math.Floor(math.Log(hi/lo)/math.Log(f) + 1e-9))
	if n < 1 {
		return Bins{}, fmt.Errorf("wavelength range %g-%g um is narrower than one bin at R = %g", lo/Micron, hi/Micron, r)
	}
	edges := make([]float64, n+1)
	edges[0] = lo
	for i := 1; i <= n; i++ {
		edges[i] = edges[i-1] * f
	}
	return BinsFromEdges(edges)
}
