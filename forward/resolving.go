package forward

import (
	"fmt"
	"math"
)

// ResolvingPowerBins returns adjacent bins of resolving power R covering
// as much of [lo, hi] (m) as whole bins can: their edges are the
// wavelengths exp(k/R) um for integer k, so every bin has width
// lambda_k (e^(1/R) - 1) and centre/width = coth(1/(2R))/2, which is R
// to a relative 1/(12 R^2). Bins of resolving power R and of any multiple
// of R share their edges (one R-bin is m mR-bins), which is how
// k-tables built at a high R serve instruments binned at a lower one. A
// range too narrow for one bin, R <= 0.5 or bad bounds are errors.
func ResolvingPowerBins(lo, hi, r float64) (Bins, error) {
	if !(lo > 0) || !(hi > lo) || math.IsInf(hi, 0) {
		return Bins{}, fmt.Errorf("wavelength range %g-%g um: need 0 < low < high", lo/Micron, hi/Micron)
	}
	if !(r > 0.5) || math.IsInf(r, 0) {
		return Bins{}, fmt.Errorf("resolving power %g: must be finite and above 0.5", r)
	}
	// Edges within [lo, hi], with a relative 1e-9 of slack for ends given
	// as rounded edge values.
	k0 := int(math.Ceil(r*math.Log(lo/Micron) - 1e-9*r))
	k1 := int(math.Floor(r*math.Log(hi/Micron) + 1e-9*r))
	if k1-k0 < 1 || k1-k0 > 1e7 {
		return Bins{}, fmt.Errorf("wavelength range %g-%g um holds %d whole bins at R = %g (edges at exp(k/R) um)", lo/Micron, hi/Micron, max(k1-k0, 0), r)
	}
	edges := make([]float64, k1-k0+1)
	for i := range edges {
		edges[i] = math.Exp(float64(k0+i)/r) * Micron
	}
	return BinsFromEdges(edges)
}
