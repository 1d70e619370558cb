package report

import (
	"fmt"
	"image/color"
	"math"
	"slices"
	"sort"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Band quantiles of the spectrum plot: the central 68.27% and 95.45% of the
// model depths in each bin (1 and 2 sigma of a normal distribution).
const (
	band1Lo, band1Hi = 0.158655, 0.841345
	band2Lo, band2Hi = 0.02275, 0.97725
)

var (
	colorModel = color.RGBA{R: 20, G: 20, B: 20, A: 255}
	colorBand1 = color.NRGBA{R: 90, G: 90, B: 110, A: 110}
	colorBand2 = color.NRGBA{R: 90, G: 90, B: 110, A: 50}
)

// PlotDataset is one data set of a posterior spectrum plot.
type PlotDataset struct {
	Name       string
	Wavelength []float64 // bin centres, µm
	HalfWidth  []float64 // bin half widths, µm
	// Depth is the observed transit depth (ppm) less the data set's fitted
	// offset (its posterior median), so that it lines up with the model.
	Depth []float64
	// Error is the 1-sigma error (ppm) used in the plot: the stated error,
	// widened by the fitted error inflation (posterior median) when one is
	// fitted.
	Error []float64
	// Offset and Inflation (ppm) are the medians applied; Inflated says an
	// inflation was fitted.
	Offset, Inflation float64
	Fitted, Inflated  bool // an offset / an inflation is a free parameter
}

// SpectrumPlot is the content of spectrum.png and spectrum.svg.
type SpectrumPlot struct {
	Title    string
	Demo     bool
	Datasets []PlotDataset
	// Models holds the model depth (ppm, no offsets) per posterior sample,
	// one value per bin, the data sets' bins concatenated in order.
	Models [][]float64
	// Truth is the true model depth per bin (ppm), nil when unknown.
	Truth []float64
}

func (s *SpectrumPlot) bins() int {
	n := 0
	for _, d := range s.Datasets {
		n += len(d.Wavelength)
	}
	return n
}

// PlotSpectrum draws the posterior spectrum to base.png and base.svg (a
// .png or .svg extension of base is dropped): the data of each set in its
// own colour and marker, after its fitted offset and with its inflated
// errors; the median model and its 1 and 2 sigma bands; the truth when
// known; and below, the residuals from the median model in units of each
// bin's error.
func PlotSpectrum(base string, s *SpectrumPlot) error {
	n := s.bins()
	if n == 0 {
		return fmt.Errorf("spectrum plot: no data")
	}
	for _, d := range s.Datasets {
		if len(d.HalfWidth) != len(d.Wavelength) || len(d.Depth) != len(d.Wavelength) || len(d.Error) != len(d.Wavelength) {
			return fmt.Errorf("spectrum plot: data set %q: %d wavelengths, %d half widths, %d depths, %d errors", d.Name, len(d.Wavelength), len(d.HalfWidth), len(d.Depth), len(d.Error))
		}
	}
	for _, m := range s.Models {
		if len(m) != n {
			return fmt.Errorf("spectrum plot: a model has %d bins, the data %d", len(m), n)
		}
	}
	if s.Truth != nil && len(s.Truth) != n {
		return fmt.Errorf("spectrum plot: the truth has %d bins, the data %d", len(s.Truth), n)
	}
	var wl, half []float64
	for _, d := range s.Datasets {
		wl = append(wl, d.Wavelength...)
		half = append(half, d.HalfWidth...)
	}
	order := make([]int, n)
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(a, b int) bool { return wl[order[a]] < wl[order[b]] })
	lo, hi := wavelengthRange(wl, half)

	top := plot.New()
	top.Title.Text = s.Title
	if s.Demo {
		top.Title.Text += " (demo opacities: not for science)"
	}
	setWavelengthAxis(top, lo, hi)
	top.X.Label.Text = ""
	top.X.Tick.Marker = unlabelled{top.X.Tick.Marker}
	top.Y.Label.Text = "Transit depth [ppm]"
	top.Y.Tick.Marker = exactTicks{}
	top.Add(plotter.NewGrid())
	top.Legend.Top, top.Legend.Left = true, true
	top.Legend.ThumbnailWidth = vg.Points(18)

	median := make([]float64, n)
	if len(s.Models) > 0 {
		col := make([]float64, len(s.Models))
		quant := func(lo, hi float64) (a, b plotter.XYs) {
			a, b = make(plotter.XYs, n), make(plotter.XYs, n)
			for k, j := range order {
				for m, mod := range s.Models {
					col[m] = mod[j]
				}
				slices.Sort(col)
				a[k] = plotter.XY{X: wl[j], Y: stat.Quantile(lo, stat.Empirical, col, nil)}
				b[k] = plotter.XY{X: wl[j], Y: stat.Quantile(hi, stat.Empirical, col, nil)}
			}
			return a, b
		}
		for _, band := range []struct {
			lo, hi float64
			c      color.Color
			label  string
		}{{band2Lo, band2Hi, colorBand2, "2σ (95%) band"}, {band1Lo, band1Hi, colorBand1, "1σ (68%) band"}} {
			a, b := quant(band.lo, band.hi)
			slices.Reverse(b)
			poly, err := plotter.NewPolygon(append(a, b...))
			if err != nil {
				return fmt.Errorf("spectrum plot: %w", err)
			}
			poly.Color = band.c
			poly.LineStyle.Width = 0
			top.Add(poly)
			top.Legend.Add(band.label, poly)
		}
		med, _ := quant(0.5, 0.5)
		for k, j := range order {
			median[j] = med[k].Y
		}
		l, err := plotter.NewLine(med)
		if err != nil {
			return fmt.Errorf("spectrum plot: %w", err)
		}
		l.Color = colorModel
		l.Width = vg.Points(1.3)
		top.Add(l)
		top.Legend.Add("median model", l)
	}
	if s.Truth != nil {
		pts := make(plotter.XYs, n)
		for k, j := range order {
			pts[k] = plotter.XY{X: wl[j], Y: s.Truth[j]}
		}
		l, err := plotter.NewLine(pts)
		if err != nil {
			return fmt.Errorf("spectrum plot: %w", err)
		}
		l.Color = colorTruth
		l.Width = vg.Points(1.1)
		l.Dashes = []vg.Length{vg.Points(4), vg.Points(2)}
		top.Add(l)
		top.Legend.Add("truth", l)
	}

	bottom := plot.New()
	setWavelengthAxis(bottom, lo, hi)
	bottom.Y.Label.Text = "Residual [σ]"
	bottom.Y.Tick.Marker = exactTicks{}
	bottom.Add(plotter.NewGrid())
	rmax := 3.0
	for _, y := range []float64{-2, 0, 2} {
		l, err := plotter.NewLine(plotter.XYs{{X: lo, Y: y}, {X: hi, Y: y}})
		if err != nil {
			return err
		}
		l.Color = color.Gray{Y: 110}
		if y != 0 {
			l.Dashes = []vg.Length{vg.Points(3), vg.Points(3)}
		}
		bottom.Add(l)
	}

	first := 0
	for k, d := range s.Datasets {
		c := paletteColor(k)
		shape := []draw.GlyphDrawer{draw.CircleGlyph{}, draw.SquareGlyph{}, draw.TriangleGlyph{}, draw.PyramidGlyph{}, draw.RingGlyph{}, draw.BoxGlyph{}}[k%6]
		pts := make(errPoints, len(d.Wavelength))
		res := make(errPoints, len(d.Wavelength))
		for i := range d.Wavelength {
			pts[i] = errPoint{X: d.Wavelength[i], Y: d.Depth[i], XErr: d.HalfWidth[i], YErr: d.Error[i]}
			r := math.NaN()
			if len(s.Models) > 0 {
				r = (d.Depth[i] - median[first+i]) / d.Error[i]
				rmax = math.Max(rmax, math.Abs(r)+0.5)
			}
			res[i] = errPoint{X: d.Wavelength[i], Y: r, YErr: 1}
		}
		first += len(d.Wavelength)
		label := d.Name
		if d.Fitted {
			label += fmt.Sprintf(", offset %+.0f ppm removed", d.Offset)
		}
		if d.Inflated {
			label += fmt.Sprintf(", errors inflated by %.0f ppm", d.Inflation)
		}
		if err := addErrPoints(top, pts, c, shape, label); err != nil {
			return fmt.Errorf("spectrum plot: %w", err)
		}
		if len(s.Models) > 0 {
			if err := addErrPoints(bottom, res, c, shape, ""); err != nil {
				return fmt.Errorf("spectrum plot: %w", err)
			}
		}
	}
	top.X.Min, top.X.Max, bottom.X.Min, bottom.X.Max = lo, hi, lo, hi
	bottom.Y.Min, bottom.Y.Max = -rmax, rmax

	const w, h = 9 * vg.Inch, 6.2 * vg.Inch
	return figure{w: w, h: h, draw: func(dc draw.Canvas) error {
		plots := [][]*plot.Plot{{top}, {bottom}}
		cs := plot.Align(plots, draw.Tiles{Rows: 2, Cols: 1, PadTop: vg.Points(4), PadBottom: vg.Points(4), PadLeft: vg.Points(4), PadRight: vg.Points(10), PadY: vg.Points(2)}, dc)
		// Heights 72% and 28%, the x axes kept aligned.
		y0, y1 := cs[1][0].Min.Y, cs[0][0].Max.Y
		split := y0 + 0.28*(y1-y0)
		cs[1][0].Max.Y = split
		cs[0][0].Min.Y = split + vg.Points(2)
		top.Draw(cs[0][0])
		bottom.Draw(cs[1][0])
		return nil
	}}.save(pathBase(base))
}

// addErrPoints adds points with x and y error bars in colour c to p, and a
// legend entry when label is not empty.
func addErrPoints(p *plot.Plot, pts errPoints, c color.Color, shape draw.GlyphDrawer, label string) error {
	yb, err := plotter.NewYErrorBars(pts)
	if err != nil {
		return err
	}
	yb.Color = c
	yb.CapWidth = vg.Points(2)
	p.Add(yb)
	if pts.hasXErr() {
		xb, err := plotter.NewXErrorBars(pts)
		if err != nil {
			return err
		}
		xb.Color = c
		xb.CapWidth = 0
		p.Add(xb)
	}
	sc, err := plotter.NewScatter(pts)
	if err != nil {
		return err
	}
	sc.GlyphStyle = draw.GlyphStyle{Color: c, Radius: vg.Points(2.2), Shape: shape}
	p.Add(sc)
	if label != "" {
		p.Legend.Add(label, sc)
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
func (e errPoints) hasXErr() bool {
	for _, p := range e {
		if p.XErr > 0 {
			return true
		}
	}
	return false
}
