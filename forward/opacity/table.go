package opacity

import (
	"fmt"
	"math"
	"sort"
)

// XSecTable is the cross-section of one gas, sigma(log10 P, T, wavenumber),
// tabulated on a rectangular grid and stored as float32.
//
// Sigma is laid out with wavenumber fastest:
//
//	Sigma[(iP*len(T)+iT)*len(Wavenumber)+k]
//
// Interpolation is bilinear in (log10 P, T) and, where a table is put onto
// another wavenumber grid, linear in wavenumber. Outside the (P, T) grid the
// value at the nearest edge is used (the caller is told by InRange).
type XSecTable struct {
	Gas        string    // gas name as used in configurations, e.g. "H2O"
	Log10P     []float64 // log10 of pressure in Pa, strictly ascending
	T          []float64 // temperature in K, strictly ascending
	Wavenumber []float64 // m^-1, strictly ascending
	Sigma      []float32 // m^2 per molecule
	Meta       map[string]string
}

// CIATable is a collision-induced absorption coefficient k(T, wavenumber) of
// one pair of gases. The absorption coefficient of a layer is
// alpha = k n_A n_B, with number densities in m^-3, so k is in m^5.
//
// K is laid out with wavenumber fastest: K[iT*len(Wavenumber)+k]. It is
// float64, unlike cross-sections: CIA coefficients are about 1e-53 to 1e-65
// m^5 (1e-43 to 1e-55 cm^5), below the smallest float32 (1.4e-45).
// Where no temperature block of the source files covers a wavenumber, the
// table holds 0 there (CIAFromBlocks states how blocks are combined).
type CIATable struct {
	Pair       [2]string // e.g. {"H2", "H2"}
	T          []float64 // K, strictly ascending
	Wavenumber []float64 // m^-1, strictly ascending
	K          []float64 // m^5
	Meta       map[string]string
}

// Validate reports whether the table's axes are sorted and finite, its data
// has the right length, and its values are finite and non-negative.
func (t *XSecTable) Validate() error {
	if t.Gas == "" {
		return fmt.Errorf("opacity: cross-section table has no gas name")
	}
	if err := CheckAxis(t.Log10P, "log10 pressure"); err != nil {
		return fmt.Errorf("opacity: table %s: %w", t.Gas, err)
	}
	if err := CheckAxis(t.T, "temperature"); err != nil {
		return fmt.Errorf("opacity: table %s: %w", t.Gas, err)
	}
	if t.T[0] <= 0 {
		return fmt.Errorf("opacity: table %s: temperature axis starts at %g K, must be positive", t.Gas, t.T[0])
	}
	if err := CheckAxis(t.Wavenumber, "wavenumber"); err != nil {
		return fmt.Errorf("opacity: table %s: %w", t.Gas, err)
	}
	want := len(t.Log10P) * len(t.T) * len(t.Wavenumber)
	if len(t.Sigma) != want {
		return fmt.Errorf("opacity: table %s: %d cross-section values, want %d (P x T x wavenumber = %d x %d x %d)",
			t.Gas, len(t.Sigma), want, len(t.Log10P), len(t.T), len(t.Wavenumber))
	}
	for i, v := range t.Sigma {
		if !(v >= 0) || math.IsInf(float64(v), 0) {
			return fmt.Errorf("opacity: table %s: cross-section value %d is %g, must be finite and non-negative", t.Gas, i, v)
		}
	}
	return nil
}

// Validate reports whether the table's axes are sorted and finite, its data
// has the right length, and its values are finite and non-negative.
func (t *CIATable) Validate() error {
	name := t.Pair[0] + "-" + t.Pair[1]
	if t.Pair[0] == "" || t.Pair[1] == "" {
		return fmt.Errorf("opacity: CIA table has no pair name")
	}
	if err := CheckAxis(t.T, "temperature"); err != nil {
		return fmt.Errorf("opacity: CIA table %s: %w", name, err)
	}
	if t.T[0] <= 0 {
		return fmt.Errorf("opacity: CIA table %s: temperature axis starts at %g K, must be positive", name, t.T[0])
	}
	if err := CheckAxis(t.Wavenumber, "wavenumber"); err != nil {
		return fmt.Errorf("opacity: CIA table %s: %w", name, err)
	}
	if want := len(t.T) * len(t.Wavenumber); len(t.K) != want {
		return fmt.Errorf("opacity: CIA table %s: %d values, want %d (T x wavenumber = %d x %d)",
			name, len(t.K), want, len(t.T), len(t.Wavenumber))
	}
	for i, v := range t.K {
		if !(v >= 0) || math.IsInf(float64(v), 0) {
			return fmt.Errorf("opacity: CIA table %s: value %d is %g, must be finite and non-negative", name, i, v)
		}
	}
	return nil
}

