package report

import (
	"bytes"
	"fmt"
	"image/color"
	"io"
	"math"
	"slices"
	"sort"
	"strconv"

	"chord/chains"
	"chord/internal/atomicfile"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

// Plots of a run: corner.png and spectrum.png, drawn with gonum.org/v1/plot.

// Credible-region masses of the 2-D contours: the probability inside the 1
// and 2 sigma ellipses of a 2-D normal distribution, 1 - exp(-k^2/2)
// (closed form), the convention of corner plots.
var (
	mass1Sigma2D = 1 - math.Exp(-0.5)
	mass2Sigma2D = 1 - math.Exp(-2)
)

// Band quantiles of the spectrum plot: the central 68.27% and 95.45% of the
// model depths in each bin (1 and 2 sigma of a normal distribution).
const (
	band1Lo, band1Hi = 0.158655, 0.841345
	band2Lo, band2Hi = 0.02275, 0.97725
)

const (
	cornerBins   = 30     // histogram bins per axis
	cornerPanel  = 2.2    // panel size, inches
	cornerMaxPts = 40_000 // samples used at most (evenly thinned beyond)
)

var (
	colorBlue  = color.RGBA{R: 31, G: 90, B: 160, A: 255}
	colorBand1 = color.NRGBA{R: 31, G: 90, B: 160, A: 110}
	colorBand2 = color.NRGBA{R: 31, G: 90, B: 160, A: 50}
	colorGrey  = color.Gray{Y: 150}
)

// PlotCorner draws the corner plot of the named columns of c (every column
// of role parameter when names is nil) to path: 1-D marginal histograms
// with the 16th, 50th and 84th percentiles marked, and 2-D histograms with
// the contours enclosing 39.3% and 86.5% of the samples (1 and 2 sigma in
// two dimensions). thin keeps every thin-th step.
func PlotCorner(path string, c *chains.Chain, names []string, thin int, demo bool) error {
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
	if thin < 1 {
		thin = 1
	}
	n := len(names)
	data := make([][]float64, n)
	labels := make([]string, n)
	for i, name := range names {
		v := c.Column(name)
		if v == nil {
			return fmt.Errorf("corner plot: no column %q in the chains", name)
		}
		labels[i] = name
		for _, col := range c.Columns {
			if col.Name == name && col.Unit != "" {
				labels[i] += " [" + col.Unit + "]"
			}
		}
		data[i] = thinSamples(c, v, thin)
	}
	lo, hi := make([]float64, n), make([]float64, n)
	for i, x := range data {
		s := slices.Clone(x)
		slices.Sort(s)
		lo[i] = stat.Quantile(0.002, stat.Empirical, s, nil)
		hi[i] = stat.Quantile(0.998, stat.Empirical, s, nil)
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
				err = marginalPanel(p, data[col], lo[col], hi[col])
			} else {
				err = jointPanel(p, data[col], data[row], lo[col], hi[col], lo[row], hi[row])
			}
			if err != nil {
				return fmt.Errorf("corner plot %s/%s: %w", names[col], names[row], err)
			}
			p.X.Min, p.X.Max = lo[col], hi[col]
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
			if row == 0 && col == 0 && demo {
				p.Title.Text = "demo opacities: not for science"
			}
			plots[row][col] = p
		}
	}
	size := vg.Length(n) * cornerPanel * vg.Inch
	img := vgimg.New(size+0.6*vg.Inch, size+0.6*vg.Inch)
	dc := draw.New(img)
	tiles := draw.Tiles{Rows: n, Cols: n, PadX: vg.Millimeter, PadY: vg.Millimeter, PadTop: 2 * vg.Millimeter, PadRight: 4 * vg.Millimeter, PadLeft: 2 * vg.Millimeter, PadBottom: 2 * vg.Millimeter}
	canvases := plot.Align(plots, tiles, dc)
	for row := range n {
		for col := 0; col <= row; col++ {
			plots[row][col].Draw(canvases[row][col])
		}
	}
	if err := writePNG(path, vgimg.PngCanvas{Canvas: img}); err != nil {
		return fmt.Errorf("corner plot: %w", err)
	}
	return nil
}

// writePNG renders img into path atomically (atomicfile).
func writePNG(path string, img io.WriterTo) error {
	var buf bytes.Buffer
	if _, err := img.WriteTo(&buf); err != nil {
		return err
	}
	return atomicfile.Write(path, buf.Bytes(), true)
}

// spectrumPlot is the frame of a spectrum plot: the title (marked when the
// opacities are the demo's), wavelength in um and transit depth in ppm.
func spectrumPlot(title string, demo bool) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	if demo {
		p.Title.Text += " (demo opacities: not for science)"
	}
	p.X.Label.Text = "wavelength [um]"
	p.Y.Label.Text = "transit depth [ppm]"
	return p
}

