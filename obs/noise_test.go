package obs

import "testing"

func TestNoiseLevel(t *testing.T) {
	// Median by definition (fact of the trade).
	if got := NoiseLevel([]float64{30, 10, 20}); got != 20 {
		t.Fatal(got)
	}
	if got := NoiseLevel([]float64{40, 10, 20, 30}); got != 25 {
		t.Fatal(got)
	}
}
