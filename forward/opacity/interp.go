package opacity

import "math"

// Species returns the table's gas.
func (t *XSecTable) Species() []string { return []string{t.Gas} }

// CrossSectionTo fills dst[k] with the cross-section (m^2) at wavenumber
// nu[k], interpolated bilinearly in (log10 P, T) and linearly in
// wavenumber; (P, T) outside the grid take the nearest edge and wavenumbers
// outside the table give 0, as Resample does. This is the plain per-point
// definition; the forward model resamples tables once instead.
func (t *XSecTable) CrossSectionTo(dst, nu []float64, p, temp float64) {
	if len(dst) != len(nu) {
		panic("opacity: XSecTable.CrossSectionTo: length mismatch")
	}
	ip, wp := Weights(t.Log10P, math.Log10(p))
	it, wt := Weights(t.T, temp)
	nP, nT := len(t.Log10P), len(t.T)
	for k, v := range nu {
		s := 0.0
		for _, c := range [4]struct {
			i, j int
			w    float64
		}{{ip, it, (1 - wp) * (1 - wt)}, {ip + 1, it, wp * (1 - wt)}, {ip, it + 1, (1 - wp) * wt}, {ip + 1, it + 1, wp * wt}} {
			if c.w == 0 || c.i >= nP || c.j >= nT {
				continue
			}
			s += c.w * rowAt(t.Row(c.i, c.j), t.Wavenumber, v)
		}
		dst[k] = s
	}
}

// Species returns the table's pair of gases.
func (t *CIATable) Species() []string { return []string{t.Pair[0], t.Pair[1]} }

// CrossSectionTo fills dst[k] with the coefficient (m^5) at wavenumber
// nu[k] and temperature temp, linear in T and wavenumber; it does not depend
// on pressure. T outside the grid takes the nearest edge; wavenumbers
// outside the table give 0.
func (t *CIATable) CrossSectionTo(dst, nu []float64, _, temp float64) {
	if len(dst) != len(nu) {
		panic("opacity: CIATable.CrossSectionTo: length mismatch")
	}
	it, wt := Weights(t.T, temp)
	for k, v := range nu {
		s := (1 - wt) * rowAt(t.Row(it), t.Wavenumber, v)
		if wt != 0 {
			s += wt * rowAt(t.Row(it+1), t.Wavenumber, v)
		}
		dst[k] = s
	}
}

// rowAt interpolates one row linearly in wavenumber; 0 outside the axis.
func rowAt[E float32 | float64](row []E, x []float64, v float64) float64 {
	n := len(x)
	if v < x[0] || v > x[n-1] {
		return 0
	}
	if n == 1 {
		return float64(row[0])
	}
	i, w := Weights(x, v)
	return (1-w)*float64(row[i]) + w*float64(row[i+1])
}
