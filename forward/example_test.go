package forward_test

import (
	"fmt"

	"chord/forward"
	"chord/forward/opacity"
)

// A warm giant with water in an H2+He atmosphere seen through H2 Rayleigh
// scattering and a grey absorber, binned onto two bins.
func ExampleModel_Transit() {
	wl, _ := forward.WavelengthGrid(0.5e-6, 5e-6, 500)
	bins, _ := forward.BinsFromEdges([]float64{0.6e-6, 1e-6, 4e-6})
	m, err := forward.NewModel(forward.Config{
		Wavelength:     wl,
		TopPressure:    forward.DefaultTopPressure,
		BottomPressure: forward.DefaultBottomPressure,
		Layers:         forward.DefaultLayers,
		Gases:          []string{"H2O"},
		Rayleigh:       []string{"H2", "He"},
		Grey:           opacity.Grey{Sigma: 1e-31},
		Bins:           &bins,
	})
	if err != nil {
		fmt.Println(err)
		return
	}
	s := m.DefaultState()
	s.VMR[0] = 1e-3
	s.Profile = &forward.Isothermal{T: 1200}
	s.RefRadius, s.Mass, s.StarRadius = forward.JupiterRadius, forward.JupiterMass, forward.SolarRadius

	w := m.NewWorkspace() // one per goroutine
	depth := make([]float64, m.OutputLen())
	if err := m.Transit(depth, &s, w); err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("mean molecular weight %.3f\n", w.MeanMolecularWeight)
	for i, d := range depth {
		fmt.Printf("bin %d: %.0f ppm\n", i+1, d*1e6)
	}

	s.Mass = 0.001 * forward.JupiterMass
	err = m.Transit(depth, &s, w)
	fmt.Println(err)
	// Output:
	// mean molecular weight 2.320
	// bin 1: 10809 ppm
	// bin 2: 10800 ppm
	// forward: atmosphere is unbound: 1/r reaches 0 within the model (too hot, too light or too low in mass for its radius)
}