// CheckAxis reports whether x is usable as a table axis: not empty, finite
// and strictly ascending. name says which axis in the error.
func CheckAxis(x []float64, name string) error {
	if len(x) == 0 {
		return fmt.Errorf("%s axis is empty", name)
	}
	for i, v := range x {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("%s axis value %d is %g", name, i, v)
		}
		if i > 0 && !(v > x[i-1]) {
			return fmt.Errorf("%s axis is not strictly ascending at index %d (%g after %g)", name, i, v, x[i-1])
		}
	}
	return nil
}

// Weights returns the bracketing index i and the weight w of x[i+1] for
// linear interpolation on the ascending axis x: f(v) = (1-w) f[i] + w f[i+1].
// Outside the axis the nearest edge is used (w is 0 or 1). A one-point axis
// gives i = 0, w = 0.
func Weights(x []float64, v float64) (i int, w float64) {
	n := len(x)
	if n < 2 || v <= x[0] {
		return 0, 0
	}
	if v >= x[n-1] {
		return n - 2, 1
	}
	i = sort.SearchFloat64s(x, v) - 1 // x[i] < v <= x[i+1]
	return i, (v - x[i]) / (x[i+1] - x[i])
}

// InRange reports whether (log10 P, T) lies inside the table's grid.
func (t *XSecTable) InRange(log10P, temp float64) bool {
	return log10P >= t.Log10P[0] && log10P <= t.Log10P[len(t.Log10P)-1] &&
		temp >= t.T[0] && temp <= t.T[len(t.T)-1]
}

// Row returns the cross-sections at grid point (iP, iT), aliasing Sigma.
func (t *XSecTable) Row(iP, iT int) []float32 {
	n := len(t.Wavenumber)
	o := (iP*len(t.T) + iT) * n
	return t.Sigma[o : o+n : o+n]
}

// Row returns the coefficients at temperature index iT, aliasing K.
func (t *CIATable) Row(iT int) []float64 {
	n := len(t.Wavenumber)
	return t.K[iT*n : (iT+1)*n : (iT+1)*n]
}

// Resample returns a copy of the table on the wavenumber grid nu (m^-1,
// ascending), linear in wavenumber. Points of nu outside the table's
// wavenumber range get 0: no absorption is assumed where the table says
// nothing, and callers that need coverage check Covers first.
func (t *XSecTable) Resample(nu []float64) *XSecTable {
	out := &XSecTable{
		Gas:        t.Gas,
		Log10P:     append([]float64(nil), t.Log10P...),
		T:          append([]float64(nil), t.T...),
		Wavenumber: append([]float64(nil), nu...),
		Sigma:      make([]float32, len(t.Log10P)*len(t.T)*len(nu)),
		Meta:       copyMeta(t.Meta),
	}
	for ip := range t.Log10P {
		for it := range t.T {
			ResampleRow(out.Row(ip, it), nu, t.Row(ip, it), t.Wavenumber)
		}
	}
	return out
}

// Resample returns a copy of the table on the wavenumber grid nu, as
// XSecTable.Resample does.
func (t *CIATable) Resample(nu []float64) *CIATable {
	out := &CIATable{
		Pair:       t.Pair,
		T:          append([]float64(nil), t.T...),
		Wavenumber: append([]float64(nil), nu...),
		K:          make([]float64, len(t.T)*len(nu)),
		Meta:       copyMeta(t.Meta),
	}
	for it := range t.T {
		ResampleRow(out.Row(it), nu, t.Row(it), t.Wavenumber)
	}
	return out
}

// Covers reports whether the table's wavenumber axis spans [lo, hi] (m^-1).
func (t *XSecTable) Covers(lo, hi float64) bool {
	return lo >= t.Wavenumber[0] && hi <= t.Wavenumber[len(t.Wavenumber)-1]
}

// Covers reports whether the table's wavenumber axis spans [lo, hi] (m^-1).
func (t *CIATable) Covers(lo, hi float64) bool {
	return lo >= t.Wavenumber[0] && hi <= t.Wavenumber[len(t.Wavenumber)-1]
}

// ResampleRow fills dst[k] with the row src, given on the ascending axis x,
// interpolated linearly at nu[k]; points of nu outside x give 0.
func ResampleRow[E float32 | float64](dst []E, nu []float64, src []E, x []float64) {
	n := len(x)
	for k, v := range nu {
		if v < x[0] || v > x[n-1] {
			dst[k] = 0
			continue
		}
		i, w := Weights(x, v)
		if n == 1 {
			dst[k] = src[0]
			continue
		}
		dst[k] = E((1-w)*float64(src[i]) + w*float64(src[i+1]))
	}
}

func copyMeta(m map[string]string) map[string]string {
	if m == nil {
		return nil
	}
	c := make(map[string]string, len(m))
	for k, v := range m {
		c[k] = v
	}
	return c
}
