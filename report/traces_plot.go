package report

import (
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"chord/chains"
)

// TraceWalkers is the number of walkers drawn in the trace plot: enough to
// see whether walkers mix, few enough to tell them apart.
const TraceWalkers = 4

var colorBurn = color.NRGBA{R: 120, G: 120, B: 120, A: 40}

// PlotTraces draws the log posterior and each parameter against step for
// TraceWalkers walkers spread over the ensemble, the burn-in shaded and
// its end marked, to base.png and base.svg. c is the whole chain (read
// without burn-in); burn is the number of steps the summary drops.
func PlotTraces(base string, c *chains.Chain, burn int, demo bool) error {
	if len(c.Steps) < 2 {
		return fmt.Errorf("trace plot: %d steps", len(c.Steps))
	}
	cols := []int{}
	for i, col := range c.Columns {
		if col.Name == "log_posterior" {
			cols = append([]int{i}, cols...)
		} else if col.Role == chains.RoleParameter {
			cols = append(cols, i)
		}
	}
	walkers := make([]int, 0, TraceWalkers)
	for k := range min(TraceWalkers, c.Walkers) {
		walkers = append(walkers, k*c.Walkers/min(TraceWalkers, c.Walkers))
	}
	// At most about 2000 points per line: beyond that a line is a band.
	every := max(1, len(c.Steps)/2000)
	first, last := float64(c.Steps[0]), float64(c.Steps[len(c.Steps)-1])
	burnEnd := float64(c.Steps[0] - 1 + burn)
	rows := make([][]*plot.Plot, len(cols))
	for r, ci := range cols {
		p := plot.New()
		col := c.Columns[ci]
		if col.Name == "log_posterior" {
			p.Y.Label.Text = "log posterior"
		} else {
			p.Y.Label.Text = paramLabel(col)
		}
		p.Y.Label.TextStyle.Font.Size = vg.Points(8)
		p.Y.Tick.Marker = exactTicks{}
		p.X.Tick.Marker = exactTicks{}
		ymin, ymax := 0.0, 0.0
		seen := false
		for wi, k := range walkers {
			pts := make(plotter.XYs, 0, len(c.Steps)/every+1)
			for j := 0; j < len(c.Steps); j += every {
				v := c.Values[ci][j*c.Walkers+k]
				if math.IsNaN(v) || math.IsInf(v, 0) { // a rejected start
					continue
				}
				pts = append(pts, plotter.XY{X: float64(c.Steps[j]), Y: v})
				if !seen || v < ymin {
					ymin = v
				}
				if !seen || v > ymax {
					ymax = v
				}
				seen = true
			}
			if len(pts) == 0 {
				continue
			}
			l, err := plotter.NewLine(pts)
			if err != nil {
				return fmt.Errorf("trace plot: %w", err)
			}
			l.Color, l.Width = paletteColor(wi), vg.Points(0.6)
			p.Add(l)
			if r == 0 {
				p.Legend.Add(fmt.Sprintf("walker %d", k), l)
			}
		}
		if !seen {
			ymin, ymax = -1, 1
		}
		if col.Name == "log_posterior" {
			// The first walkers can start far down; keep the sampled range
			// readable by showing at most twice its height below it.
			lo, hi := postBurnRange(c, ci, walkers, burn)
			if hi > lo {
				ymin = math.Max(ymin, lo-2*(hi-lo))
			}
		}
		if ymax == ymin {
			ymin, ymax = ymin-0.5, ymax+0.5
		}
		pad := 0.05 * (ymax - ymin)
		ymin, ymax = ymin-pad, ymax+pad
		if burn > 0 {
			poly, err := plotter.NewPolygon(plotter.XYs{{X: first, Y: ymin}, {X: burnEnd, Y: ymin}, {X: burnEnd, Y: ymax}, {X: first, Y: ymax}})
			if err != nil {
				return err
			}
			poly.Color, poly.LineStyle.Width = colorBurn, 0
			end, err := plotter.NewLine(plotter.XYs{{X: burnEnd, Y: ymin}, {X: burnEnd, Y: ymax}})
			if err != nil {
				return err
			}
			end.Color, end.Dashes = color.Black, []vg.Length{vg.Points(3), vg.Points(2)}
			p.Add(poly, end)
			if r == 0 {
				p.Legend.Add(fmt.Sprintf("burn-in (%d steps, dropped)", burn), poly)
			}
		}
		p.X.Min, p.X.Max = first, last
		p.Y.Min, p.Y.Max = ymin, ymax
		if r == len(cols)-1 {
			p.X.Label.Text = "Step"
		} else {
			p.X.Tick.Marker = unlabelled{p.X.Tick.Marker}
		}
		if r == 0 {
			p.Title.Text = "Walkers against step"
			if demo {
				p.Title.Text += " (demo opacities: not for science)"
			}
			p.Legend.Top = false
			p.Legend.Left = false
			p.Legend.Padding = vg.Points(1)
			p.Legend.TextStyle.Font.Size = vg.Points(8)
			p.Legend.ThumbnailWidth = vg.Points(14)
		}
		rows[r] = []*plot.Plot{p}
	}
	const rowH = 1.25 * vg.Inch
	h := vg.Length(len(rows))*rowH + 0.6*vg.Inch
	return figure{w: 9 * vg.Inch, h: h, draw: func(dc draw.Canvas) error {
		cs := plot.Align(rows, draw.Tiles{Rows: len(rows), Cols: 1, PadTop: vg.Points(4), PadBottom: vg.Points(4), PadLeft: vg.Points(4), PadRight: vg.Points(10), PadY: vg.Points(3)}, dc)
		for r := range rows {
			rows[r][0].Draw(cs[r][0])
		}
		return nil
	}}.save(pathBase(base))
}

// postBurnRange is the range of column ci over the walkers after the
// burn-in.
func postBurnRange(c *chains.Chain, ci int, walkers []int, burn int) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for j, st := range c.Steps {
		if st-c.Steps[0] < burn {
			continue
		}
		for _, k := range walkers {
			if v := c.Values[ci][j*c.Walkers+k]; !math.IsInf(v, 0) && !math.IsNaN(v) {
				lo, hi = math.Min(lo, v), math.Max(hi, v)
			}
		}
	}
	return lo, hi
}
