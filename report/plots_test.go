package report

import (
	"math"
	"path/filepath"
	"testing"
)

// The contour masses are the 2-D normal's 1 and 2 sigma regions,
// 1 - exp(-1/2) = 0.3935 and 1 - exp(-2) = 0.8647 (closed form).
func TestCornerContourMass(t *testing.T) {
	if math.Abs(mass1Sigma2D-0.3935) > 1e-4 || math.Abs(mass2Sigma2D-0.8647) > 1e-4 {
		t.Fatalf("masses %v %v", mass1Sigma2D, mass2Sigma2D)
	}
	// massLevel on cells 1..100 (total 5050): the cells from 100 down to k
	// hold (100+k)(101-k)/2; 39.35% of 5050 = 1987.2 is first reached at
	// k = 78 (2047; k = 79 gives 1969). Arithmetic.
	g := &density2D{n: 10, z: make([]float64, 100)}
	for i := range g.z {
		g.z[i] = float64(i + 1)
	}
	if got := g.massLevel(mass1Sigma2D); got != 78 {
		t.Errorf("level %v, want 78", got)
	}
}

func TestPlotCornerErrors(t *testing.T) {
	c := syntheticChains(16, 200, -1, 3)
	if err := PlotCorner(filepath.Join(t.TempDir(), "corner"), c, CornerOptions{Names: []string{"nope"}}); err == nil {
		t.Error("unknown column: no error")
	}
	if err := PlotSpectrum(filepath.Join(t.TempDir(), "spectrum"), &SpectrumPlot{Datasets: []PlotDataset{{Wavelength: []float64{1}}}}); err == nil {
		t.Error("mismatched lengths: no error")
	}
}
