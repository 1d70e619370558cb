package retrieve

import (
	"fmt"
	"math"
	"math/rand/v2"

	"chord/forward"
)

// Simulated observations (chord simulate, chord plan).
//
// A scenario's true spectrum, binned onto the instrument's bins, with an
// error bar per bin from a noise model:
//
//   - a constant error in ppm of transit depth, or
//   - per-bin errors read from a file,
//
// either for one transit and divided by sqrt(N) for N transits (photon
// noise averages down as 1/sqrt(N) for independent transits; fact of the
// trade). The depth is either the noise-free model (the usual choice for
// forecasts: the posterior is then centred on the truth and its width is
// the expected one, without the scatter of one noise draw) or the model
// plus Gaussian noise drawn from a seeded generator.

// ResolvingPowerBins returns adjacent bins of constant resolving power
// R = lambda/delta-lambda covering [lo, hi] (m): the i-th bin has centre
// c_i and width c_i/R, so consecutive edges grow by the factor
// (2R+1)/(2R-1). The last bin ends at or below hi; a range too narrow for
// one bin, R <= 0.5 or bad bounds are errors.
func ResolvingPowerBins(lo, hi, r float64) (forward.Bins, error) {
	if !(lo > 0) || !(hi > lo) || math.IsInf(hi, 0) {
		return forward.Bins{}, fmt.Errorf("wavelength range %g-%g um: need 0 < low < high", lo/forward.Micron, hi/forward.Micron)
	}
	if !(r > 0.5) || math.IsInf(r, 0) {
		return forward.Bins{}, fmt.Errorf("resolving power %g: must be finite and above 0.5", r)
	}
	f := (2*r + 1) / (2*r - 1)
	n := int(math.Floor(math.Log(hi/lo)/math.Log(f) + 1e-9))
	if n < 1 {
		return forward.Bins{}, fmt.Errorf("wavelength range %g-%g um is narrower than one bin at R = %g", lo/forward.Micron, hi/forward.Micron, r)
	}
	edges := make([]float64, n+1)
	edges[0] = lo
	for i := 1; i <= n; i++ {
		edges[i] = edges[i-1] * f
	}
	return forward.BinsFromEdges(edges)
}

// Noise is the noise model of a simulated observation.
type Noise struct {
	// PPM is a constant single-transit error per bin (ppm of transit
	// depth); used when PerBinPPM is nil. Must be positive.
	PPM float64
	// PerBinPPM are single-transit errors per bin (ppm), one per bin.
	PerBinPPM []float64
	// Transits N divides the single-transit errors by sqrt(N); 0 means 1.
	Transits int
}

// Errors fills dst (len n, the number of bins) with the errors as a
// fraction of transit depth, or returns an error naming the bad value.
func (nz Noise) Errors(dst []float64) error {
	n := nz.Transits
	if n == 0 {
		n = 1
	}
	if n < 0 {
		return fmt.Errorf("noise: %d transits: must be at least 1", nz.Transits)
	}
	scale := 1e-6 / math.Sqrt(float64(n))
	if nz.PerBinPPM == nil {
		if !(nz.PPM > 0) || math.IsInf(nz.PPM, 0) {
			return fmt.Errorf("noise: %g ppm: must be positive and finite", nz.PPM)
		}
		for i := range dst {
			dst[i] = nz.PPM * scale
		}
		return nil
	}
	if len(nz.PerBinPPM) != len(dst) {
		return fmt.Errorf("noise: %d per-bin errors for %d bins", len(nz.PerBinPPM), len(dst))
	}
	for i, e := range nz.PerBinPPM {
		if !(e > 0) || math.IsInf(e, 0) {
			return fmt.Errorf("noise: bin %d: error %g ppm: must be positive and finite", i+1, e)
		}
		dst[i] = e * scale
	}
	return nil
}

// AddNoise adds Gaussian noise of standard deviation sigma[i] to depth[i]
// in place, drawing from rng (one normal deviate per bin, in bin order).
func AddNoise(depth, sigma []float64, rng *rand.Rand) {
	if len(depth) != len(sigma) {
		panic("retrieve: AddNoise length mismatch")
	}
	for i := range depth {
		depth[i] += sigma[i] * rng.NormFloat64()
	}
}
