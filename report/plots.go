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
	plots, labels, err := cornerPlots(c, opt)
	if err != nil {
		return err
	}
	n := len(plots)
	w := vg.Length(n)*cornerPanel*vg.Inch + cornerLeft + cornerRight
	h := vg.Length(n)*cornerPanel*vg.Inch + cornerBottom + cornerTop
	return figure{w: w, h: h, draw: func(dc draw.Canvas) error {
		if opt.Demo {
			// The demo label at the top right, where the corner leaves room.
			st := draw.TextStyle{Color: colorTruth, Font: plot.DefaultFont, Handler: plot.DefaultTextHandler, XAlign: draw.XRight, YAlign: draw.YTop}
			st.Font.Size = vg.Points(14)
			dc.FillText(st, vg.Point{X: dc.Max.X - vg.Points(10), Y: dc.Max.Y - vg.Points(10)}, "demo opacities: not for science")
		}
		canvases := cornerCanvases(plots, dc)
		for row := range n {
			for col := 0; col <= row; col++ {
				plots[row][col].Draw(canvases[row][col])
			}
		}
		// The axis labels in the margins: below the bottom row, and turned
		// up beside the first column.
		style := draw.TextStyle{Color: color.Black, Font: plot.DefaultFont, Handler: plot.DefaultTextHandler, XAlign: draw.XCenter}
		style.Font.Size = vg.Points(11)
		for col := range n {
			da := plots[n-1][col].DataCanvas(canvases[n-1][col])
			st := style
			st.YAlign = draw.YTop
			dc.FillText(st, vg.Point{X: (da.Min.X + da.Max.X) / 2, Y: da.Min.Y - vg.Points(24)}, labels[col])
		}
		for row := 1; row < n; row++ {
			da := plots[row][0].DataCanvas(canvases[row][0])
			st := style
			st.Rotation = math.Pi / 2
			st.YAlign = draw.YTop
			dc.FillText(st, vg.Point{X: dc.Min.X + vg.Points(6), Y: (da.Min.Y + da.Max.Y) / 2}, labels[row])
		}
		return nil
	}}.save(pathBase(base))
}

// Margins of the corner plot: room for the tick labels and axis labels at
// the left and bottom, the diagonal panels' two-line titles above each row.
const (
	cornerLeft   = 0.85 * vg.Inch
	cornerBottom = 0.7 * vg.Inch
	cornerTop    = 0.6 * vg.Inch
	cornerRight  = 0.15 * vg.Inch
	cornerGapX   = 0.22 * vg.Inch
	cornerGapY   = 0.42 * vg.Inch
)

// cornerCanvases lays the corner plot's panels out on dc so that every
// panel's data area is one cell of a regular grid: a parameter then sits
// at one place across a row and down a column. (plot.Align aligns only
// approximately: gonum/plot pads each panel by what its glyphs and labels
// need, so panels whose samples crowd an edge, such as a cloud top piled
// at its prior edge, came out shifted against their row, the bug of
// issue 15.)
func cornerCanvases(plots [][]*plot.Plot, dc draw.Canvas) [][]draw.Canvas {
	n := len(plots)
	w := (dc.Max.X - dc.Min.X - cornerLeft - cornerRight - vg.Length(n-1)*cornerGapX) / vg.Length(n)
	h := (dc.Max.Y - dc.Min.Y - cornerBottom - cornerTop - vg.Length(n-1)*cornerGapY) / vg.Length(n)
	out := make([][]draw.Canvas, n)
	for row := range n {
		out[row] = make([]draw.Canvas, n)
		for col := 0; col <= row; col++ {
			x0 := dc.Min.X + cornerLeft + vg.Length(col)*(w+cornerGapX)
			y0 := dc.Min.Y + cornerBottom + vg.Length(n-1-row)*(h+cornerGapY)
			target := vg.Rectangle{Min: vg.Point{X: x0, Y: y0}, Max: vg.Point{X: x0 + w, Y: y0 + h}}
			out[row][col] = fitDataArea(plots[row][col], target, dc)
		}
	}
	return out
}

