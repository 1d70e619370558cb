package obs

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"chord/forward"
)

// Observation files.
//
// An observed transmission spectrum is a text table, comma-separated or
// whitespace-separated (decided by the header: a comma in it means CSV).
// Lines that are blank or whose first non-blank character is '#' are
// comments. The first other line is the header; it names the columns, in
// any order, each name carrying its unit:
//
//	wavelength_um | wavelength_nm   bin centre      } one pair:
//	width_um      | width_nm        full bin width  } centre and width,
//	edge_low_um   | edge_low_nm     lower bin edge  } or the two edges
//	edge_high_um  | edge_high_nm    upper bin edge  }
//
//	depth           transit depth as a fraction     } exactly one
//	depth_ppm       in parts per million            }
//	depth_percent   in percent                      }
//	radius_ratio    Rp/Rs; depth = (Rp/Rs)^2        }
//
//	error                          1-sigma error, in the unit of the depth column
//	error_plus and error_minus     asymmetric errors (magnitudes); their mean is used
//
// The error columns may repeat the depth column's unit (error_ppm with
// depth_ppm, error_plus_percent with depth_percent); another unit is an
// error.
//
// Every other column name is an error. An Rp/Rs error is propagated to
// first order: sigma_D = 2 (Rp/Rs) sigma_(Rp/Rs) (fact of the trade).
//
// Rows are bins. Each must have finite values, positive widths (or
// edge_low < edge_high), an error between MinErrorPPM and MaxErrorPPM and
// a depth in [0, 1) after conversion; two bins may not be the same bin or overlap by more than a
// millionth of the narrower one's width (adjacent bins whose shared edge
// was rounded differently are accepted). Rows not sorted by wavelength are
// sorted, with a note. Every error names the file and line.

// Dataset is one observed spectrum, its bins sorted by wavelength.
type Dataset struct {
	Name  string    // label used by parameters (offsets, error inflation) and outputs
	Path  string    // file it was read from
	Lo    []float64 // bin lower edges, m
	Hi    []float64 // bin upper edges, m
	Depth []float64 // transit depth, fraction
	Sigma []float64 // 1-sigma error of Depth, fraction
	Line  []int     // line of the file each bin came from
	// Notes are remarks a run reports (sorted rows, asymmetric errors
	// averaged).
	Notes []string
}

// Len returns the number of bins.
func (d *Dataset) Len() int { return len(d.Lo) }

// Bins returns the dataset's bins for the forward model.
func (d *Dataset) Bins() forward.Bins {
	return forward.Bins{Lo: append([]float64(nil), d.Lo...), Hi: append([]float64(nil), d.Hi...)}
}

// Where returns "file:line" of bin i, for messages.
func (d *Dataset) Where(i int) string { return fmt.Sprintf("%s:%d", d.Path, d.Line[i]) }

// ReadDataset reads an observation file (see the format above). The name
// is the file's base name without its extension.
func ReadDataset(path string) (*Dataset, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("observations: %w", err)
	}
	defer f.Close()
	name := strings.TrimSuffix(filepath.Base(path), filepath.Ext(path))
	return ParseDataset(f, path, name)
}

type column int

const (
	colCentre column = iota
	colWidth
	colLow
	colHigh
	colDepth
	colError
	colErrPlus
	colErrMinus
	nColumns
)

var wavelengthUnits = map[string]float64{"um": forward.Micron, "nm": 1e-9}

// depthKinds are the depth columns and their conversion to a fraction
// (radius_ratio is squared instead).
var depthKinds = map[string]float64{"depth": 1, "depth_ppm": 1e-6, "depth_percent": 1e-2, "radius_ratio": 0}

// columnNames lists the names the header may use, for messages.
const columnNames = "wavelength_um/_nm with width_um/_nm, or edge_low_um/_nm with edge_high_um/_nm; " +
	"one of depth, depth_ppm, depth_percent, radius_ratio; error, or error_plus with error_minus"

type header struct {
	csv    bool
	n      int               // number of columns
	idx    [nColumns]int     // column index of each quantity, -1 if absent
	scale  [nColumns]float64 // wavelength factors to m
	depth  string            // name of the depth column
	factor float64           // depth factor to fraction (0 for radius_ratio)
	// errUnit is the unit suffix of the error columns ("" when none) and
	// errCol one such column, for messages.
	errUnit, errCol string
}

