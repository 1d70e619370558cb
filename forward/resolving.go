package forward

import (
	"fmt"
	"math"

	"chord/forward/opacity"
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
	blo, bhi := opacity.AnchoredBins(lo/Micron, hi/Micron, r)
	if len(blo) < 1 || len(blo) > 1e7 {
		return Bins{}, fmt.Errorf("wavelength range %g-%g um holds %d whole bins at R = %g (edges at exp(k/R) um)", lo/Micron, hi/Micron, len(blo), r)
	}
	return Bins{Lo: blo, Hi: bhi}, nil
}
