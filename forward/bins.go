package forward

import (
	"fmt"
	"math"
)

// Bins are an instrument's wavelength bins [Lo[i], Hi[i]] in m. Bins may
// overlap and need not be sorted; each is averaged on its own.
type Bins struct {
	Lo, Hi []float64 // m
}

// BinsFromEdges returns the len(edges)-1 adjacent bins between ascending
// edges (m).
func BinsFromEdges(edges []float64) (Bins, error) {
	if len(edges) < 2 {
		return Bins{}, fmt.Errorf("forward: %d bin edges, need at least 2", len(edges))
	}
	b := Bins{Lo: make([]float64, len(edges)-1), Hi: make([]float64, len(edges)-1)}
	for i := range b.Lo {
		if !(edges[i+1] > edges[i]) {
			return Bins{}, fmt.Errorf("forward: bin edges not strictly ascending at edge %d (%g m after %g m)", i+2, edges[i+1], edges[i])
		}
		b.Lo[i], b.Hi[i] = edges[i], edges[i+1]
	}
	return b, nil
}

// BinsFromCentres returns bins [c - w/2, c + w/2] from centres and full
// widths (m).
func BinsFromCentres(centre, width []float64) (Bins, error) {
	if len(centre) != len(width) || len(centre) == 0 {
		return Bins{}, fmt.Errorf("forward: %d bin centres and %d widths; need the same number, at least one", len(centre), len(width))
	}
	b := Bins{Lo: make([]float64, len(centre)), Hi: make([]float64, len(centre))}
	for i := range centre {
		if !(width[i] > 0) || math.IsInf(width[i], 0) {
			return Bins{}, fmt.Errorf("forward: bin %d: width %g m, must be positive and finite", i+1, width[i])
		}
		b.Lo[i], b.Hi[i] = centre[i]-width[i]/2, centre[i]+width[i]/2
	}
	return b, nil
}

// Len returns the number of bins.
func (b Bins) Len() int { return len(b.Lo) }

// binner averages a spectrum on the model grid onto bins: the model is
// taken as constant over each point's cell (cell edges at the geometric
// mid-points between grid points; the outer cells end at the outer grid
// points), and a bin's value is the wavelength-weighted mean over the part
// of each cell inside the bin (a box-car instrument profile).
type binner struct {
	start  []int       // first model point of bin i
	weight [][]float64 // weights of points start[i], start[i]+1, ...
}

func newBinner(b Bins, wl []float64, minPoints int) (*binner, error) {
	if len(b.Lo) != len(b.Hi) {
		return nil, fmt.Errorf("forward: %d bin lower edges and %d upper edges", len(b.Lo), len(b.Hi))
	}
	if len(b.Lo) == 0 {
		return nil, fmt.Errorf("forward: no bins")
	}
	m := len(wl)
	edge := make([]float64, m+1)
	edge[0], edge[m] = wl[0], wl[m-1]
	for k := 1; k < m; k++ {
		edge[k] = math.Sqrt(wl[k-1] * wl[k])
	}
	bn := &binner{start: make([]int, len(b.Lo)), weight: make([][]float64, len(b.Lo))}
	for i := range b.Lo {
		lo, hi := b.Lo[i], b.Hi[i]
		if !(lo > 0) || !(hi > lo) || math.IsInf(hi, 0) {
			return nil, fmt.Errorf("forward: bin %d: %g-%g um: need 0 < low < high", i+1, lo/Micron, hi/Micron)
		}
		if lo < wl[0] || hi > wl[m-1] {
			return nil, fmt.Errorf("forward: bin %d (%g-%g um) lies outside the model grid %g-%g um", i+1, lo/Micron, hi/Micron, wl[0]/Micron, wl[m-1]/Micron)
		}
		inside := 0
		for _, v := range wl {
			if v >= lo && v <= hi {
				inside++
			}
		}
		if inside < minPoints {
			return nil, fmt.Errorf("forward: bin %d (%g-%g um) holds %d model points, need at least %d: raise the resolving power or widen the bin",
				i+1, lo/Micron, hi/Micron, inside, minPoints)
		}
		first, last := -1, -1
		for k := 0; k < m; k++ {
			if edge[k+1] > lo && edge[k] < hi {
				if first < 0 {
					first = k
				}
				last = k
			}
		}
		w := make([]float64, last-first+1)
		for k := first; k <= last; k++ {
			w[k-first] = (math.Min(edge[k+1], hi) - math.Max(edge[k], lo)) / (hi - lo)
		}
		bn.start[i], bn.weight[i] = first, w
	}
	return bn, nil
}

func (bn *binner) average(dst, fine []float64) {
	for i, w := range bn.weight {
		f := fine[bn.start[i] : bn.start[i]+len(w)]
		s := 0.0
		for k, v := range w {
			s += v * f[k]
		}
		dst[i] = s
	}
}
