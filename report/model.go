package report

import (
	"bufio"
	"fmt"
	"io"
	"strconv"

	"chord/forward"
	"chord/internal/version"
)

// ModelSpectrum is one model transmission spectrum (chord spectrum's
// output): the transit depth on the model grid, or per bin.
type ModelSpectrum struct {
	Title      string
	Demo       bool      // made with the demo opacity tables
	Wavelength []float64 // m: the model grid, or the bin centres
	Depth      []float64 // transit depth, fraction of the stellar disc
	Lo, Hi     []float64 // bin edges, m; nil for an unbinned spectrum
	// ErrorPPM, when positive, is the error stated for every bin, ppm,
	// written as the error_ppm column (binned spectra only).
	ErrorPPM float64
}

// WriteCSV writes the spectrum as CSV: '#' comment lines (program,
// title, a demo warning), then, for a binned spectrum, the layout of an
// observation file: edge_low_um, edge_high_um, depth_ppm, and error_ppm
// when an error is stated (so that chord fit reads it as an observation,
// and chord simulate and opacity build as a bins or noise file); for an
// unbinned one wavelength_um and depth_ppm. Values to 10 significant
// digits.
func (s *ModelSpectrum) WriteCSV(w io.Writer) error {
	if s.ErrorPPM > 0 && s.Lo == nil {
		return fmt.Errorf("spectrum: an error per bin (%g ppm) needs bins; the model grid has none", s.ErrorPPM)
	}
	bw := bufio.NewWriter(w)
	fmt.Fprintf(bw, "# chord %s spectrum: %s; depth_ppm is the transit depth in parts per million of the stellar disc\n", version.Version, s.Title)
	if s.Demo {
		fmt.Fprintln(bw, "# demo opacity tables: not for science")
	}
	g := func(v float64) string { return strconv.FormatFloat(v, 'g', 10, 64) }
	switch {
	case s.Lo == nil:
		fmt.Fprintln(bw, "wavelength_um,depth_ppm")
	case s.ErrorPPM > 0:
		fmt.Fprintln(bw, "edge_low_um,edge_high_um,depth_ppm,error_ppm")
	default:
		fmt.Fprintln(bw, "edge_low_um,edge_high_um,depth_ppm")
	}
	for i := range s.Depth {
		switch {
		case s.Lo == nil:
			fmt.Fprintf(bw, "%s,%s\n", g(s.Wavelength[i]/forward.Micron), g(s.Depth[i]*1e6))
		case s.ErrorPPM > 0:
			fmt.Fprintf(bw, "%s,%s,%s,%s\n", g(s.Lo[i]/forward.Micron), g(s.Hi[i]/forward.Micron), g(s.Depth[i]*1e6), g(s.ErrorPPM))
		default:
			fmt.Fprintf(bw, "%s,%s,%s\n", g(s.Lo[i]/forward.Micron), g(s.Hi[i]/forward.Micron), g(s.Depth[i]*1e6))
		}
	}
	return bw.Flush()
}

// Plot draws the spectrum to base.png and base.svg (a .png or .svg
// extension of path is dropped), bins as steps.
func (s *ModelSpectrum) Plot(path string) error {
	return PlotGases(path, &GasesPlot{Title: s.Title, Demo: s.Demo, Wavelength: um(s.Wavelength), Lo: um(s.Lo), Hi: um(s.Hi), Full: ppm(s.Depth)})
}

// WithoutEachGas computes the spectrum of state s of model m with each
// trace gas of the model removed in turn (its mixing ratio set to 0, the
// fill gas taking its place), in ppm: what chord spectrum --by-gas draws.
func WithoutEachGas(m *forward.Model, s forward.State) ([]GasCurve, error) {
	w := m.NewWorkspace()
	var out []GasCurve
	vmr := append([]float64(nil), s.VMR...)
	defer func() { copy(s.VMR, vmr) }()
	for i, g := range m.Gases() {
		copy(s.VMR, vmr)
		s.VMR[i] = 0
		d := make([]float64, m.OutputLen())
		if err := m.Transit(d, &s, w); err != nil {
			return nil, fmt.Errorf("spectrum without %s: %w", g, err)
		}
		out = append(out, GasCurve{Gas: g, Depth: ppm(d)})
	}
	return out, nil
}

// PlotByGas draws the spectrum and the spectrum with each gas removed
// (WithoutEachGas) to base.png and base.svg.
func (s *ModelSpectrum) PlotByGas(path string, without []GasCurve) error {
	return PlotGases(path, &GasesPlot{Title: s.Title + ": each gas removed", Demo: s.Demo, Wavelength: um(s.Wavelength), Lo: um(s.Lo), Hi: um(s.Hi),
		Full: ppm(s.Depth), FullLabel: "all gases", Without: without})
}

// um converts metres to micrometres (nil stays nil).
func um(m []float64) []float64 {
	if m == nil {
		return nil
	}
	out := make([]float64, len(m))
	for i, v := range m {
		out[i] = v / forward.Micron
	}
	return out
}

// ppm converts fractions to parts per million.
func ppm(f []float64) []float64 {
	out := make([]float64, len(f))
	for i, v := range f {
		out[i] = v * 1e6
	}
	return out
}