// saveSpectrum writes a spectrum plot as a 9 x 5 inch PNG to path.
func saveSpectrum(p *plot.Plot, path string) error {
	p.Add(plotter.NewGrid())
	wt, err := p.WriterTo(9*vg.Inch, 5*vg.Inch, "png")
	if err != nil {
		return err
	}
	return writePNG(path, wt)
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

func marginalPanel(p *plot.Plot, x []float64, lo, hi float64) error {
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
	s := slices.Clone(x)
	slices.Sort(s)
	for _, q := range []float64{0.16, 0.5, 0.84} {
		v := stat.Quantile(q, stat.Empirical, s, nil)
		ql, err := plotter.NewLine(plotter.XYs{{X: v, Y: 0}, {X: v, Y: 1.05 * top}})
		if err != nil {
			return err
		}
		ql.Color = color.Black
		if q != 0.5 {
			ql.Dashes = []vg.Length{vg.Points(3), vg.Points(2)}
		}
		p.Add(ql)
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

func jointPanel(p *plot.Plot, x, y []float64, xlo, xhi, ylo, yhi float64) error {
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
	p.Y.Min, p.Y.Max = ylo, yhi
	return nil
}

// SpectrumPlot is the content of spectrum.png.
type SpectrumPlot struct {
	Wavelength []float64   // bin centres, um
	HalfWidth  []float64   // bin half widths, um
	Depth      []float64   // observed transit depth, ppm
	Error      []float64   // its 1-sigma error, ppm
	Models     [][]float64 // model depths at the bins, ppm, one per posterior sample
	Title      string
	Demo       bool
}

// PlotSpectrum draws the data with error bars, the median model and the 1
// and 2 sigma bands of the posterior models to path.
func PlotSpectrum(path string, s *SpectrumPlot) error {
	nb := len(s.Wavelength)
	if nb == 0 || len(s.Depth) != nb || len(s.Error) != nb || len(s.HalfWidth) != nb {
		return fmt.Errorf("spectrum plot: %d wavelengths, %d half widths, %d depths, %d errors", nb, len(s.HalfWidth), len(s.Depth), len(s.Error))
	}
	order := make([]int, nb)
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(a, b int) bool { return s.Wavelength[order[a]] < s.Wavelength[order[b]] })

	p := spectrumPlot(s.Title, s.Demo)
	if len(s.Models) > 0 {
		q := func(lo, hi float64) (plotter.XYs, plotter.XYs) {
			a, b := make(plotter.XYs, nb), make(plotter.XYs, nb)
			col := make([]float64, len(s.Models))
			for i, j := range order {
				for m, mod := range s.Models {
					col[m] = mod[j]
				}
				slices.Sort(col)
				a[i] = plotter.XY{X: s.Wavelength[j], Y: stat.Quantile(lo, stat.Empirical, col, nil)}
				b[i] = plotter.XY{X: s.Wavelength[j], Y: stat.Quantile(hi, stat.Empirical, col, nil)}
			}
			return a, b
		}
		for _, band := range []struct {
			lo, hi float64
			c      color.Color
		}{{band2Lo, band2Hi, colorBand2}, {band1Lo, band1Hi, colorBand1}} {
			a, b := q(band.lo, band.hi)
			slices.Reverse(b)
			poly, err := plotter.NewPolygon(append(a, b...))
			if err != nil {
				return fmt.Errorf("spectrum plot: %w", err)
			}
			poly.Color = band.c
			poly.LineStyle.Width = 0
			p.Add(poly)
		}
		med, _ := q(0.5, 0.5)
		l, err := plotter.NewLine(med)
		if err != nil {
			return fmt.Errorf("spectrum plot: %w", err)
		}
		l.Color = colorBlue
		l.Width = vg.Points(1.3)
		p.Add(l)
		p.Legend.Add("median model", l)
	}
	pts := make(errPoints, nb)
	for i, j := range order {
		pts[i] = errPoint{X: s.Wavelength[j], Y: s.Depth[j], XErr: s.HalfWidth[j], YErr: s.Error[j]}
	}
	yb, err := plotter.NewYErrorBars(pts)
	if err != nil {
		return fmt.Errorf("spectrum plot: %w", err)
	}
	xb, err := plotter.NewXErrorBars(pts)
	if err != nil {
		return fmt.Errorf("spectrum plot: %w", err)
	}
	sc, err := plotter.NewScatter(pts)
	if err != nil {
		return fmt.Errorf("spectrum plot: %w", err)
	}
	sc.GlyphStyle.Radius = vg.Points(1.5)
	p.Add(yb, xb, sc)
	p.Legend.Add("data", sc)
	p.Legend.Top = true
	p.Legend.Left = true
	if err := saveSpectrum(p, path); err != nil {
		return fmt.Errorf("spectrum plot: %w", err)
	}
	return nil
}

// errPoint is a data point with x and y errors.
type errPoint struct{ X, Y, XErr, YErr float64 }

type errPoints []errPoint

func (e errPoints) Len() int                    { return len(e) }
func (e errPoints) XY(i int) (float64, float64) { return e[i].X, e[i].Y }
func (e errPoints) XError(i int) (float64, float64) {
	return e[i].XErr, e[i].XErr
}
func (e errPoints) YError(i int) (float64, float64) {
	return e[i].YErr, e[i].YErr
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
