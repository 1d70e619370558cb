package report

import (
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
)

// ProfilePlot is the content of temperature.png and temperature.svg: the
// retrieved temperature profile.
type ProfilePlot struct {
	Title    string
	Demo     bool
	Pressure []float64 // bar, where the temperatures are given
	// Samples holds the temperatures (K) at Pressure of posterior samples.
	Samples [][]float64
	Truth   []float64 // K at Pressure, nil when unknown
}

// PlotProfile draws the median temperature profile with its 1 and 2 sigma
// bands (the central 68.27% and 95.45% of the samples' temperatures at
// each pressure), and the truth when known, with pressure increasing
// downward on a logarithmic axis, to base.png and base.svg.
func PlotProfile(base string, s *ProfilePlot) error {
	n := len(s.Pressure)
	if n < 2 || len(s.Samples) == 0 {
		return fmt.Errorf("temperature plot: %d pressures, %d samples", n, len(s.Samples))
	}
	for _, t := range s.Samples {
		if len(t) != n {
			return fmt.Errorf("temperature plot: a sample has %d temperatures for %d pressures", len(t), n)
		}
	}
	p := plot.New()
	p.Title.Text = s.Title
	if s.Demo {
		p.Title.Text += " (demo opacities: not for science)"
	}
	p.X.Label.Text = "Temperature [K]"
	p.Y.Label.Text = "Pressure [bar]"
	p.Y.Scale = plot.InvertedScale{Normalizer: plot.LogScale{}}
	p.Y.Tick.Marker = decadeTicks{}
	p.X.Tick.Marker = exactTicks{}
	p.Add(plotter.NewGrid())
	col := make([]float64, len(s.Samples))
	quant := func(q float64) plotter.XYs {
		out := make(plotter.XYs, n)
		for j, pr := range s.Pressure {
			for k, t := range s.Samples {
				col[k] = t[j]
			}
			slices.Sort(col)
			out[j] = plotter.XY{X: stat.Quantile(q, stat.Empirical, col, nil), Y: pr}
		}
		return out
	}
	tmin, tmax := math.Inf(1), math.Inf(-1)
	for _, band := range []struct {
		lo, hi float64
		label  string
	}{{band2Lo, band2Hi, "2σ (95%) band"}, {band1Lo, band1Hi, "1σ (68%) band"}} {
		a, b := quant(band.lo), quant(band.hi)
		for _, xy := range append(slices.Clone(a), b...) {
			tmin, tmax = math.Min(tmin, xy.X), math.Max(tmax, xy.X)
		}
		slices.Reverse(b)
		poly, err := plotter.NewPolygon(append(a, b...))
		if err != nil {
			return fmt.Errorf("temperature plot: %w", err)
		}
		if band.lo == band2Lo {
			poly.Color = colorBand2
		} else {
			poly.Color = colorBand1
		}
		poly.LineStyle.Width = 0
		p.Add(poly)
		p.Legend.Add(band.label, poly)
	}
	med, err := plotter.NewLine(quant(0.5))
	if err != nil {
		return fmt.Errorf("temperature plot: %w", err)
	}
	med.Color, med.Width = colorModel, vg.Points(1.4)
	p.Add(med)
	p.Legend.Add("median", med)
	if s.Truth != nil {
		if len(s.Truth) != n {
			return fmt.Errorf("temperature plot: the truth has %d temperatures for %d pressures", len(s.Truth), n)
		}
		pts := make(plotter.XYs, n)
		for j := range pts {
			pts[j] = plotter.XY{X: s.Truth[j], Y: s.Pressure[j]}
			tmin, tmax = math.Min(tmin, s.Truth[j]), math.Max(tmax, s.Truth[j])
		}
		l, err := plotter.NewLine(pts)
		if err != nil {
			return fmt.Errorf("temperature plot: %w", err)
		}
		l.Color, l.Width = colorTruth, vg.Points(1.2)
		l.Dashes = []vg.Length{vg.Points(4), vg.Points(2)}
		p.Add(l)
		p.Legend.Add("truth", l)
	}
	pad := math.Max(0.08*(tmax-tmin), 20)
	p.X.Min, p.X.Max = tmin-pad, tmax+pad
	p.Y.Min, p.Y.Max = slices.Min(s.Pressure), slices.Max(s.Pressure)
	p.Legend.Top = false
	p.Legend.Left = false
	return singlePlot(p, 6*vg.Inch, 6*vg.Inch).save(pathBase(base))
}
