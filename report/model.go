package report

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

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
}

// WriteCSV writes the spectrum as CSV: '#' comment lines (program,
// title, a demo warning), then wavelength_um and depth, with bin_lo_um and
// bin_hi_um for a binned spectrum; values to 10 significant digits.
func (s *ModelSpectrum) WriteCSV(w io.Writer) error {
	bw := bufio.NewWriter(w)
	fmt.Fprintf(bw, "# chord %s spectrum: %s; depth is the transit depth (fraction of the stellar disc)\n", version.Version, s.Title)
	if s.Demo {
		fmt.Fprintln(bw, "# demo opacity tables: not for science")
	}
	if s.Lo != nil {
		fmt.Fprintln(bw, "wavelength_um,depth,bin_lo_um,bin_hi_um")
	} else {
		fmt.Fprintln(bw, "wavelength_um,depth")
	}
	g := func(v float64) string { return strconv.FormatFloat(v, 'g', 10, 64) }
	for i := range s.Depth {
		if s.Lo != nil {
			fmt.Fprintf(bw, "%s,%s,%s,%s\n", g(s.Wavelength[i]/forward.Micron), g(s.Depth[i]), g(s.Lo[i]/forward.Micron), g(s.Hi[i]/forward.Micron))
		} else {
			fmt.Fprintf(bw, "%s,%s\n", g(s.Wavelength[i]/forward.Micron), g(s.Depth[i]))
		}
	}
	return bw.Flush()
}

// Plot draws the spectrum to path as PNG on a logarithmic wavelength axis,
// bins as steps.
func (s *ModelSpectrum) Plot(path string) error {
	p := spectrumPlot(s.Title, s.Demo)
	p.X.Scale = plot.LogScale{}
	p.X.Tick.Marker = plot.LogTicks{Prec: -1}
	pts := make(plotter.XYs, 0, 2*len(s.Depth))
	for i := range s.Depth {
		if s.Lo != nil { // bins as steps
			pts = append(pts, plotter.XY{X: s.Lo[i] / forward.Micron, Y: s.Depth[i] * 1e6}, plotter.XY{X: s.Hi[i] / forward.Micron, Y: s.Depth[i] * 1e6})
			continue
		}
		pts = append(pts, plotter.XY{X: s.Wavelength[i] / forward.Micron, Y: s.Depth[i] * 1e6})
	}
	for _, q := range pts {
		if math.IsNaN(q.Y) || math.IsInf(q.Y, 0) {
			return errors.New("spectrum plot: depth is not finite")
		}
	}
	l, err := plotter.NewLine(pts)
	if err != nil {
		return fmt.Errorf("spectrum plot: %w", err)
	}
	l.Width = vg.Points(1)
	p.Add(l)
	if err := saveSpectrum(p, path); err != nil {
		return fmt.Errorf("spectrum plot: %w", err)
	}
	return nil
}
