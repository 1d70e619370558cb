package report

import "testing"

// Tick labels must be distinct and exact at the spacing gonum/plot's default
// ticker chooses (fact of the trade: an axis whose labels repeat is unreadable).
func TestExactTicksDistinct(t *testing.T) {
	for _, c := range []struct{ lo, hi float64 }{
		{2.41, 2.51}, {2.435, 2.48}, {480, 560}, {-3.3, -2.1}, {1.5, 2.1}, {0.000123, 0.000456},
	} {
		seen := map[string]bool{}
		for _, tk := range (exactTicks{}).Ticks(c.lo, c.hi) {
			if tk.Label == "" {
				continue
			}
			if seen[tk.Label] {
				t.Errorf("range [%g, %g]: label %q appears twice", c.lo, c.hi, tk.Label)
			}
			seen[tk.Label] = true
		}
		if len(seen) < 2 {
			t.Errorf("range [%g, %g]: %d labelled ticks, want at least 2", c.lo, c.hi, len(seen))
		}
	}
}
