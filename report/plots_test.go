package report

import (
	"math"
	"math/rand/v2"
	"path/filepath"
	"testing"

	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"

	"chord/chains"
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

// Every panel of a corner plot shows a parameter over the same range, and
// at the same place: the drawn data areas of a row have one height and
// those of a column one width. Samples crowding an edge (a cloud top piled
// at its prior edge) made gonum/plot shrink their panel to fit the glyphs,
// and the bottom row's panels drew the cloud top over other heights (the
// bug of issue 15).
func TestCornerPanelsShareRanges(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	c := &chains.Chain{Walkers: 16, TotalSteps: 500, Columns: []chains.Column{
		{Name: "log_posterior", Role: "log_density"},
		{Name: "t", Role: chains.RoleParameter, Quantity: "temperature_k", Unit: "K"},
		{Name: "r", Role: chains.RoleParameter, Quantity: "radius_rjup"},
		{Name: "cloud", Role: chains.RoleParameter, Quantity: "log10_cloud_top_bar"},
	}, Values: make([][]float64, 4)}
	for s := 1; s <= 500; s++ {
		c.Steps = append(c.Steps, s)
		for range 16 {
			c.Values[0] = append(c.Values[0], 0)
			c.Values[1] = append(c.Values[1], 900+50*rng.NormFloat64())
			c.Values[2] = append(c.Values[2], 1.05+0.01*rng.NormFloat64())
			c.Values[3] = append(c.Values[3], 1-0.3*rng.ExpFloat64()) // piled at the edge 1, a long tail down
		}
	}
	plots, _, err := cornerPlots(c, CornerOptions{Truth: map[string]float64{"t": 900, "cloud": 0.5}})
	if err != nil {
		t.Fatal(err)
	}
	n := len(plots)
	for row := range n {
		for col := 0; col <= row; col++ {
			p := plots[row][col]
			if p.X.Min != plots[n-1][col].X.Min || p.X.Max != plots[n-1][col].X.Max {
				t.Errorf("panel (%d,%d): x range [%g, %g], bottom row's [%g, %g]", row, col, p.X.Min, p.X.Max, plots[n-1][col].X.Min, plots[n-1][col].X.Max)
			}
			if col < row && (p.Y.Min != plots[row][0].Y.Min || p.Y.Max != plots[row][0].Y.Max || p.Y.Min != plots[row][row].X.Min || p.Y.Max != plots[row][row].X.Max) {
				t.Errorf("panel (%d,%d): y range [%g, %g] differs from its row's", row, col, p.Y.Min, p.Y.Max)
			}
		}
	}
	// The drawn data areas: the same height across a row, the same width
	// down a column, so that one value sits at one place.
	img := vgimg.New(8*vg.Inch, 8*vg.Inch)
	cs := cornerCanvases(plots, draw.New(img))
	const tol = 0.01 // points
	for row := range n {
		for col := 0; col <= row; col++ {
			da := plots[row][col].DataCanvas(cs[row][col])
			ref := plots[row][0].DataCanvas(cs[row][0])
			if math.Abs(float64(da.Min.Y-ref.Min.Y)) > tol || math.Abs(float64(da.Max.Y-ref.Max.Y)) > tol {
				t.Errorf("panel (%d,%d): data area y %.2f..%.2f, first panel of its row %.2f..%.2f", row, col, da.Min.Y, da.Max.Y, ref.Min.Y, ref.Max.Y)
			}
			bottom := plots[n-1][col].DataCanvas(cs[n-1][col])
			if math.Abs(float64(da.Min.X-bottom.Min.X)) > tol || math.Abs(float64(da.Max.X-bottom.Max.X)) > tol {
				t.Errorf("panel (%d,%d): data area x %.2f..%.2f, bottom panel of its column %.2f..%.2f", row, col, da.Min.X, da.Max.X, bottom.Min.X, bottom.Max.X)
			}
		}
	}
}
