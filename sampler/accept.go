package sampler

import (
	"math"
	"slices"
)

// AcceptanceFraction fills dst (len Walkers, allocated if nil) with each
// walker's fraction of accepted proposals since step 0 (NaN at step 0).
func (st *State) AcceptanceFraction(dst []float64) []float64 {
	if dst == nil {
		dst = make([]float64, st.Walkers)
	}
	for k, a := range st.Accepted {
		dst[k] = float64(a) / float64(st.Step)
	}
	return dst
}

// Acceptance summarises the walkers' acceptance fractions.
type Acceptance struct {
	PerWalker    []float64
	Mean, Median float64
	// Stuck lists walkers whose accepted count lies more than StuckSigma
	// binomial standard deviations below what the ensemble's median
	// fraction predicts for the same number of steps, and whose fraction
	// is below half the median: a walker left in a region of low density
	// that the others have abandoned.
	Stuck []int
}

// StuckSigma is the binomial z-score below which a walker counts as stuck.
// Four standard deviations make a false flag unlikely (about 3e-5 per
// walker under the normal approximation) even for hundreds of walkers.
const StuckSigma = 4

// Acceptance returns the acceptance summary of the chain so far.
func (st *State) Acceptance() Acceptance {
	a := Acceptance{PerWalker: st.AcceptanceFraction(nil)}
	if st.Step == 0 {
		a.Mean, a.Median = math.NaN(), math.NaN()
		return a
	}
	var sum float64
	for _, f := range a.PerWalker {
		sum += f
	}
	a.Mean = sum / float64(st.Walkers)
	sorted := slices.Clone(a.PerWalker)
	slices.Sort(sorted)
	w := len(sorted)
	a.Median = (sorted[(w-1)/2] + sorted[w/2]) / 2
	n, p := float64(st.Step), a.Median
	sd := math.Sqrt(n * p * (1 - p))
	for k, f := range a.PerWalker {
		if f < p/2 && n*f < n*p-StuckSigma*sd {
			a.Stuck = append(a.Stuck, k)
		}
	}
	return a
}
