package report

import (
	"bytes"
	"fmt"
	"image/color"
	"math"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"

	"chord/chains"
	"chord/config"
	"chord/internal/atomicfile"
)

// Figures are drawn once per format: a PNG (150 dots per inch) for quick
// looks and web pages, and an SVG (text kept as text) for papers and for
// tests that look for a label. Both are written atomically.

// figure is a drawing of a given size.
type figure struct {
	w, h vg.Length
	draw func(dc draw.Canvas) error
}

// pngDPI is the resolution of the PNG figures.
const pngDPI = 150

// render returns the figure as PNG and SVG bytes.
func (f figure) render() (pngData, svgData []byte, err error) {
	img := vgimg.NewWith(vgimg.UseWH(f.w, f.h), vgimg.UseDPI(pngDPI))
	dc := draw.New(img)
	// An opaque white background: transparent PNGs read badly on dark viewers.
	dc.SetColor(color.White)
	dc.Fill(dc.Rectangle.Path())
	if err := f.draw(dc); err != nil {
		return nil, nil, err
	}
	var pb bytes.Buffer
	if _, err := (vgimg.PngCanvas{Canvas: img}).WriteTo(&pb); err != nil {
		return nil, nil, err
	}
	sv := vgsvg.New(f.w, f.h)
	sc := draw.New(sv)
	sc.SetColor(color.White)
	sc.Fill(sc.Rectangle.Path())
	if err := f.draw(sc); err != nil {
		return nil, nil, err
	}
	var sb bytes.Buffer
	if _, err := sv.WriteTo(&sb); err != nil {
		return nil, nil, err
	}
	return pb.Bytes(), sb.Bytes(), nil
}

// save writes the figure to base+".png" and base+".svg".
func (f figure) save(base string) error {
	p, s, err := f.render()
	if err != nil {
		return err
	}
	if err := atomicfile.Write(base+".png", p, true); err != nil {
		return err
	}
	return atomicfile.Write(base+".svg", s, true)
}

// singlePlot is a figure of one plot.
func singlePlot(p *plot.Plot, w, h vg.Length) figure {
	return figure{w: w, h: h, draw: func(dc draw.Canvas) error { p.Draw(dc); return nil }}
}

// pathBase strips a .png or .svg extension: the figures are written in
// both formats beside each other.
func pathBase(path string) string {
	for _, ext := range []string{".png", ".svg"} {
		if b, ok := strings.CutSuffix(path, ext); ok {
			return b
		}
	}
	return path
}

// Colours of the figures: a palette readable by people with the common
// forms of colour blindness (the Okabe-Ito palette, Okabe & Ito 2008,
// "Color Universal Design"), then greys.
var palette = []color.Color{
	color.RGBA{R: 0, G: 114, B: 178, A: 255},   // blue
	color.RGBA{R: 213, G: 94, B: 0, A: 255},    // vermilion
	color.RGBA{R: 0, G: 158, B: 115, A: 255},   // bluish green
	color.RGBA{R: 204, G: 121, B: 167, A: 255}, // reddish purple
	color.RGBA{R: 230, G: 159, B: 0, A: 255},   // orange
	color.RGBA{R: 86, G: 180, B: 233, A: 255},  // sky blue
	color.RGBA{R: 120, G: 120, B: 120, A: 255}, // grey
	color.RGBA{R: 0, G: 0, B: 0, A: 255},       // black
}

func paletteColor(i int) color.Color { return palette[i%len(palette)] }

// colorTruth marks true values and spectra.
var colorTruth = color.RGBA{R: 200, G: 30, B: 30, A: 255}

// paramLabel is the axis label of a chain column in words, with its unit:
// "log10 H2O mixing ratio", "Temperature [K]", "Radius [Jupiter radii]".
func paramLabel(col chains.Column) string {
	q, of, _ := strings.Cut(col.Quantity, " of ")
	switch config.Quantity(q) {
	case config.QLog10VMR:
		return "log10 " + of + " mixing ratio"
	case config.QCLR:
		return "centred log-ratio of " + of
	case config.QTemperature:
		return "Temperature [K]"
	case config.QTIrr:
		return "Irradiation temperature [K]"
	case config.QTInt:
		return "Internal temperature [K]"
	case config.QLog10ThermalOpacity:
		return "log10 thermal opacity [m²/kg]"
	case config.QLog10OpacityRatio:
		return "log10 visible-to-thermal opacity ratio"
	case config.QRadiusRjup:
		return "Radius [Jupiter radii]"
	case config.QRadiusRearth:
		return "Radius [Earth radii]"
	case config.QMassMjup:
		return "Mass [Jupiter masses]"
	case config.QMassMearth:
		return "Mass [Earth masses]"
	case config.QLog10CloudTop:
		return "log10 cloud-top pressure [bar]"
	case config.QCloudFraction:
		return "Cloud fraction"
	case config.QLog10HazeStrength:
		return "log10 haze strength"
	case config.QHazeIndex:
		return "Haze index"
	case config.QOffsetPPM:
		return "Offset of " + of + " [ppm]"
	case config.QErrorInflationPM:
		if of == "" {
			return "Error inflation [ppm]"
		}
		return "Error inflation of " + of + " [ppm]"
	}
	label := col.Name
	if col.Quantity != "" {
		label = col.Quantity
	}
	if col.Unit != "" {
		label += " [" + col.Unit + "]"
	}
	return label
}

// sigDigits returns the number of decimals that gives an interval of
// width w (> 0) two significant digits: 1234 +- 56 prints as "1234 ± 56",
// 0.01234 +- 0.00056 as "0.01234 ± 0.00056" (fact of the trade: quote an
// uncertainty to two significant digits and the value to the same decimal).
func sigDigits(w float64) int {
	if !(w > 0) || math.IsInf(w, 0) {
		return 3
	}
	d := 1 - int(math.Floor(math.Log10(w)))
	return max(d, 0)
}

// fmtFixed formats x with dec decimals, without a negative zero.
func fmtFixed(x float64, dec int) string {
	s := strconv.FormatFloat(x, 'f', dec, 64)
	if strings.Trim(s, "-0.") == "" {
		s = strings.TrimPrefix(s, "-")
	}
	return s
}

// intervalText is "median +hi/-lo" with the decimals of the narrower side.
func intervalText(med, lo, hi float64) string {
	dec := sigDigits(math.Min(med-lo, hi-med))
	return fmt.Sprintf("%s +%s/−%s", fmtFixed(med, dec), fmtFixed(hi-med, dec), fmtFixed(med-lo, dec))
}
