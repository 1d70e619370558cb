// Package eta steadies a time-left estimate for display: raw estimates of
// long work (a fit's 50 autocorrelation times, a grid's remaining points)
// jump as the estimate behind them is refreshed, and a display that jumps
// with them is hard to read.
package eta

import (
	"math"
	"time"
)

// Smoother turns successive raw estimates of the time left into a steady
// one. It keeps a finishing instant and moves it only part of the way
// toward each new estimate's: a tenth always (so that it follows a lasting
// change), half when the two differ by more than Tolerance of the time
// left. The zero value is ready; it starts at the first estimate.
type Smoother struct {
	finish time.Time
	set    bool
}

// Tolerance is the relative disagreement, as a fraction of the time left,
// within which a new estimate only nudges the finishing instant.
const Tolerance = 0.25

// Update takes the raw estimate left at now and returns the time left to
// display (never negative).
func (s *Smoother) Update(now time.Time, left time.Duration) time.Duration {
	target := now.Add(left)
	if !s.set {
		s.finish, s.set = target, true
		return max(left, 0)
	}
	diff := target.Sub(s.finish)
	remaining := s.finish.Sub(now)
	step := 0.1
	if remaining <= 0 || math.Abs(float64(diff)) > Tolerance*float64(remaining) {
		step = 0.5
	}
	s.finish = s.finish.Add(time.Duration(step * float64(diff)))
	return max(s.finish.Sub(now), 0)
}