func parseHeader(line string) (*header, error) {
	h := &header{csv: strings.Contains(line, ",")}
	for i := range h.idx {
		h.idx[i] = -1
	}
	fields := splitFields(line, h.csv)
	h.n = len(fields)
	set := func(c column, i int, name string) error {
		if h.idx[c] >= 0 {
			return fmt.Errorf("column %q given twice (or with two units)", name)
		}
		h.idx[c] = i
		return nil
	}
	for i, f := range fields {
		name := strings.ToLower(f)
		var err error
		switch {
		case name == "":
			err = fmt.Errorf("column %d has no name", i+1)
		case depthKinds[name] != 0 || name == "radius_ratio":
			if h.depth != "" {
				err = fmt.Errorf("two depth columns, %q and %q; give one", h.depth, name)
				break
			}
			h.depth, h.factor = name, depthKinds[name]
			err = set(colDepth, i, name)
		case strings.HasPrefix(name, "error"):
			base, unit := name, ""
			for _, u := range []string{"_ppm", "_percent"} {
				if strings.HasSuffix(name, u) {
					base, unit = strings.TrimSuffix(name, u), u[1:]
				}
			}
			c, ok := map[string]column{"error": colError, "error_plus": colErrPlus, "error_minus": colErrMinus}[base]
			if !ok {
				err = fmt.Errorf("unknown column %q (known: %s)", f, columnNames)
				break
			}
			if unit != "" {
				if h.errUnit != "" && h.errUnit != unit {
					err = fmt.Errorf("error columns in two units, %s and %s", h.errUnit, unit)
					break
				}
				h.errUnit, h.errCol = unit, f
			}
			err = set(c, i, name)
		default:
			base, unit, ok := cutLast(name, "_")
			factor, known := wavelengthUnits[unit]
			var c column
			switch base {
			case "wavelength":
				c = colCentre
			case "width":
				c = colWidth
			case "edge_low":
				c = colLow
			case "edge_high":
				c = colHigh
			default:
				ok = false
			}
			if !ok {
				err = fmt.Errorf("unknown column %q (known: %s)", f, columnNames)
				break
			}
			if !known {
				err = fmt.Errorf("column %q: unknown wavelength unit %q (um or nm)", f, unit)
				break
			}
			h.scale[c] = factor
			err = set(c, i, base)
		}
		if err != nil {
			return nil, err
		}
	}
	centre := h.idx[colCentre] >= 0 || h.idx[colWidth] >= 0
	edges := h.idx[colLow] >= 0 || h.idx[colHigh] >= 0
	switch {
	case centre && edges:
		return nil, errors.New("give bins either as wavelength and width or as edge_low and edge_high, not both")
	case centre && (h.idx[colCentre] < 0 || h.idx[colWidth] < 0):
		return nil, errors.New("a wavelength column needs a width column (full bin width) and the other way round")
	case edges && (h.idx[colLow] < 0 || h.idx[colHigh] < 0):
		return nil, errors.New("edge_low and edge_high columns come together")
	case !centre && !edges:
		return nil, fmt.Errorf("no wavelength columns (%s)", columnNames)
	}
	if h.depth == "" {
		return nil, errors.New("no depth column (depth, depth_ppm, depth_percent or radius_ratio)")
	}
	if want := strings.TrimPrefix(strings.TrimPrefix(h.depth, "depth"), "_"); h.errUnit != "" && h.errUnit != want {
		return nil, fmt.Errorf("column %q: errors are in the unit of the depth column %q; write %q or plain \"error\"", h.errCol, h.depth, errName(h.errCol, want))
	}
	sym, plus, minus := h.idx[colError] >= 0, h.idx[colErrPlus] >= 0, h.idx[colErrMinus] >= 0
	switch {
	case sym && (plus || minus):
		return nil, errors.New("give either an error column or error_plus and error_minus, not both")
	case plus != minus:
		return nil, errors.New("error_plus and error_minus come together")
	case !sym && !plus:
		return nil, errors.New("no error column (error, or error_plus and error_minus)")
	}
	return h, nil
}

// errName returns the error column name col with the unit suffix unit.
func errName(col, unit string) string {
	base := strings.TrimSuffix(strings.TrimSuffix(strings.ToLower(col), "_ppm"), "_percent")
	if unit == "" || unit == "ratio" {
		return base
	}
	return base + "_" + unit
}

func cutLast(s, sep string) (before, after string, ok bool) {
	i := strings.LastIndex(s, sep)
	if i < 0 {
		return s, "", false
	}
	return s[:i], s[i+len(sep):], true
}

func splitFields(line string, csv bool) []string {
	if !csv {
		return strings.Fields(line)
	}
	f := strings.Split(line, ",")
	for i := range f {
		f[i] = strings.TrimSpace(f[i])
	}
	return f
}

