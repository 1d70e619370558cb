package obs

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"chord/forward"
)

// Observation files in chord's own table format (read.go reads the other
// formats and mapped columns through the same interpretation).
//
// An observed transmission spectrum is a text table, comma-separated or
// whitespace-separated (decided by the first line that is not a comment: a
// comma in it means CSV). Lines that are blank or whose first non-blank
// character is '#' are comments. The first other line is the header; it
// names the columns, in any order, each name carrying its unit:
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
//	instrument                     optional: splits the file into data sets
//
// The error columns may carry a depth unit of their own (error_ppm with
// depth_percent); they are converted to fractions each by its own unit.
//
// Every other column name is an error. An Rp/Rs error is propagated to
// first order: sigma_D = 2 (Rp/Rs) sigma_(Rp/Rs) (fact of the trade).
//
// Rows are bins. Each must have finite values, positive widths (or
// edge_low < edge_high), an error between MinErrorPPM and MaxErrorPPM
// after conversion, and a depth in [0, 1) after conversion; two bins may not be the same bin or overlap by more than
// the edge tolerance (edges.go: shared edges rounded differently are
// snapped, with a note). Rows not sorted by wavelength are sorted, with a
// note. Every error names the file, line and column.

// Dataset is one observed spectrum, its bins sorted by wavelength.
type Dataset struct {
	Name  string    // label used by parameters (offsets, error inflation) and outputs
	Path  string    // file it was read from
	Lo    []float64 // bin lower edges, m
	Hi    []float64 // bin upper edges, m
	Depth []float64 // transit depth, fraction
	Sigma []float64 // 1-sigma error of Depth, fraction
	Line  []int     // line of the file each bin came from
	// Instrument is the value of the file's instrument column for this
	// data set ("" without one).
	Instrument string
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
	colInstrument
	nColumns
)

// roleOf returns the column role of a quantity of ReadOptions.Columns.
func roleOf(q string) column {
	for i, n := range Quantities {
		if n == q {
			return column(i)
		}
	}
	panic("obs: unknown quantity " + q)
}

// columnNames lists the names the header may use, for messages.
const columnNames = "wavelength_um/_nm with width_um/_nm, or edge_low_um/_nm with edge_high_um/_nm; " +
	"one of depth, depth_ppm, depth_percent, radius_ratio; error, or error_plus with error_minus; optionally instrument"

// header says which column of a file holds what, in which unit.
type header struct {
	n      int               // number of columns
	idx    [nColumns]int     // column index of each quantity, -1 if absent
	label  [nColumns]string  // the column of each quantity, for messages
	scale  [nColumns]float64 // wavelength factors to m (width: to the full width)
	depth  string            // the depth column and its unit, for messages
	factor float64           // depth factor to fraction (0 for Rp/Rs, which is squared)
	// errFactor converts the error columns to fractions of the depth or,
	// for an Rp/Rs depth, to Rp/Rs.
	errFactor float64
	// note is a remark for the data sets' notes: a bare "error" column
	// beside a depth in ppm (chord's layout before error_ppm).
	note string
}

