package obs

import (
	"fmt"
	"math"
	"sort"
	"strconv"

	"chord/forward"
)

// Bin edges: rounding and overlaps.
//
// Published tables give bins as centres and widths rounded to a few
// digits, so the upper edge of one bin and the lower edge of the next
// often differ a little: a small overlap or gap. After sorting, every pair
// of neighbouring bins whose shared edge differs by at most the edge
// tolerance (ReadOptions.EdgeTolerance, a fraction of the narrower bin's
// width; DefaultEdgeTolerance) is given one edge, their midpoint, and a
// note says how many edges moved and by how much at most. A larger
// overlap is an error that prints the edges with enough digits to see it,
// and its size; a larger gap is a gap (bins need not touch).

// finish notes asymmetric errors (asym rows), sorts the bins by
// wavelength, snaps rounded shared edges (tol) and rejects duplicated or
// overlapping bins. split says the data set is one instrument's part of
// its file.
func (d *Dataset) finish(asym int, tol float64, split bool) error {
	if asym > 0 {
		d.Notes = append(d.Notes, fmt.Sprintf("%s: %d rows of %s have asymmetric errors; the mean of error_plus and error_minus is used as a symmetric Gaussian error", d.Path, asym, d.Name))
	}
	if !sort.IsSorted(byLow{d}) {
		sort.Stable(byLow{d})
		d.Notes = append(d.Notes, fmt.Sprintf("%s: rows of %s were not in wavelength order and have been sorted", d.Path, d.Name))
	}
	hint := ""
	if !split {
		hint = " (if the file holds several instruments' data, name its instrument column: columns.instrument)"
	}
	snapped, maxMove, maxRel := 0, 0.0, 0.0
	top := 0 // the bin reaching furthest up so far
	for i := 1; i < d.Len(); i++ {
		if d.Lo[i] == d.Lo[i-1] && d.Hi[i] == d.Hi[i-1] {
			return fmt.Errorf("%s: duplicated bin %s-%s um (also on line %d)%s", d.Where(i), um(d.Lo[i]), um(d.Hi[i]), d.Line[i-1], hint)
		}
		narrow := math.Min(d.Hi[i]-d.Lo[i], d.Hi[top]-d.Lo[top])
		diff := d.Hi[top] - d.Lo[i] // > 0: overlap, < 0: gap
		switch {
		case math.Abs(diff) <= RangeTolerance*d.Lo[i]:
			// The same edge up to float rounding (1.1 + 0.02/2 against
			// 1.12 - 0.02/2): nothing to say or do.
		case top == i-1 && math.Abs(diff) <= tol*narrow:
			m := 0.5 * (d.Hi[i-1] + d.Lo[i])
			d.Hi[i-1], d.Lo[i] = m, m
			snapped++
			maxMove = math.Max(maxMove, math.Abs(diff))
			maxRel = math.Max(maxRel, math.Abs(diff)/narrow)
		case diff > 0:
			a, b := distinct(d.Hi[top], d.Lo[i])
			return fmt.Errorf("%s: bin %s-%s um overlaps the bin %s-%s um on line %d by %.3g um (%.3g of the narrower bin's width; shared edges that differ by up to edge_tolerance = %g of it are taken as rounding)%s",
				d.Where(i), b, um(d.Hi[i]), um(d.Lo[top]), a, d.Line[top], diff/forward.Micron, diff/narrow, tol, hint)
		}
		if d.Hi[i] > d.Hi[top] {
			top = i
		}
	}
	if snapped > 0 {
		d.Notes = append(d.Notes, fmt.Sprintf("%s: %d shared edges of neighbouring bins of %s differed by up to %.3g um (%.3g of a bin's width; rounding of the published values) and were set to their midpoints (edge_tolerance = %g)",
			d.Path, snapped, d.Name, maxMove/forward.Micron, maxRel, tol))
	}
	return nil
}

// um formats a wavelength (m) in um with 6 significant digits.
func um(x float64) string { return strconv.FormatFloat(x/forward.Micron, 'g', 6, 64) }

