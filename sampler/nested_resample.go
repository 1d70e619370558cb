package sampler

import (
	"math"
	"math/rand/v2"
)

// EffectiveSize returns Kish's effective sample size (sum w)^2 / sum w^2 of
// the weights exp(logWt) (Kish 1965, Survey Sampling), the number of
// equally weighted samples the weighted set is worth; 0 if no weight is
// positive. logWt may be unnormalised, as DeadPoint.LogWt is; NaN counts
// as zero weight.
func EffectiveSize(logWt []float64) float64 {
	m := maxFinite(logWt)
	if math.IsInf(m, -1) {
		return 0
	}
	var s, s2 float64
	for _, l := range logWt {
		if math.IsNaN(l) {
			continue
		}
		w := math.Exp(l - m)
		s += w
		s2 += w * w
	}
	return s * s / s2
}

func maxFinite(v []float64) float64 {
	m := math.Inf(-1)
	for _, l := range v {
		if l > m && !math.IsInf(l, 1) {
			m = l
		}
	}
	return m
}

// EqualWeight fills dst with the indices of len(dst) equally weighted
// posterior samples drawn from the points with log weights logWt (for
// nested sampling, the dead points' LogWt, unnormalised) by systematic
// resampling: one uniform offset u from rng, then the points holding the
// cumulative weight fractions (u + j)/len(dst), j = 0, 1, ... Each point
// appears floor or ceil of len(dst) times its weight fraction, so the
// samples are unbiased with less resampling noise than independent draws
// (Kitagawa 1996, J. Comput. Graph. Stat. 5, 1). The indices come in
// increasing order. A nil dst is allocated with EffectiveSize(logWt)
// samples (rounded, at least 1). It panics if no weight is positive and
// finite.
func EqualWeight(dst []int, logWt []float64, rng *rand.Rand) []int {
	m := maxFinite(logWt)
	if math.IsInf(m, -1) || math.IsNaN(m) {
		panic(badNoWeight)
	}
	var total float64
	for _, l := range logWt {
		if !math.IsNaN(l) {
			total += math.Exp(l - m)
		}
	}
	if dst == nil {
		dst = make([]int, max(1, int(math.Round(EffectiveSize(logWt)))))
	}
	last := len(logWt) - 1 // the last point of positive weight
	for !(logWt[last] > math.Inf(-1)) {
		last--
	}
	n := float64(len(dst))
	u := rng.Float64()
	var cum float64
	i := 0
	for j := range dst {
		target := (u + float64(j)) / n * total
		for i < last && (math.IsNaN(logWt[i]) || cum+math.Exp(logWt[i]-m) <= target) {
			if !math.IsNaN(logWt[i]) {
				cum += math.Exp(logWt[i] - m)
			}
			i++
		}
		dst[j] = i
	}
	return dst
}

const badNoWeight = "sampler: resampling points none of which has a positive finite weight"
