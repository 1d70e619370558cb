package report

import (
	"image/png"
	"math"
	"math/rand/v2"
	"os"
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

func TestPlots(t *testing.T) {
	dir := t.TempDir()
	c := syntheticChains(16, 200, -1, 3)
	corner := filepath.Join(dir, "corner.png")
	if err := PlotCorner(corner, c, nil, 2, true); err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(5, 6))
	s := &SpectrumPlot{Title: "test", Demo: true}
	for i := 0; i < 40; i++ {
		wl := 0.8 + 0.1*float64(i)
		s.Wavelength = append(s.Wavelength, wl)
		s.HalfWidth = append(s.HalfWidth, 0.05)
		s.Depth = append(s.Depth, 2000+30*math.Sin(3*wl)+20*rng.NormFloat64())
		s.Error = append(s.Error, 20)
	}
	for m := 0; m < 100; m++ {
		mod := make([]float64, 40)
		a := 30 + 5*rng.NormFloat64()
		for i := range mod {
			mod[i] = 2000 + a*math.Sin(3*s.Wavelength[i])
		}
		s.Models = append(s.Models, mod)
	}
	spec := filepath.Join(dir, "spectrum.png")
	if err := PlotSpectrum(spec, s); err != nil {
		t.Fatal(err)
	}
	for _, path := range []string{corner, spec} {
		f, err := os.Open(path)
		if err != nil {
			t.Fatal(err)
		}
		img, err := png.Decode(f)
		f.Close()
		if err != nil {
			t.Fatalf("%s: %v", path, err)
		}
		if b := img.Bounds(); b.Dx() < 300 || b.Dy() < 300 {
			t.Errorf("%s: %v", path, b)
		}
	}
	if os.Getenv("CHORD_KEEP_PLOTS") != "" {
		os.Rename(corner, os.Getenv("CHORD_KEEP_PLOTS")+"/corner.png")
		os.Rename(spec, os.Getenv("CHORD_KEEP_PLOTS")+"/spectrum.png")
	}
	if err := PlotCorner(corner, c, []string{"nope"}, 1, false); err == nil {
		t.Error("unknown column: no error")
	}
	if err := PlotSpectrum(spec, &SpectrumPlot{Wavelength: []float64{1}}); err == nil {
		t.Error("mismatched lengths: no error")
	}
}