// fromNames finds the quantities of a table by chord's column names,
// recording the unit each name carries in nameUnits; bareDepth reports a
// depth column named plainly "depth" (a fraction unless a unit is stated).
func (h *header) fromNames(t *rawTable, nameUnits []unitSource) (bareDepth bool, err error) {
	set := func(c column, i int, name string) error {
		if h.idx[c] >= 0 {
			return fmt.Errorf("column %q given twice (or with two units)", name)
		}
		h.idx[c] = i
		return nil
	}
	fromName := func(u string) unitSource { return unitSource{unit: u, where: "the column name"} }
	depthName := ""
	for i, f := range t.names {
		name := strings.ToLower(f)
		base, unit, _ := cutLast(name, "_")
		var err error
		switch {
		case name == "":
			err = fmt.Errorf("column %d has no name", i+1)
		case name == "instrument":
			err = set(colInstrument, i, name)
		case name == "depth" || name == "radius_ratio" || base == "depth" && (unit == "ppm" || unit == "percent"):
			if depthName != "" {
				err = fmt.Errorf("two depth columns, %q and %q; give one", depthName, name)
				break
			}
			depthName = name
			switch {
			case name == "radius_ratio":
				nameUnits[i] = fromName(depthUnitRpRs)
			case name == "depth":
				bareDepth = true
			default:
				nameUnits[i] = fromName(unit)
			}
			err = set(colDepth, i, name)
		case strings.HasPrefix(name, "error"):
			b, u := name, ""
			for _, s := range []string{"_ppm", "_percent"} {
				if strings.HasSuffix(name, s) {
					b, u = strings.TrimSuffix(name, s), s[1:]
				}
			}
			c, ok := map[string]column{"error": colError, "error_plus": colErrPlus, "error_minus": colErrMinus}[b]
			if !ok {
				err = fmt.Errorf("unknown column %q (known: %s)", f, columnNames)
				break
			}
			if u != "" {
				nameUnits[i] = fromName(u)
			}
			err = set(c, i, name)
		default:
			c, ok := map[string]column{"wavelength": colCentre, "width": colWidth, "edge_low": colLow, "edge_high": colHigh}[name]
			if !ok {
				c, ok = map[string]column{"wavelength": colCentre, "width": colWidth, "edge_low": colLow, "edge_high": colHigh}[base]
				if !ok {
					err = fmt.Errorf("unknown column %q (known: %s)", f, columnNames)
					break
				}
				if _, _, uerr := wavelengthUnit(unit); uerr != nil {
					err = fmt.Errorf("column %q: unknown wavelength unit %q (um or nm)", f, unit)
					break
				}
				nameUnits[i] = fromName(unit)
			}
			err = set(c, i, name)
		}
		if err != nil {
			if _, numErr := strconv.ParseFloat(t.names[0], 64); numErr == nil {
				return false, fmt.Errorf("%s: the first line that is not a comment must be a header naming the columns (%s), or give the columns by position (columns = {wavelength = 1, ...})", t.whereHeader(), columnNames)
			}
			return false, fmt.Errorf("%s: header: %w", t.whereHeader(), err)
		}
	}
	if e := h.idx[colError]; e >= 0 && strings.EqualFold(t.names[e], "error") && strings.HasSuffix(depthName, "_ppm") {
		h.note = fmt.Sprintf("%s: column %q takes the unit of %q (ppm); chord writes and documents it as error_ppm (edge_low_um,edge_high_um,depth_ppm,error_ppm), the old spelling error is accepted", t.whereHeader(), t.names[e], depthName)
	}
	return bareDepth, nil
}

// check verifies that the quantities found make bins with depths and
// errors.
func (h *header) check() error {
	has := func(c column) bool { return h.idx[c] >= 0 }
	centre := has(colCentre) || has(colWidth)
	edges := has(colLow) || has(colHigh)
	switch {
	case centre && edges:
		return errors.New("header: give bins either as wavelength and width or as edge_low and edge_high, not both")
	case centre && (!has(colCentre) || !has(colWidth)):
		return errors.New("header: a wavelength column needs a width column (full bin width) and the other way round")
	case edges && (!has(colLow) || !has(colHigh)):
		return errors.New("header: edge_low and edge_high columns come together")
	case !centre && !edges:
		return fmt.Errorf("header: no wavelength columns (%s)", columnNames)
	case !has(colDepth):
		return errors.New("header: no depth column (depth, depth_ppm, depth_percent or radius_ratio)")
	}
	sym, plus, minus := has(colError), has(colErrPlus), has(colErrMinus)
	switch {
	case sym && (plus || minus):
		return errors.New("header: give either an error column or error_plus and error_minus, not both")
	case plus != minus:
		return errors.New("header: error_plus and error_minus come together")
	case !sym && !plus:
		return errors.New("header: no error column (error, or error_plus and error_minus)")
	}
	return nil
}

