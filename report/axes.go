package report

import (
	"math"
	"strconv"

	"gonum.org/v1/plot"
)

// Axes of the figures: wavelength (µm, logarithmic when the range spans
// more than a factor of wavelengthLogRatio) and pressure (bar, logarithmic,
// increasing downward).

// wavelengthLogRatio is the ratio of the longest to the shortest wavelength
// above which a wavelength axis is logarithmic: a factor 3 (e.g. 0.6-2 µm)
// still reads well on a linear axis, a factor 20 (0.6-12 µm) does not.
const wavelengthLogRatio = 3

// setWavelengthAxis makes p's x axis a wavelength axis over [lo, hi] µm.
func setWavelengthAxis(p *plot.Plot, lo, hi float64) {
	p.X.Label.Text = "Wavelength [µm]"
	p.X.Min, p.X.Max = lo, hi
	if lo > 0 && hi/lo > wavelengthLogRatio {
		p.X.Scale = plot.LogScale{}
		p.X.Tick.Marker = logTicks{}
		return
	}
	p.X.Tick.Marker = exactTicks{}
}

// wavelengthRange is the range of the bins [c-h, c+h] with a small margin.
func wavelengthRange(centre, half []float64) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for i, c := range centre {
		h := 0.0
		if half != nil {
			h = half[i]
		}
		lo, hi = math.Min(lo, c-h), math.Max(hi, c+h)
	}
	if lo > 0 && hi/lo > wavelengthLogRatio {
		return lo / 1.03, hi * 1.03
	}
	pad := 0.02 * (hi - lo)
	return lo - pad, hi + pad
}

// logTicks labels a logarithmic axis at 1-2-5 or finer steps so that at
// least five labels show, where gonum/plot's LogTicks labels only powers
// of ten (a 0.6-5 µm axis would show one label). Minor ticks fill the
// decades.
type logTicks struct{}

func (logTicks) Ticks(min, max float64) []plot.Tick {
	if !(min > 0) || !(max > min) {
		return plot.DefaultTicks{}.Ticks(min, max)
	}
	steps := [][]float64{{1}, {1, 3}, {1, 2, 5}, {1, 2, 3, 5}, {1, 1.5, 2, 3, 4, 5, 7}, {1, 1.2, 1.5, 2, 2.5, 3, 4, 5, 6, 7, 8, 9}}
	var major []float64
	for _, mant := range steps {
		major = major[:0]
		for e := math.Floor(math.Log10(min)) - 1; e <= math.Ceil(math.Log10(max)); e++ {
			for _, m := range mant {
				v := m * math.Pow(10, e)
				if v >= min*(1-1e-9) && v <= max*(1+1e-9) {
					major = append(major, v)
				}
			}
		}
		if len(major) >= 5 {
			break
		}
	}
	var ticks []plot.Tick
	isMajor := map[string]bool{}
	for _, v := range major {
		s := strconv.FormatFloat(v, 'g', 4, 64)
		isMajor[s] = true
		ticks = append(ticks, plot.Tick{Value: v, Label: s})
	}
	for e := math.Floor(math.Log10(min)) - 1; e <= math.Ceil(math.Log10(max)); e++ {
		for m := 1.0; m < 10; m++ {
			v := m * math.Pow(10, e)
			if v >= min && v <= max && !isMajor[strconv.FormatFloat(v, 'g', 4, 64)] {
				ticks = append(ticks, plot.Tick{Value: v})
			}
		}
	}
	return ticks
}

// decadeTicks labels the powers of ten of a logarithmic axis (pressure),
// as plain numbers: 0.001, 0.01, ... 10, 100, or 1e-06 below 0.001.
type decadeTicks struct{}

func (decadeTicks) Ticks(min, max float64) []plot.Tick {
	if !(min > 0) || !(max > min) {
		return plot.DefaultTicks{}.Ticks(min, max)
	}
	var ticks []plot.Tick
	for e := math.Floor(math.Log10(min)); e <= math.Ceil(math.Log10(max)); e++ {
		v := math.Pow(10, e)
		if v >= min*(1-1e-9) && v <= max*(1+1e-9) {
			ticks = append(ticks, plot.Tick{Value: v, Label: strconv.FormatFloat(v, 'g', -1, 64)})
		}
		for m := 2.0; m < 10; m++ {
			if w := m * v; w >= min && w <= max {
				ticks = append(ticks, plot.Tick{Value: w})
			}
		}
	}
	return ticks
}