// distinct formats two different wavelengths (m) in um with enough
// digits to tell them apart.
func distinct(a, b float64) (string, string) {
	for p := 6; p < 17; p++ {
		sa, sb := strconv.FormatFloat(a/forward.Micron, 'g', p, 64), strconv.FormatFloat(b/forward.Micron, 'g', p, 64)
		if sa != sb {
			return sa, sb
		}
	}
	return strconv.FormatFloat(a/forward.Micron, 'g', -1, 64), strconv.FormatFloat(b/forward.Micron, 'g', -1, 64)
}

// byLow sorts a dataset's bins by lower edge, then upper edge.
type byLow struct{ d *Dataset }

func (s byLow) Len() int { return s.d.Len() }
func (s byLow) Less(i, j int) bool {
	d := s.d
	if d.Lo[i] != d.Lo[j] {
		return d.Lo[i] < d.Lo[j]
	}
	return d.Hi[i] < d.Hi[j]
}
func (s byLow) Swap(i, j int) {
	d := s.d
	d.Lo[i], d.Lo[j] = d.Lo[j], d.Lo[i]
	d.Hi[i], d.Hi[j] = d.Hi[j], d.Hi[i]
	d.Depth[i], d.Depth[j] = d.Depth[j], d.Depth[i]
	d.Sigma[i], d.Sigma[j] = d.Sigma[j], d.Sigma[i]
	d.Line[i], d.Line[j] = d.Line[j], d.Line[i]
}

// RangeTolerance is the relative tolerance of range comparisons: a
// wavelength that lies outside a range [lo, hi] by no more than
// RangeTolerance times the range's end is taken as equal to that end. It
// absorbs the rounding of unit conversions (a range written 1.12 um in one
// place and reached as 1.12e-6 m or 1/(1/1.12e-6) in another), not any
// difference a measurement could make.
const RangeTolerance = 1e-9

// Inside reports whether [a, b] lies within [lo, hi] up to RangeTolerance.
func Inside(a, b, lo, hi float64) bool {
	return a >= lo-RangeTolerance*math.Abs(lo) && b <= hi+RangeTolerance*math.Abs(hi)
}

// Cover checks that the model wavelength grid wl (m, ascending) covers
// every bin with at least minPoints grid points, naming the first bin's
// file and line that is not. A bin edge outside the grid by no more than
// RangeTolerance (a data range equal to the model's, rounded differently)
// is moved onto the grid's end.
func (d *Dataset) Cover(wl []float64, minPoints int) error {
	lo, hi := wl[0], wl[len(wl)-1]
	for i := range d.Lo {
		if !Inside(d.Lo[i], d.Hi[i], lo, hi) {
			a, b := d.Lo[i], d.Hi[i]
			wa, wb := um(lo), um(hi)
			if a < lo {
				wa, sa := distinct(lo, a)
				return fmt.Errorf("%s: bin %s-%s um begins below the model wavelength range %s-%s um (spectrum.wavelength_min_um; the opacity tables must cover it too)", d.Where(i), sa, um(b), wa, wb)
			}
			wb, sb := distinct(hi, b)
			return fmt.Errorf("%s: bin %s-%s um ends above the model wavelength range %s-%s um (spectrum.wavelength_max_um; the opacity tables must cover it too)", d.Where(i), um(a), sb, wa, wb)
		}
		d.Lo[i], d.Hi[i] = math.Max(d.Lo[i], lo), math.Min(d.Hi[i], hi)
		a := sort.SearchFloat64s(wl, d.Lo[i])
		b := sort.Search(len(wl), func(k int) bool { return wl[k] > d.Hi[i] })
		if b-a < minPoints {
			return fmt.Errorf("%s: bin %s-%s um holds %d model points, need at least %d: raise spectrum.resolving_power or widen the bin",
				d.Where(i), um(d.Lo[i]), um(d.Hi[i]), b-a, minPoints)
		}
	}
	return nil
}
