package report

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// GasCurve is a spectrum with one gas removed.
type GasCurve struct {
	Gas   string
	Depth []float64 // ppm
}

// GasesPlot shows which feature belongs to which gas: a spectrum (the best
// fit of a run, or chord spectrum's model) and the same spectrum with each
// gas removed in turn.
type GasesPlot struct {
	Title      string
	Demo       bool
	Wavelength []float64 // µm: the model grid, or the bin centres
	Lo, Hi     []float64 // bin edges, µm; nil for an unbinned spectrum
	Full       []float64 // ppm
	FullLabel  string    // legend entry of Full; "" means no legend for it
	Without    []GasCurve
	// Data, when set, are drawn as grey points behind the curves.
	Data *PlotDataset
}

// PlotGases draws g to base.png and base.svg (a .png or .svg extension of
// base is dropped).
func PlotGases(base string, g *GasesPlot) error {
	n := len(g.Wavelength)
	if n == 0 || len(g.Full) != n || (g.Lo != nil && (len(g.Lo) != n || len(g.Hi) != n)) {
		return fmt.Errorf("spectrum plot: %d wavelengths, %d depths, %d and %d bin edges", n, len(g.Full), len(g.Lo), len(g.Hi))
	}
	for _, c := range g.Without {
		if len(c.Depth) != n {
			return fmt.Errorf("spectrum plot: the spectrum without %s has %d values, want %d", c.Gas, len(c.Depth), n)
		}
	}
	p := plot.New()
	p.Title.Text = g.Title
	if g.Demo {
		p.Title.Text += " (demo opacities: not for science)"
	}
	var lo, hi float64
	if g.Lo != nil {
		half := make([]float64, n)
		centre := make([]float64, n)
		for i := range half {
			centre[i], half[i] = 0.5*(g.Lo[i]+g.Hi[i]), 0.5*(g.Hi[i]-g.Lo[i])
		}
		lo, hi = wavelengthRange(centre, half)
	} else {
		lo, hi = wavelengthRange(g.Wavelength, nil)
	}
	setWavelengthAxis(p, lo, hi)
	p.Y.Label.Text = "Transit depth [ppm]"
	p.Y.Tick.Marker = exactTicks{}
	p.Add(plotter.NewGrid())
	if g.Data != nil {
		pts := make(errPoints, len(g.Data.Wavelength))
		for i := range pts {
			pts[i] = errPoint{X: g.Data.Wavelength[i], Y: g.Data.Depth[i], XErr: g.Data.HalfWidth[i], YErr: g.Data.Error[i]}
		}
		if err := addErrPoints(p, pts, colorDataGrey, draw.CircleGlyph{}, "data"); err != nil {
			return fmt.Errorf("spectrum plot: %w", err)
		}
	}
	for k, c := range g.Without {
		l, err := curve(g, c.Depth)
		if err != nil {
			return err
		}
		l.Color = paletteColor(k)
		l.Width = vg.Points(1.1)
		p.Add(l)
		p.Legend.Add("without "+c.Gas, l)
	}
	l, err := curve(g, g.Full)
	if err != nil {
		return err
	}
	l.Color, l.Width = colorModel, vg.Points(1.4)
	p.Add(l)
	if g.FullLabel != "" {
		p.Legend.Add(g.FullLabel, l)
	}
	p.Legend.Top, p.Legend.Left = true, true
	p.X.Min, p.X.Max = lo, hi
	return singlePlot(p, 9*vg.Inch, 5*vg.Inch).save(pathBase(base))
}

// colorDataGrey draws data behind model curves.
var colorDataGrey = colorGrey

// curve is a spectrum as a line: bins as steps, a model grid as a line.
func curve(g *GasesPlot, depth []float64) (*plotter.Line, error) {
	pts := make(plotter.XYs, 0, 2*len(depth))
	for i, d := range depth {
		if math.IsNaN(d) || math.IsInf(d, 0) {
			return nil, errors.New("spectrum plot: depth is not finite")
		}
		if g.Lo != nil {
			pts = append(pts, plotter.XY{X: g.Lo[i], Y: d}, plotter.XY{X: g.Hi[i], Y: d})
			continue
		}
		pts = append(pts, plotter.XY{X: g.Wavelength[i], Y: d})
	}
	l, err := plotter.NewLine(pts)
	if err != nil {
		return nil, fmt.Errorf("spectrum plot: %w", err)
	}
	return l, nil
}