// ParseDataset reads an observation table from r; path is used in
// messages and kept in Dataset.Path.
func ParseDataset(r io.Reader, path, name string) (*Dataset, error) {
	d := &Dataset{Name: name, Path: path}
	r, err := textReader(r, path)
	if err != nil {
		return nil, err
	}
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 64*1024), 1<<20)
	var h *header
	line := 0
	asym := 0
	vals := make([]float64, 0, 8)
	for sc.Scan() {
		line++
		text := sc.Text()
		if line == 1 {
			text = strings.TrimPrefix(text, "\ufeff") // a UTF-8 byte-order mark
		}
		text = strings.TrimSpace(text)
		if text == "" || text[0] == '#' {
			continue
		}
		where := fmt.Sprintf("%s:%d", path, line)
		if h == nil {
			var err error
			if h, err = parseHeader(text); err != nil {
				if _, numErr := strconv.ParseFloat(splitFields(text, strings.Contains(text, ","))[0], 64); numErr == nil {
					return nil, fmt.Errorf("%s: the first line that is not a comment must be a header naming the columns (%s)", where, columnNames)
				}
				return nil, fmt.Errorf("%s: header: %w", where, err)
			}
			continue
		}
		b, err := h.row(splitFields(text, h.csv), vals, where)
		if err != nil {
			return nil, err
		}
		if b.asym {
			asym++
		}
		d.Lo, d.Hi = append(d.Lo, b.lo), append(d.Hi, b.hi)
		d.Depth, d.Sigma = append(d.Depth, b.depth), append(d.Sigma, b.sig)
		d.Line = append(d.Line, line)
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("%s:%d: %w", path, line+1, err)
	}
	if h == nil {
		return nil, fmt.Errorf("%s: no header and no data", path)
	}
	if d.Len() == 0 {
		return nil, fmt.Errorf("%s: header but no data rows", path)
	}
	return d, d.finish(asym)
}

// bin is one row of an observation table.
type bin struct {
	lo, hi, depth, sig float64 // edges (m), depth and error (fractions)
	asym               bool    // error_plus and error_minus differed
}

// row converts the fields of one data row (where is its file:line) to a
// bin; vals is a buffer for the numbers.
func (h *header) row(fields []string, vals []float64, where string) (bin, error) {
	var b bin
	if len(fields) != h.n {
		return bin{}, fmt.Errorf("%s: %d fields, the header names %d", where, len(fields), h.n)
	}
	vals = vals[:0]
	for i, f := range fields {
		v, err := strconv.ParseFloat(f, 64)
		if err != nil {
			return bin{}, fmt.Errorf("%s: column %d: %q is not a number", where, i+1, f)
		}
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return bin{}, fmt.Errorf("%s: column %d: %s is not a finite number", where, i+1, f)
		}
		vals = append(vals, v)
	}
	get := func(c column) float64 { return vals[h.idx[c]] }
	if h.idx[colCentre] >= 0 {
		c, w := get(colCentre)*h.scale[colCentre], get(colWidth)*h.scale[colWidth]
		if !(c > 0) {
			return bin{}, fmt.Errorf("%s: wavelength %g must be positive", where, get(colCentre))
		}
		if !(w > 0) {
			return bin{}, fmt.Errorf("%s: bin width %g must be positive", where, get(colWidth))
		}
		b.lo, b.hi = c-w/2, c+w/2
		if !(b.lo > 0) {
			return bin{}, fmt.Errorf("%s: bin of width %g around %g reaches below zero wavelength", where, get(colWidth), get(colCentre))
		}
	} else {
		b.lo, b.hi = get(colLow)*h.scale[colLow], get(colHigh)*h.scale[colHigh]
		if !(b.lo > 0) {
			return bin{}, fmt.Errorf("%s: edge_low %g must be positive", where, get(colLow))
		}
		if !(b.hi > b.lo) {
			return bin{}, fmt.Errorf("%s: edge_high %g must be above edge_low %g", where, get(colHigh), get(colLow))
		}
	}
	if h.idx[colError] >= 0 {
		b.sig = get(colError)
		if !(b.sig > 0) {
			return bin{}, fmt.Errorf("%s: error %g must be positive", where, b.sig)
		}
	} else {
		p, m := get(colErrPlus), get(colErrMinus)
		if !(p > 0) || !(m > 0) {
			return bin{}, fmt.Errorf("%s: error_plus %g and error_minus %g must both be positive (magnitudes)", where, p, m)
		}
		b.asym = p != m
		b.sig = 0.5 * (p + m)
	}
	v := get(colDepth)
	if h.factor == 0 { // radius_ratio
		if v < 0 {
			return bin{}, fmt.Errorf("%s: radius_ratio %g must not be negative", where, v)
		}
		b.depth, b.sig = v*v, 2*v*b.sig
		if !(b.sig > 0) {
			return bin{}, fmt.Errorf("%s: radius_ratio 0 gives a depth error of 0; the error cannot be propagated", where)
		}
	} else {
		b.depth, b.sig = v*h.factor, b.sig*h.factor
	}
	if !(b.depth >= 0 && b.depth < 1) {
		return bin{}, fmt.Errorf("%s: %s %g is a transit depth of %.6g, outside [0, 1)", where, h.depth, v, b.depth)
	}
	if err := checkErrorPPM(b.sig * 1e6); err != nil {
		return bin{}, fmt.Errorf("%s: %s %g: %w", where, h.errorColumn(), h.errorValue(vals), err)
	}
	return b, nil
}

