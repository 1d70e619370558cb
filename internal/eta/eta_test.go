package eta

import (
	"math/rand/v2"
	"testing"
	"time"
)

// Work that truly ends at t = 1000 s, estimated every 10 s with a 15%
// random error (the scatter of a refreshed autocorrelation time): the
// displayed time left must jump far less than the raw estimate and stay
// within the raw estimates' error of the truth. Invented numbers.
func TestSmootherSteadies(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	var s Smoother
	t0 := time.Unix(0, 0)
	var rawJump, shownJump, prevRaw, prevShown float64
	for i := 0; i < 90; i++ {
		now := t0.Add(time.Duration(i) * 10 * time.Second)
		truth := float64(1000 - 10*i)
		raw := truth * (1 + 0.15*rng.NormFloat64())
		shown := s.Update(now, time.Duration(raw*float64(time.Second))).Seconds()
		if i > 0 {
			// the change beyond the 10 s that passed
			rawJump = max(rawJump, abs(raw-prevRaw+10))
			shownJump = max(shownJump, abs(shown-prevShown+10))
		}
		if i > 5 && abs(shown-truth) > 0.3*truth+20 {
			t.Errorf("t = %d s: shown %.0f s left, truly %.0f", 10*i, shown, truth)
		}
		prevRaw, prevShown = raw, shown
	}
	if shownJump > rawJump/2 {
		t.Errorf("largest jump of the displayed time left %.0f s, of the raw estimate %.0f s: not steadier", shownJump, rawJump)
	}
}

// A lasting change (the work turns out twice as long) is followed within a
// few updates.
func TestSmootherFollowsChange(t *testing.T) {
	var s Smoother
	t0 := time.Unix(0, 0)
	s.Update(t0, 100*time.Second)
	var shown time.Duration
	for i := 1; i <= 6; i++ {
		shown = s.Update(t0.Add(time.Duration(i)*time.Second), time.Duration(200-i)*time.Second)
	}
	if want := 194 * time.Second; shown < want*9/10 {
		t.Errorf("after 6 updates shown %v left, the estimate says %v", shown, want)
	}
	if got := s.Update(t0.Add(time.Hour), -time.Minute); got != 0 {
		t.Errorf("past the end: %v left, want 0", got)
	}
}

func abs(x float64) float64 {
	if x < 0 {
		return -x
	}
	return x
}
