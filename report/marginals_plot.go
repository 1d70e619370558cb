package report

import (
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"chord/chains"
)

// MarginalRun is one run of a marginals overlay: its label and its chain
// after burn-in.
type MarginalRun struct {
	Label string
	Chain *chains.Chain
}

// PlotMarginals overlays the 1-D marginal posteriors of the runs, one
// panel per parameter of names (every run must have it), each run a
// normalised histogram in its own colour, to base.png and base.svg.
func PlotMarginals(base string, runs []MarginalRun, names []string) error {
	if len(runs) == 0 || len(names) == 0 {
		return fmt.Errorf("marginals plot: %d runs, %d parameters", len(runs), len(names))
	}
	cols := int(math.Ceil(math.Sqrt(float64(len(names)))))
	rows := (len(names) + cols - 1) / cols
	plots := make([][]*plot.Plot, rows)
	for i := range plots {
		plots[i] = make([]*plot.Plot, cols)
	}
	for k, name := range names {
		p := plot.New()
		data := make([][]float64, len(runs))
		lo, hi := math.Inf(1), math.Inf(-1)
		for r, run := range runs {
			v := run.Chain.Column(name)
			if v == nil {
				return fmt.Errorf("marginals plot: run %s has no parameter %s", run.Label, name)
			}
			s := thinSamples(run.Chain, v, 1)
			slices.Sort(s)
			data[r] = s
			lo = math.Min(lo, stat.Quantile(0.002, stat.Empirical, s, nil))
			hi = math.Max(hi, stat.Quantile(0.998, stat.Empirical, s, nil))
			for _, c := range run.Chain.Columns {
				if c.Name == name {
					p.X.Label.Text = paramLabel(c)
				}
			}
		}
		if !(hi > lo) {
			lo, hi = lo-0.5, hi+0.5
		}
		pad := 0.05 * (hi - lo)
		lo, hi = lo-pad, hi+pad
		top := 0.0
		for r, x := range data {
			steps, t := histogramSteps(x, lo, hi)
			top = math.Max(top, t)
			l, err := plotter.NewLine(steps)
			if err != nil {
				return err
			}
			l.Color, l.Width = paletteColor(r), vg.Points(1.3)
			p.Add(l)
			if k == 0 {
				p.Legend.Add(runs[r].Label, l)
			}
		}
		p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = lo, hi, 0, 1.15*top
		p.X.Tick.Marker = exactTicks{}
		p.Y.Tick.Marker = unlabelled{plot.DefaultTicks{}}
		p.Y.Label.Text = "posterior density"
		p.Legend.Top = true
		p.Legend.TextStyle.Font.Size = vg.Points(8)
		plots[k/cols][k%cols] = p
	}
	const tile = 3.2 * vg.Inch
	return figure{w: vg.Length(cols) * tile, h: vg.Length(rows) * tile, draw: func(dc draw.Canvas) error {
		cs := plot.Align(plots, draw.Tiles{Rows: rows, Cols: cols, PadTop: 6, PadBottom: 4, PadLeft: 4, PadRight: 8, PadX: 14, PadY: 14}, dc)
		for i := range plots {
			for j, p := range plots[i] {
				if p != nil {
					p.Draw(cs[i][j])
				}
			}
		}
		return nil
	}}.save(pathBase(base))
}
