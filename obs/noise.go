package obs

import (
	"math"
	"slices"
	"strconv"
)

// NoiseLevel is the noise level of an observation, as compare shows it: the
// median of its per-bin errors (ppm of transit depth). For a constant
// noise it is that constant.
func NoiseLevel(errPPM []float64) float64 {
	if len(errPPM) == 0 {
		return math.NaN()
	}
	s := slices.Clone(errPPM)
	slices.Sort(s)
	m := len(s) / 2
	if len(s)%2 == 1 {
		return s[m]
	}
	return 0.5 * (s[m-1] + s[m])
}

// NoisePPM is the noise level (NoiseLevel, ppm) of errors given as
// fractions of transit depth, rounded to the 12 significant digits
// observation files carry, so that 30 ppm read back from a file is 30, not
// 29.999999999999996.
func NoisePPM(sigma []float64) float64 {
	e := make([]float64, len(sigma))
	for i, s := range sigma {
		e[i] = s * 1e6
	}
	r, _ := strconv.ParseFloat(strconv.FormatFloat(NoiseLevel(e), 'g', 12, 64), 64)
	return r
}

// NoisePPM is the noise level of the data set: NoisePPM of its errors.
func (d *Dataset) NoisePPM() float64 { return NoisePPM(d.Sigma) }