// setUnits finds the unit of every quantity from the column names
// (nameUnits), the file and the options, and checks declared types.
func (h *header) setUnits(t *rawTable, opt *ReadOptions, nameUnits []unitSource, bareDepth bool) error {
	key := func(name, u string) unitSource {
		if u == "" {
			return unitSource{}
		}
		return unitSource{unit: u, where: name + " = " + strconv.Quote(u)}
	}
	for c := colCentre; c < nColumns; c++ {
		i := h.idx[c]
		if i < 0 {
			continue
		}
		if c != colInstrument && t.types != nil && t.types[i] != "" && !t.numeric(t.types[i]) {
			return fmt.Errorf("%s: %s is declared %q; %s is a number", t.whereHeader(), t.label(i), t.types[i], Quantities[c])
		}
	}
	for _, c := range []column{colCentre, colWidth, colLow, colHigh} {
		i := h.idx[c]
		if i < 0 {
			continue
		}
		u, ok, err := agreeingUnit([]unitSource{nameUnits[i], t.units[i], key("wavelength_unit", opt.WavelengthUnit)}, canonWavelength)
		if err != nil {
			return fmt.Errorf("%s: %s: %w", t.path, t.label(i), err)
		}
		if !ok {
			return fmt.Errorf("%s: %s: the file states no wavelength unit; give wavelength_unit (um, nm or angstrom)", t.path, t.label(i))
		}
		h.scale[c], _, _ = wavelengthUnit(u)
	}
	if opt.Width == "half" {
		h.scale[colWidth] *= 2
	}
	i := h.idx[colDepth]
	du, ok, err := agreeingUnit([]unitSource{nameUnits[i], t.units[i], key("depth_unit", opt.DepthUnit)}, canonDepth)
	if err != nil {
		return fmt.Errorf("%s: %s: %w", t.path, t.label(i), err)
	}
	if !ok {
		if !bareDepth {
			return fmt.Errorf("%s: %s: the file states no unit for the transit depth; give depth_unit (fraction, ppm, percent or rp_rs)", t.path, t.label(i))
		}
		du = "fraction"
	}
	h.factor, _, _ = depthUnit(du)
	h.depth = fmt.Sprintf("%s in %s", t.label(i), du)
	h.errFactor = h.factor
	if du == depthUnitRpRs {
		h.errFactor = 1
	}
	var errUnit string
	for _, c := range []column{colError, colErrPlus, colErrMinus} {
		j := h.idx[c]
		if j < 0 {
			continue
		}
		eu, ok, err := agreeingUnit([]unitSource{nameUnits[j], t.units[j]}, canonDepth)
		if err != nil {
			return fmt.Errorf("%s: %s: %w", t.path, t.label(j), err)
		}
		if !ok {
			continue // in the depth's unit
		}
		if errUnit != "" && eu != errUnit {
			return fmt.Errorf("%s: %s: the error columns are in two units, %s and %s", t.path, t.label(j), errUnit, eu)
		}
		errUnit = eu
		switch {
		case du == depthUnitRpRs && eu != "fraction" && eu != depthUnitRpRs:
			return fmt.Errorf("%s: %s: errors in %s for a depth given as Rp/Rs; give them as Rp/Rs", t.path, t.label(j), eu)
		case du != depthUnitRpRs && eu == depthUnitRpRs:
			return fmt.Errorf("%s: %s: errors as Rp/Rs for a depth in %s; give them in a depth unit", t.path, t.label(j), du)
		case du != depthUnitRpRs:
			h.errFactor, _, _ = depthUnit(eu)
		}
	}
	return nil
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

// parseTable reads chord's table format from lines: CSV or whitespace
// separated (a comma in the first line that is not a comment means CSV),
// '#' comments, a header naming the columns unless headerless.
func parseTable(lines []string, path string, headerless bool) (*rawTable, error) {
	t := &rawTable{path: path, format: FormatTable}
	csv := false
	first := true
	for k, text := range lines {
		line := k + 1
		text = strings.TrimSpace(text)
		if text == "" || text[0] == '#' {
			continue
		}
		where := t.where(line)
		if first {
			first = false
			csv = strings.Contains(text, ",")
			if !headerless {
				t.names = splitFields(text, csv)
				t.ncol, t.headerLine = len(t.names), line
				t.units = make([]unitSource, t.ncol)
				continue
			}
			t.ncol = len(splitFields(text, csv))
			t.units = make([]unitSource, t.ncol)
		}
		f := splitFields(text, csv)
		if len(f) != t.ncol {
			if headerless {
				return nil, fmt.Errorf("%s: %d fields, the first row has %d", where, len(f), t.ncol)
			}
			return nil, fmt.Errorf("%s: %d fields, the header names %d", where, len(f), t.ncol)
		}
		t.rows = append(t.rows, rawRow{line: line, fields: f})
	}
	if first {
		return nil, fmt.Errorf("%s: no header and no data", path)
	}
	return t, nil
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
	vals = vals[:0]
	for c := colCentre; c < colInstrument; c++ {
		i := h.idx[c]
		if i < 0 {
			vals = append(vals, 0)
			continue
		}
		f := fields[i]
		if f == "" {
			return bin{}, fmt.Errorf("%s: %s: no value (empty or null); expected the %s as a number", where, h.label[c], Quantities[c])
		}
		v, err := strconv.ParseFloat(f, 64)
		if err != nil {
			return bin{}, fmt.Errorf("%s: %s: %q is not a number; expected the %s", where, h.label[c], f, Quantities[c])
		}
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return bin{}, fmt.Errorf("%s: %s: %s is not a finite number; expected the %s", where, h.label[c], f, Quantities[c])
		}
		vals = append(vals, v)
	}
	get := func(c column) float64 { return vals[c] }
	if h.idx[colCentre] >= 0 {
		c, w := get(colCentre)*h.scale[colCentre], get(colWidth)*h.scale[colWidth]
		if !(c > 0) {
			return bin{}, fmt.Errorf("%s: %s: wavelength %g must be positive", where, h.label[colCentre], get(colCentre))
		}
		if !(w > 0) {
			return bin{}, fmt.Errorf("%s: %s: bin width %g must be positive", where, h.label[colWidth], get(colWidth))
		}
		b.lo, b.hi = c-w/2, c+w/2
		if !(b.lo > 0) {
			return bin{}, fmt.Errorf("%s: %s: bin of width %g around %g reaches below zero wavelength", where, h.label[colWidth], get(colWidth), get(colCentre))
		}
	} else {
		b.lo, b.hi = get(colLow)*h.scale[colLow], get(colHigh)*h.scale[colHigh]
		if !(b.lo > 0) {
			return bin{}, fmt.Errorf("%s: %s: edge_low %g must be positive", where, h.label[colLow], get(colLow))
		}
		if !(b.hi > b.lo) {
			return bin{}, fmt.Errorf("%s: %s: edge_high %g must be above edge_low %g", where, h.label[colHigh], get(colHigh), get(colLow))
		}
	}
	if h.idx[colError] >= 0 {
		b.sig = get(colError)
		if !(b.sig > 0) {
			return bin{}, fmt.Errorf("%s: %s: error %g must be positive", where, h.label[colError], b.sig)
		}
	} else {
		p, m := get(colErrPlus), get(colErrMinus)
		if !(p > 0) || !(m > 0) {
			return bin{}, fmt.Errorf("%s: %s, %s: error_plus %g and error_minus %g must both be positive (magnitudes)", where, h.label[colErrPlus], h.label[colErrMinus], p, m)
		}
		b.asym = p != m
		b.sig = 0.5 * (p + m)
	}
	v := get(colDepth)
	if h.factor == 0 { // Rp/Rs
		if v < 0 {
			return bin{}, fmt.Errorf("%s: %s: radius_ratio %g must not be negative", where, h.label[colDepth], v)
		}
		b.depth, b.sig = v*v, 2*v*b.sig*h.errFactor
		if !(b.sig > 0) {
			return bin{}, fmt.Errorf("%s: %s: radius_ratio 0 gives a depth error of 0; the error cannot be propagated", where, h.label[colDepth])
		}
	} else {
		b.depth, b.sig = v*h.factor, b.sig*h.errFactor
	}
	if !(b.depth >= 0 && b.depth < 1) {
		return bin{}, fmt.Errorf("%s: %s: %g is a transit depth of %.6g, outside [0, 1)", where, h.depth, v, b.depth)
	}
	if err := checkErrorPPM(b.sig * 1e6); err != nil {
		col := h.label[colError]
		if h.idx[colError] < 0 {
			col = h.label[colErrPlus] + ", " + h.label[colErrMinus]
		}
		return bin{}, fmt.Errorf("%s: %s: %w", where, col, err)
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