// fitDataArea returns the canvas on which p draws its data area at target:
// the padding of the tick marks and labels is found by trying (it depends
// on the canvas only through the labels' normalised positions, so a round
// or two settle it). The panels carry no axis labels, which gonum/plot
// would pad for as well: PlotCorner writes them in the margins.
func fitDataArea(p *plot.Plot, target vg.Rectangle, dc draw.Canvas) draw.Canvas {
	c := dc
	c.Rectangle = target
	for range 6 {
		d := p.DataCanvas(c)
		c.Min.X += target.Min.X - d.Min.X
		c.Min.Y += target.Min.Y - d.Min.Y
		c.Max.X += target.Max.X - d.Max.X
		c.Max.Y += target.Max.Y - d.Max.Y
	}
	return c
}

// cornerPlots builds the panels of the corner plot, row by row (panels
// above the diagonal are nil), and the parameters' labels.
func cornerPlots(c *chains.Chain, opt CornerOptions) ([][]*plot.Plot, []string, error) {
	names := opt.Names
	if names == nil {
		for _, col := range c.Columns {
			if col.Role == chains.RoleParameter {
				names = append(names, col.Name)
			}
		}
	}
	if len(names) == 0 {
		return nil, nil, fmt.Errorf("corner plot: no parameters")
	}
	thin := max(opt.Thin, 1)
	n := len(names)
	data := make([][]float64, n)
	labels := make([]string, n)
	truth := make([]float64, n)
	for i, name := range names {
		v := c.Column(name)
		if v == nil {
			return nil, nil, fmt.Errorf("corner plot: no column %q in the chains", name)
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
				return nil, nil, fmt.Errorf("corner plot %s/%s: %w", names[col], names[row], err)
			}
			// The same range for a parameter in every panel, set after the
			// plotters (which widen the axes to their data) were added.
			p.X.Min, p.X.Max = lo[col], hi[col]
			if row != col {
				p.Y.Min, p.Y.Max = lo[row], hi[row]
			}
			p.X.Tick.Marker, p.Y.Tick.Marker = innerTicks{}, innerTicks{}
			if row != n-1 {
				p.X.Tick.Marker = unlabelled{p.X.Tick.Marker}
			}
			if col != 0 || row == 0 {
				p.Y.Tick.Marker = unlabelled{p.Y.Tick.Marker}
			}
			// No background: each panel's canvas reaches under its
			// neighbours' tick labels, which a white fill would cover.
			p.BackgroundColor = nil
			plots[row][col] = p
		}
	}
	return plots, labels, nil
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

// histogramSteps is the normalised cornerBins-bin histogram of x over
// [lo, hi] as a step line, and its highest density.
func histogramSteps(x []float64, lo, hi float64) (plotter.XYs, float64) {
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
	return steps, top
}

func marginalPanel(p *plot.Plot, x []float64, lo, hi float64, q [3]float64, truth float64) error {
	steps, top := histogramSteps(x, lo, hi)
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

// noGlyphBoxes hides a plotter's glyph boxes. gonum/plot shrinks a
// panel's data area so that the glyphs near its edges fit inside, by as
// much as the glyphs near the edge need: panels of one row of a corner plot
// whose samples crowd an edge differently (a cloud top piled at its prior
// edge) then drew the same parameter over different heights, the bug of
// issue 15. Glyphs at the edge are clipped by half their size instead.
type noGlyphBoxes struct{ plot.Plotter }

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
	p.Add(noGlyphBoxes{sc})
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
		p.Add(noGlyphBoxes{tp})
	}
	return nil
}

// unlabelled keeps a ticker's ticks and drops their labels (a colour of
// alpha 0 hides them in PNG but not in every SVG viewer).
type unlabelled struct{ plot.Ticker }

func (u unlabelled) Ticks(min, max float64) []plot.Tick {
	t := u.Ticker.Ticks(min, max)
	for i := range t {
		t[i].Label = ""
	}
	return t
}

// innerTicks are exactTicks without labels in the outer 8% at either end
// of the axis (3% where that would leave fewer than two), where a corner
// plot's label would run into the next panel.
type innerTicks struct{}

func (innerTicks) Ticks(min, max float64) []plot.Tick {
	for _, frac := range []float64{0.08, 0.03} {
		ticks := exactTicks{}.Ticks(min, max)
		edge, n := frac*(max-min), 0
		for i := range ticks {
			if v := ticks[i].Value; v < min+edge || v > max-edge {
				ticks[i].Label = ""
			}
			if ticks[i].Label != "" {
				n++
			}
		}
		if n >= 2 {
			return ticks
		}
	}
	return exactTicks{}.Ticks(min, max)
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
