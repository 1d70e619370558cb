package report

import (
	"fmt"
	"image/color"
	"math"
	"slices"
	"sort"
	"strconv"

	"chord/chains"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Plots of a run: corner.png and spectrum.png, drawn with gonum.org/v1/plot.

// Credible-region masses of the 2-D contours: the probability inside the 1
// and 2 sigma ellipses of a 2-D normal distribution, 1 - exp(-k^2/2)
// (closed form), the convention of corner plots.
var (
	mass1Sigma2D = 1 - math.Exp(-0.5)
	mass2Sigma2D = 1 - math.Exp(-2)
)

const (
	cornerBins   = 30     // histogram bins per axis
	cornerPanel  = 2.2    // panel size, inches
	cornerMaxPts = 40_000 // samples used at most (evenly thinned beyond)
)

var (
	colorBlue = color.RGBA{R: 31, G: 90, B: 160, A: 255}
	colorGrey = color.Gray{Y: 150}
)

// CornerOptions configures PlotCorner.
type CornerOptions struct {
	// Names are the columns drawn; nil means every column of role
	// parameter.
	Names []string
	Thin  int // keep every Thin-th step; 0 means 1
	Demo  bool
	// Truth gives true values by column name (demo, simulations); a column
	// without one has no truth line.
	Truth map[string]float64
}

// PlotCorner draws the corner plot of the columns of c to base.png and
// base.svg: 1-D marginal histograms with the median and the 68% interval
// marked and written above each, and 2-D histograms with the contours
// enclosing 39.3% and 86.5% of the samples (1 and 2 sigma in two
// dimensions), with the true values when known. A parameter has the same
// axis range in every panel where it appears.
func PlotCorner(base string, c *chains.Chain, opt CornerOptions) error {
	names := opt.Names
	if names == nil {
		for _, col := range c.Columns {
			if col.Role == chains.RoleParameter {
				names = append(names, col.Name)
			}
		}
	}
	if len(names) == 0 {
		return fmt.Errorf("corner plot: no parameters")
	}
	thin := max(opt.Thin, 1)
	n := len(names)
	data := make([][]float64, n)
	labels := make([]string, n)
	truth := make([]float64, n)
	for i, name := range names {
		v := c.Column(name)
		if v == nil {
			return fmt.Errorf("corner plot: no column %q in the chains", name)
		}
		for _, col := range c.Columns {
			if col.Name == name {
				labels[i] = paramLabel(col)
			}
		}
		data[i] = thinSamples(c, v, thin)
		truth[i] = math.NaN()
		if t, ok := opt.Truth[name]; ok {
			truth[i] = t
		}
	}
	lo, hi := make([]float64, n), make([]float64, n)
	med, q16, q84 := make([]float64, n), make([]float64, n), make([]float64, n)
	for i, x := range data {
		s := slices.Clone(x)
		slices.Sort(s)
		q := func(p float64) float64 { return stat.Quantile(p, stat.Empirical, s, nil) }
		med[i], q16[i], q84[i] = q(0.5), q(0.16), q(0.84)
		lo[i], hi[i] = q(0.002), q(0.998)
		if !math.IsNaN(truth[i]) {
			lo[i], hi[i] = math.Min(lo[i], truth[i]), math.Max(hi[i], truth[i])
		}
		if !(hi[i] > lo[i]) {
			lo[i], hi[i] = lo[i]-0.5-math.Abs(lo[i])*1e-3, hi[i]+0.5+math.Abs(hi[i])*1e-3
		}
		pad := 0.05 * (hi[i] - lo[i])
		lo[i], hi[i] = lo[i]-pad, hi[i]+pad
	}

	plots := make([][]*plot.Plot, n)
	for row := range n {
		plots[row] = make([]*plot.Plot, n)
		for col := 0; col <= row; col++ {
			p := plot.New()
			var err error
			if row == col {
				err = marginalPanel(p, data[col], lo[col], hi[col], [3]float64{q16[col], med[col], q84[col]}, truth[col])
				p.Title.Text = labels[col] + "\n" + intervalText(med[col], q16[col], q84[col])
				p.Title.TextStyle.Font.Size = vg.Points(9)
			} else {
				err = jointPanel(p, data[col], data[row], lo[col], hi[col], lo[row], hi[row], truth[col], truth[row])
			}
			if err != nil {
				return fmt.Errorf("corner plot %s/%s: %w", names[col], names[row], err)
			}
			// The same range for a parameter in every panel, set after the
			// plotters (which widen the axes to their data) were added.
			p.X.Min, p.X.Max = lo[col], hi[col]
			if row != col {
				p.Y.Min, p.Y.Max = lo[row], hi[row]
			}
			p.X.Tick.Marker, p.Y.Tick.Marker = exactTicks{}, exactTicks{}
			if row == n-1 {
				p.X.Label.Text = labels[col]
			} else {
				p.X.Tick.Label.Color = color.Transparent
			}
			if col == 0 && row > 0 {
				p.Y.Label.Text = labels[row]
			} else {
				p.Y.Tick.Label.Color = color.Transparent
			}
			plots[row][col] = p
		}
	}
	size := vg.Length(n) * cornerPanel * vg.Inch
	margin := 0.9 * vg.Inch
	return figure{w: size + margin, h: size + margin, draw: func(dc draw.Canvas) error {
		if opt.Demo {
			// The demo label at the top right, where the corner leaves room.
			dc.FillText(draw.TextStyle{Color: colorTruth, Font: plot.DefaultFont, Handler: plot.DefaultTextHandler, XAlign: draw.XRight, YAlign: draw.YTop},
				vg.Point{X: dc.Max.X - vg.Points(6), Y: dc.Max.Y - vg.Points(6)}, "demo opacities: not for science")
		}
		tiles := draw.Tiles{Rows: n, Cols: n, PadX: vg.Millimeter, PadY: 2 * vg.Millimeter, PadTop: 2 * vg.Millimeter, PadRight: 4 * vg.Millimeter, PadLeft: 2 * vg.Millimeter, PadBottom: 2 * vg.Millimeter}
		canvases := plot.Align(plots, tiles, dc)
		for row := range n {
			for col := 0; col <= row; col++ {
				plots[row][col].Draw(canvases[row][col])
			}
		}
		return nil
	}}.save(pathBase(base))
}

// thinSamples keeps every thin-th step of v and thins further, evenly, to
// at most cornerMaxPts samples.
func thinSamples(c *chains.Chain, v []float64, thin int) []float64 {
	var out []float64
	for j, st := range c.Steps {
		if (st-c.Steps[0])%thin == 0 {
			out = append(out, v[j*c.Walkers:(j+1)*c.Walkers]...)
		}
	}
	if every := (len(out) + cornerMaxPts - 1) / cornerMaxPts; every > 1 {
		k := 0
		for i := 0; i < len(out); i += every {
			out[k] = out[i]
			k++
		}
		out = out[:k]
	}
	return out
}

func marginalPanel(p *plot.Plot, x []float64, lo, hi float64, q [3]float64, truth float64) error {
	counts := make([]float64, cornerBins)
	w := (hi - lo) / cornerBins
	for _, v := range x {
		if b := int((v - lo) / w); b >= 0 && b < cornerBins {
			counts[b]++
		}
	}
	steps := make(plotter.XYs, 0, 2*cornerBins)
	top := 0.0
	for b, n := range counts {
		d := n / (float64(len(x)) * w)
		top = math.Max(top, d)
		steps = append(steps, plotter.XY{X: lo + float64(b)*w, Y: d}, plotter.XY{X: lo + float64(b+1)*w, Y: d})
	}
	l, err := plotter.NewLine(steps)
	if err != nil {
		return err
	}
	l.Color = colorBlue
	p.Add(l)
	for k, v := range q {
		ql, err := plotter.NewLine(plotter.XYs{{X: v, Y: 0}, {X: v, Y: 1.05 * top}})
		if err != nil {
			return err
		}
		ql.Color = color.Black
		if k != 1 {
			ql.Dashes = []vg.Length{vg.Points(3), vg.Points(2)}
		}
		p.Add(ql)
	}
	if !math.IsNaN(truth) {
		tl, err := plotter.NewLine(plotter.XYs{{X: truth, Y: 0}, {X: truth, Y: 1.05 * top}})
		if err != nil {
			return err
		}
		tl.Color, tl.Width = colorTruth, vg.Points(1.2)
		p.Add(tl)
	}
	p.Y.Min, p.Y.Max = 0, 1.1*top
	return nil
}

// density2D is a smoothed 2-D histogram, a plotter.GridXYZ.
type density2D struct {
	n              int
	x0, dx, y0, dy float64
	z              []float64 // z[c*n+r]
}

func (g *density2D) Dims() (int, int)   { return g.n, g.n }
func (g *density2D) Z(c, r int) float64 { return g.z[c*g.n+r] }
func (g *density2D) X(c int) float64    { return g.x0 + (float64(c)+0.5)*g.dx }
func (g *density2D) Y(r int) float64    { return g.y0 + (float64(r)+0.5)*g.dy }

// massLevel returns the density above which the cells hold mass m of the total.
func (g *density2D) massLevel(m float64) float64 {
	s := slices.Clone(g.z)
	sort.Sort(sort.Reverse(sort.Float64Slice(s)))
	total := 0.0
	for _, v := range s {
		total += v
	}
	acc := 0.0
	for _, v := range s {
		acc += v
		if acc >= m*total {
			return v
		}
	}
	return s[len(s)-1]
}

func jointPanel(p *plot.Plot, x, y []float64, xlo, xhi, ylo, yhi, tx, ty float64) error {
	n := cornerBins
	g := &density2D{n: n, x0: xlo, dx: (xhi - xlo) / float64(n), y0: ylo, dy: (yhi - ylo) / float64(n)}
	raw := make([]float64, n*n)
	for i := range x {
		c, r := int((x[i]-xlo)/g.dx), int((y[i]-ylo)/g.dy)
		if c >= 0 && c < n && r >= 0 && r < n {
			raw[c*n+r]++
		}
	}
	// Smooth with the separable [1 2 1]/4 kernel so that the contours do not
	// follow single-bin noise.
	g.z = make([]float64, n*n)
	k := [3]float64{0.25, 0.5, 0.25}
	for c := range n {
		for r := range n {
			v := 0.0
			for a := -1; a <= 1; a++ {
				for b := -1; b <= 1; b++ {
					cc, rr := c+a, r+b
					if cc >= 0 && cc < n && rr >= 0 && rr < n {
						v += k[a+1] * k[b+1] * raw[cc*n+rr]
					}
				}
			}
			g.z[c*n+r] = v
		}
	}
	// A light scatter of the samples under the contours.
	every := max(1, len(x)/2000)
	pts := make(plotter.XYs, 0, len(x)/every+1)
	for i := 0; i < len(x); i += every {
		pts = append(pts, plotter.XY{X: x[i], Y: y[i]})
	}
	sc, err := plotter.NewScatter(pts)
	if err != nil {
		return err
	}
	sc.GlyphStyle.Radius = vg.Points(0.6)
	sc.GlyphStyle.Color = colorGrey
	p.Add(sc)
	l1, l2 := g.massLevel(mass1Sigma2D), g.massLevel(mass2Sigma2D)
	if l1 > l2 && l2 > 0 {
		ct := plotter.NewContour(g, []float64{l2, l1}, nil)
		ct.LineStyles = []draw.LineStyle{
			{Color: colorBlue, Width: vg.Points(0.8), Dashes: []vg.Length{vg.Points(3), vg.Points(2)}},
			{Color: colorBlue, Width: vg.Points(1.2)},
		}
		p.Add(ct)
	}
	if !math.IsNaN(tx) && !math.IsNaN(ty) {
		tp, err := plotter.NewScatter(plotter.XYs{{X: tx, Y: ty}})
		if err != nil {
			return err
		}
		tp.GlyphStyle = draw.GlyphStyle{Color: colorTruth, Radius: vg.Points(5), Shape: draw.CrossGlyph{}}
		p.Add(tp)
	}
	return nil
}

// exactTicks are gonum/plot's default ticks with labels given as many
// decimals as the tick spacing needs, so that neighbouring labels never read
// alike (the default formatting can print 2.45 and 2.5 both as "2.5").
type exactTicks struct{}

func (exactTicks) Ticks(min, max float64) []plot.Tick {
	ticks := plot.DefaultTicks{}.Ticks(min, max)
	var majors []float64
	for _, t := range ticks {
		if t.Label != "" {
			majors = append(majors, t.Value)
		}
	}
	if len(majors) < 2 {
		return ticks
	}
	step := math.Abs(majors[1] - majors[0])
	dec := 0
	for ; dec < 12; dec++ {
		exact := true
		for _, v := range majors {
			back, _ := strconv.ParseFloat(strconv.FormatFloat(v, 'f', dec, 64), 64)
			if math.Abs(back-v) > 1e-6*step {
				exact = false
				break
			}
		}
		if exact {
			break
		}
	}
	for i := range ticks {
		if ticks[i].Label != "" {
			ticks[i].Label = strconv.FormatFloat(ticks[i].Value, 'f', dec, 64)
		}
	}
	return ticks
}