// The physical range of a transit-depth error (1 sigma, ppm of the
// stellar flux): a depth is a fraction of the star's light, so an error
// above 1e6 ppm (the whole star) says nothing, and no photometer comes
// within orders of magnitude of 1e-3 ppm (the best transit depths are
// measured to a few ppm; fact of the trade). Values outside are unit
// slips or placeholders (1e300, 1e-300), and are refused.
const (
	MinErrorPPM = 1e-3
	MaxErrorPPM = 1e6
)

// checkErrorPPM refuses an error (ppm of the stellar flux) outside
// [MinErrorPPM, MaxErrorPPM].
func checkErrorPPM(e float64) error {
	if !(e >= MinErrorPPM && e <= MaxErrorPPM) {
		return fmt.Errorf("a transit-depth error of %.3g ppm is outside the physical range %g to %g ppm (check the column's unit)", e, MinErrorPPM, float64(MaxErrorPPM))
	}
	return nil
}

// errorColumn names the error column(s) of the header, for messages.
func (h *header) errorColumn() string {
	if h.idx[colError] >= 0 {
		return "error"
	}
	return "mean of error_plus and error_minus"
}

// errorValue is the error of a row as written in the file.
func (h *header) errorValue(vals []float64) float64 {
	if h.idx[colError] >= 0 {
		return vals[h.idx[colError]]
	}
	return 0.5 * (vals[h.idx[colErrPlus]] + vals[h.idx[colErrMinus]])
}

// finish notes asymmetric errors (asym rows), sorts the bins by
// wavelength and rejects duplicated or overlapping bins.
func (d *Dataset) finish(asym int) error {
	if asym > 0 {
		d.Notes = append(d.Notes, fmt.Sprintf("%s: %d rows have asymmetric errors; the mean of error_plus and error_minus is used as a symmetric Gaussian error", d.Path, asym))
	}
	if !sort.IsSorted(byLow{d}) {
		sort.Stable(byLow{d})
		d.Notes = append(d.Notes, fmt.Sprintf("%s: rows were not in wavelength order and have been sorted", d.Path))
	}
	for i := 1; i < d.Len(); i++ {
		if d.Lo[i] == d.Lo[i-1] && d.Hi[i] == d.Hi[i-1] {
			return fmt.Errorf("%s: duplicated bin %.6g-%.6g um (also on line %d)", d.Where(i), d.Lo[i]/forward.Micron, d.Hi[i]/forward.Micron, d.Line[i-1])
		}
		tol := 1e-6 * math.Min(d.Hi[i]-d.Lo[i], d.Hi[i-1]-d.Lo[i-1])
		if d.Lo[i] < d.Hi[i-1]-tol {
			return fmt.Errorf("%s: bin %.6g-%.6g um overlaps the bin %.6g-%.6g um on line %d",
				d.Where(i), d.Lo[i]/forward.Micron, d.Hi[i]/forward.Micron, d.Lo[i-1]/forward.Micron, d.Hi[i-1]/forward.Micron, d.Line[i-1])
		}
	}
	return nil
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

// CheckCoverage reports the first bin not covered by the model wavelength
// grid wl (m, ascending) or holding fewer than minPoints grid points, with
// its file and line.
func (d *Dataset) CheckCoverage(wl []float64, minPoints int) error {
	lo, hi := wl[0], wl[len(wl)-1]
	for i := range d.Lo {
		if d.Lo[i] < lo || d.Hi[i] > hi {
			return fmt.Errorf("%s: bin %.6g-%.6g um lies outside the model wavelength range %.6g-%.6g um (spectrum.wavelength_min_um, spectrum.wavelength_max_um; the opacity tables must cover it too)",
				d.Where(i), d.Lo[i]/forward.Micron, d.Hi[i]/forward.Micron, lo/forward.Micron, hi/forward.Micron)
		}
		a := sort.SearchFloat64s(wl, d.Lo[i])
		b := sort.Search(len(wl), func(k int) bool { return wl[k] > d.Hi[i] })
		if b-a < minPoints {
			return fmt.Errorf("%s: bin %.6g-%.6g um holds %d model points, need at least %d: raise spectrum.resolving_power or widen the bin",
				d.Where(i), d.Lo[i]/forward.Micron, d.Hi[i]/forward.Micron, b-a, minPoints)
		}
	}
	return nil
}
