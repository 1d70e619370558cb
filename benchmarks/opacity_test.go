package benchmarks

import (
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"chord/forward/opacity"
	"chord/forward/opacity/hitran"
	"chord/forward/opacity/lbl"
)

// voigtSink keeps the benchmarked profile values alive.
var voigtSink float64

// BenchmarkVoigt measures one Voigt profile value (ns/op is ns per value).
// "window" samples a line's whole +-25 cm^-1 window evenly (Doppler HWHM
// 0.005, Lorentz HWHM 0.07 cm^-1, a line near 2000 cm^-1 at 1 atm): almost
// every point lies in Humlicek's cheap outer region, as in a real build.
// "core" samples +-5 Voigt widths, where the costlier inner regions work.
func BenchmarkVoigt(b *testing.B) {
	for _, c := range []struct {
		name         string
		half, aD, gL float64
	}{{"window", 25, 0.005, 0.07}, {"core", 0.4, 0.005, 0.07}, {"doppler-core", 0.02, 0.005, 0.0005}} {
		b.Run(c.name, func(b *testing.B) {
			const n = 4096
			dnu := make([]float64, n)
			for i := range dnu {
				dnu[i] = -c.half + 2*c.half*float64(i)/(n-1)
			}
			b.ReportAllocs()
			var s float64
			i := 0
			for b.Loop() {
				s += lbl.Voigt(dnu[i&(n-1)], c.aD, c.gL)
				i++
			}
			voigtSink = s
		})
	}
}

// benchLines is a fixed synthetic line list: n lines of CO (molecule 5,
// isotopologue 1) spread over 2000-2400 cm^-1, log-uniform intensities
// over five decades, typical air widths; seeded PCG(1, 2).
func benchLines(n int) []lbl.Line {
	rng := rand.New(rand.NewPCG(1, 2))
	lines := make([]lbl.Line, n)
	for i := range lines {
		lines[i] = lbl.Line{Mol: 5, Iso: 1, Nu: 2000 + 400*rng.Float64(), S: 1e-19 * math.Pow(10, -5*rng.Float64()),
			GammaAir: 0.04 + 0.04*rng.Float64(), GammaSelf: 0.06, NAir: 0.7, DeltaAir: -0.003, Elower: 3000 * rng.Float64()}
	}
	return lines
}

var xsecSink *opacity.XSecTable

// BenchmarkCrossSectionBuild builds cross-sections on a uniform grid over
// 2000-2400 cm^-1 with the default 25 cm^-1 cut-off. Reported: lines x
// grid points x (P, T) points per second, and Voigt evaluations per second
// (each line is evaluated only on the grid points within its cut-off
// window, about 50 cm^-1 / step of them), which is what the cost follows.
// The pt=12 cases (4 pressures x 3 temperatures) show the speed-up with
// workers. The 1 cm^-1 grid is coarse against the lines.
func BenchmarkCrossSectionBuild(b *testing.B) {
	iso := lbl.IsoData{{Mol: 5, Iso: 1}: {Name: "CO_26", Q296: 107.42, Mass: 27.994915,
		Q: &lbl.RigidRotor{Q296: 107.42, Exponent: 1}}}
	for _, c := range []struct {
		lines   int
		step    float64
		pt      int
		workers int
	}{
		{1000, 0.04, 1, 1}, {4000, 0.04, 1, 1}, {1000, 0.01, 1, 1}, {4000, 0.01, 1, 1},
		{1000, 0.04, 12, 1}, {1000, 0.04, 12, 2}, {1000, 1, 12, 1},
	} {
		lines := benchLines(c.lines)
		npt := int(400/c.step) + 1
		grid := make([]float64, npt)
		for k := range grid {
			grid[k] = (2000 + float64(k)*c.step) * 100
		}
		s := &lbl.XSecSettings{Gas: "CO", Log10P: []float64{5}, T: []float64{800}, Wavenumber: grid, Workers: c.workers}
		if c.pt == 12 {
			s.Log10P, s.T = []float64{2, 3, 4, 5}, []float64{300, 800, 1500}
		}
		b.Run(fmt.Sprintf("lines=%d/points=%d/pt=%d/workers=%d", c.lines, npt, c.pt, c.workers), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				t, err := lbl.BuildXSec(lines, iso, s)
				if err != nil {
					b.Fatal(err)
				}
				xsecSink = t
			}
			sec := b.Elapsed().Seconds() / float64(b.N)
			b.ReportMetric(float64(c.lines)*float64(npt)*float64(c.pt)/sec, "line-points/s")
			b.ReportMetric(float64(c.lines)*float64(c.pt)*(2*lbl.DefaultWingCutoff/c.step)/sec, "evals/s")
		})
	}
}

var linesSink []lbl.Line

// BenchmarkReadLines parses 10^4 HITRAN 160-character records held in
// memory (a fixed record repeated), the reader's per-record cost.
func BenchmarkReadLines(b *testing.B) {
	const rec = " 21 6240.013616 1.633E-28 5.700e-05.07700.104 1470.11880.69-.005709       5 1 1 02       1 0 0 01                    R 14e     3677642029 5 4 5 7    31.0   29.0\n"
	data := []byte(strings.Repeat(rec, 10000))
	b.ReportAllocs()
	b.SetBytes(int64(len(data)))
	for b.Loop() {
		ls, err := hitran.ReadLines(bytes.NewReader(data), "bench", hitran.LineFilter{})
		if err != nil {
			b.Fatal(err)
		}
		linesSink = ls
	}
}
