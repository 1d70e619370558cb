package obs

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
)

// Reading observation files in the formats people have.
//
// Three formats are read (ReadOptions.Format, or recognised by content):
//
//	table  CSV or whitespace-separated text, '#' comments, a header line
//	       naming the columns (or none: columns by position)
//	ipac   the IPAC table format of the infrared and exoplanet archives:
//	       '\' keyword and comment lines, then '|'-delimited header lines
//	       (names, types, units, null values), then fixed-width rows
//	ecsv   astropy's Enhanced CSV: a '# %ECSV' line and a YAML header
//	       (column names, types, units, delimiter), then the rows
//
// A file is ecsv when its first line starts with "# %ECSV", ipac when its
// first non-blank line starts with '\' or '|', and table otherwise.
//
// Columns are found by chord's own names (see the format notes of
// dataset.go: wavelength_um, depth_ppm, error, ...), or, with
// ReadOptions.Columns, by the names the file uses (or, for a table
// without a header, by position). With a mapping only the mapped columns
// are read and the others are ignored; without one, every column must be
// one of chord's names.
//
// Units come from the file where it states them (an IPAC units line, the
// unit of an ECSV column, or chord's name suffix such as _um), from the
// keys wavelength_unit and depth_unit otherwise; a file and a key that
// state different units are an error. Error columns are in the depth's
// unit unless the file states theirs.
//
// An instrument column splits the file into data sets, one per distinct
// value, in order of first appearance; each is named <name>_<value>
// (characters other than letters, digits and '_' become '_'), <name>
// being the name given or the file's (DefaultName).

// Format names.
const (
	FormatTable = "table"
	FormatIPAC  = "ipac"
	FormatECSV  = "ecsv"
)

// Quantities a column can hold (the keys of ReadOptions.Columns).
var Quantities = []string{"wavelength", "width", "edge_low", "edge_high", "depth", "error", "error_plus", "error_minus", "instrument"}

// DefaultEdgeTolerance is the default ReadOptions.EdgeTolerance: shared
// edges of neighbouring bins that differ by up to 1% of the narrower bin's
// width are taken as one edge rounded differently in two rows. Centres and
// widths published to 4 decimals (um) on bins a few hundredths of a micron
// wide differ by up to about 0.3% of a width; bins that overlap on
// purpose (running averages) overlap by tens of percent.
const DefaultEdgeTolerance = 0.01

// maxFileSize is the largest observation file read (observation tables
// are small; anything larger is not one).
const maxFileSize = 64 << 20

// Column is a column of a file: by Name, or by 1-based Position in a file
// without a header.
type Column struct {
	Name     string
	Position int
}

func (c Column) String() string {
	if c.Position > 0 {
		return strconv.Itoa(c.Position)
	}
	return strconv.Quote(c.Name)
}

// ReadOptions say how to read an observation file whose columns are not
// named as chord names them. The zero value reads chord's own table format.
type ReadOptions struct {
	// Name names the data sets read (see Read); "" means the file's base
	// name without its extension.
	Name string
	// Format is FormatTable, FormatIPAC or FormatECSV; "" recognises it
	// by content.
	Format string
	// Columns maps quantities (Quantities) to the file's columns.
	Columns map[string]Column
	// WavelengthUnit and DepthUnit give the units the file does not state
	// (see units.go); "" for none.
	WavelengthUnit, DepthUnit string
	// Width is "full" (the default, for "") or "half": what the width
	// column holds.
	Width string
	// EdgeTolerance is the largest difference between the shared edge of
	// neighbouring bins, as a fraction of the narrower bin's width, that
	// is taken as rounding: such edges are set to their midpoint, with a
	// note. 0 means DefaultEdgeTolerance.
	EdgeTolerance float64
}

// headerless reports whether the options map columns by position.
func (o *ReadOptions) headerless() bool {
	for _, c := range o.Columns {
		if c.Position > 0 {
			return true
		}
	}
	return false
}

// OptionError is an error in ReadOptions: Key names the option as a key of
// an [[observations]] table ("columns.depth", "depth_unit").
type OptionError struct {
	Key, Msg string
}

func (e *OptionError) Error() string { return e.Key + ": " + e.Msg }

func optErr(key, format string, a ...any) error {
	return &OptionError{Key: key, Msg: fmt.Sprintf(format, a...)}
}

// Check validates the options; errors are OptionErrors.
func (o *ReadOptions) Check() error {
	switch o.Format {
	case "", FormatTable, FormatIPAC, FormatECSV:
	default:
		return optErr("format", "unknown format %q (table, ipac or ecsv)", o.Format)
	}
	byPos, byName := false, false
	keys := make([]string, 0, len(o.Columns))
	for k := range o.Columns {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	seen := map[Column]string{}
	for _, k := range keys {
		c := o.Columns[k]
		if !slices.Contains(Quantities, k) {
			return optErr("columns."+k, "unknown quantity (known: %s)", strings.Join(Quantities, ", "))
		}
		switch {
		case c.Position > 0 && c.Name == "":
			byPos = true
		case c.Position == 0 && c.Name != "":
			byName = true
		default:
			return optErr("columns."+k, "give a column name or a position from 1")
		}
		if other, dup := seen[c]; dup {
			return optErr("columns."+k, "column %s is also columns.%s", c, other)
		}
		seen[c] = k
	}
	if byPos && byName {
		return optErr("columns", "give every column by name (a file with a header) or every column by position (a file without one), not a mix")
	}
	if byPos && (o.Format == FormatIPAC || o.Format == FormatECSV) {
		return optErr("columns", "%s files name their columns; map them by name", o.Format)
	}
	if o.WavelengthUnit != "" {
		if _, _, err := wavelengthUnit(o.WavelengthUnit); err != nil {
			return optErr("wavelength_unit", "%v", err)
		}
	}
	if o.DepthUnit != "" {
		if _, _, err := depthUnit(o.DepthUnit); err != nil {
			return optErr("depth_unit", "%v", err)
		}
	}
	switch o.Width {
	case "", "full", "half":
	default:
		return optErr("width", "%q: the width column holds the \"full\" or the \"half\" width of a bin", o.Width)
	}
	if o.EdgeTolerance < 0 || o.EdgeTolerance >= 0.5 || o.EdgeTolerance != o.EdgeTolerance {
		return optErr("edge_tolerance", "%g: a fraction of a bin's width, from 0 to below 0.5", o.EdgeTolerance)
	}
	return nil
}

// Read reads the observation file at path: one data set, or one per
// instrument with an instrument column. The data sets are named
// opt.Name, or DefaultName(path).
func Read(path string, opt ReadOptions) ([]*Dataset, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("observations: %w", err)
	}
	defer f.Close()
	return Parse(f, path, DefaultName(path), opt)
}

// ReadDataset reads an observation file holding one data set, in chord's
// table format or another with chord's column names.
func ReadDataset(path string) (*Dataset, error) {
	ds, err := Read(path, ReadOptions{})
	if err != nil {
		return nil, err
	}
	return single(ds, path)
}

// ParseDataset reads one data set from r, as ReadDataset does; path is
// used in messages and kept in Dataset.Path.
func ParseDataset(r io.Reader, path, name string) (*Dataset, error) {
	ds, err := Parse(r, path, name, ReadOptions{})
	if err != nil {
		return nil, err
	}
	return single(ds, path)
}

func single(ds []*Dataset, path string) (*Dataset, error) {
	if len(ds) != 1 {
		return nil, fmt.Errorf("%s: %d data sets (an instrument column); expected one", path, len(ds))
	}
	return ds[0], nil
}

// DefaultName is the name of the data set of the file at path when none is
// given: its base name without extension, characters other than letters,
// digits and '_' replaced by '_', and "d_" put before a name that does not
// begin with a letter (data set names appear in parameter and column
// names).
func DefaultName(path string) string {
	n := sanitize(strings.TrimSuffix(filepath.Base(path), filepath.Ext(path)))
	if c := n[0]; !('a' <= c && c <= 'z' || 'A' <= c && c <= 'Z') {
		n = "d_" + n
	}
	return n
}

// Parse reads an observation file from r (see Read); path is used in
// messages and kept in Dataset.Path, name names the data sets unless
// opt.Name does.
func Parse(r io.Reader, path, name string, opt ReadOptions) ([]*Dataset, error) {
	if opt.Name != "" {
		name = opt.Name
	}
	if err := opt.Check(); err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	data, err := io.ReadAll(io.LimitReader(r, maxFileSize+1))
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	if len(data) > maxFileSize {
		return nil, fmt.Errorf("%s: larger than %d MiB: not an observation table", path, maxFileSize>>20)
	}
	if err := checkEncoding(data); err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	data = bytes.TrimPrefix(data, []byte("\ufeff")) // a UTF-8 byte-order mark
	lines := strings.Split(string(data), "\n")
	for i, l := range lines {
		lines[i] = strings.TrimSuffix(l, "\r")
	}
	format := opt.Format
	if format == "" {
		format = detectFormat(lines)
	}
	var t *rawTable
	switch format {
	case FormatIPAC:
		t, err = parseIPAC(lines, path)
	case FormatECSV:
		t, err = parseECSV(lines, path)
	default:
		t, err = parseTable(lines, path, opt.headerless())
	}
	if err != nil {
		return nil, err
	}
	h, err := t.header(&opt)
	if err != nil {
		return nil, err
	}
	return t.datasets(h, name, &opt)
}

// checkEncoding rejects files that are not text in UTF-8 (or ASCII).
func checkEncoding(data []byte) error {
	switch {
	case bytes.HasPrefix(data, []byte{0xff, 0xfe}), bytes.HasPrefix(data, []byte{0xfe, 0xff}):
		return errors.New("the file is encoded in UTF-16 (it starts with a UTF-16 byte-order mark); save it as UTF-8 or ASCII text")
	case bytes.IndexByte(data, 0) >= 0:
		return errors.New("the file holds NUL bytes: it is binary or UTF-16, not a text table; save it as UTF-8 or ASCII text")
	}
	return nil
}

func detectFormat(lines []string) string {
	if len(lines) > 0 && strings.HasPrefix(lines[0], "# %ECSV") {
		return FormatECSV
	}
	for _, l := range lines {
		l = strings.TrimSpace(l)
		if l == "" {
			continue
		}
		if l[0] == '\\' || l[0] == '|' {
			return FormatIPAC
		}
		break
	}
	return FormatTable
}

// rawTable is a file's table before its columns are interpreted: names,
// the units and types the file states, and the rows as text. A null or
// missing value is an empty field.
type rawTable struct {
	path       string
	format     string
	names      []string     // column names; nil without a header
	units      []unitSource // per column, the unit the file states (where == "" when none)
	types      []string     // per column, the declared data type ("" when none)
	numeric    func(typ string) bool
	headerLine int // line of the column names (0 without a header)
	ncol       int
	rows       []rawRow
}

type rawRow struct {
	line   int
	fields []string
}

// where returns "path:line".
func (t *rawTable) where(line int) string { return fmt.Sprintf("%s:%d", t.path, line) }

// label names column i (0-based) for messages: `column 3 ("wv_center")`.
func (t *rawTable) label(i int) string {
	if t.names != nil {
		return fmt.Sprintf("column %d (%s)", i+1, t.names[i])
	}
	return fmt.Sprintf("column %d", i+1)
}

// header interprets the table's columns: which holds what, in which unit.
func (t *rawTable) header(opt *ReadOptions) (*header, error) {
	h := &header{n: t.ncol}
	for i := range h.idx {
		h.idx[i] = -1
	}
	nameUnits := make([]unitSource, t.ncol)
	bareDepth := false
	if len(opt.Columns) > 0 {
		for _, q := range Quantities {
			c, ok := opt.Columns[q]
			if !ok {
				continue
			}
			i, err := t.find(c, q)
			if err != nil {
				return nil, err
			}
			h.idx[roleOf(q)] = i
		}
	} else {
		if t.names == nil {
			return nil, fmt.Errorf("%s: no column names: give the columns by position (columns = {wavelength = 1, ...})", t.path)
		}
		var err error
		if bareDepth, err = h.fromNames(t, nameUnits); err != nil {
			return nil, err
		}
	}
	if err := h.check(); err != nil {
		return nil, fmt.Errorf("%s: %w", t.whereHeader(), err)
	}
	if err := h.setUnits(t, opt, nameUnits, bareDepth); err != nil {
		return nil, err
	}
	for r := range h.idx {
		if h.idx[r] >= 0 {
			h.label[r] = t.label(h.idx[r])
		}
	}
	return h, nil
}

// whereHeader is "path:line" of the column names, or the path.
func (t *rawTable) whereHeader() string {
	if t.headerLine > 0 {
		return t.where(t.headerLine)
	}
	return t.path
}

// find returns the index of column c, which the option columns.q names.
func (t *rawTable) find(c Column, q string) (int, error) {
	if c.Position > 0 {
		if c.Position > t.ncol {
			return 0, fmt.Errorf("%s: columns.%s = %d: the rows have %d columns", t.path, q, c.Position, t.ncol)
		}
		return c.Position - 1, nil
	}
	if i := slices.Index(t.names, c.Name); i >= 0 {
		return i, nil
	}
	for i, n := range t.names { // a name differing in case only
		if strings.EqualFold(n, c.Name) {
			return i, nil
		}
	}
	return 0, fmt.Errorf("%s: columns.%s = %q: no such column (the file's columns: %s)", t.whereHeader(), q, c.Name, strings.Join(t.names, ", "))
}

// datasets converts the rows to data sets, split by the instrument column
// if there is one.
func (t *rawTable) datasets(h *header, name string, opt *ReadOptions) ([]*Dataset, error) {
	if len(t.rows) == 0 {
		if t.headerLine > 0 {
			return nil, fmt.Errorf("%s: header but no data rows", t.path)
		}
		return nil, fmt.Errorf("%s: no header and no data", t.path)
	}
	type group struct {
		d    *Dataset
		asym int
	}
	var groups []*group
	byInst := map[string]*group{}
	names := map[string]string{}
	ins := h.idx[colInstrument]
	vals := make([]float64, 0, 8)
	for _, row := range t.rows {
		where := t.where(row.line)
		key := ""
		if ins >= 0 {
			if key = row.fields[ins]; key == "" {
				return nil, fmt.Errorf("%s: %s: no instrument given (empty or null); every row needs one", where, h.label[colInstrument])
			}
		}
		g := byInst[key]
		if g == nil {
			dsName := name
			if ins >= 0 {
				dsName = name + "_" + sanitize(key)
				if other, dup := names[dsName]; dup {
					return nil, fmt.Errorf("%s: instruments %q and %q both give the data set name %q; rename one in the file", where, other, key, dsName)
				}
				names[dsName] = key
			}
			g = &group{d: &Dataset{Name: dsName, Path: t.path, Instrument: key}}
			byInst[key] = g
			groups = append(groups, g)
		}
		b, err := h.row(row.fields, vals, where)
		if err != nil {
			return nil, err
		}
		if b.asym {
			g.asym++
		}
		d := g.d
		d.Lo, d.Hi = append(d.Lo, b.lo), append(d.Hi, b.hi)
		d.Depth, d.Sigma = append(d.Depth, b.depth), append(d.Sigma, b.sig)
		d.Line = append(d.Line, row.line)
	}
	tol := opt.EdgeTolerance
	if tol == 0 {
		tol = DefaultEdgeTolerance
	}
	out := make([]*Dataset, len(groups))
	for i, g := range groups {
		if err := g.d.finish(g.asym, tol, ins >= 0); err != nil {
			return nil, err
		}
		out[i] = g.d
	}
	if h.note != "" {
		out[0].Notes = append(out[0].Notes, h.note)
	}
	if ins >= 0 {
		parts := make([]string, len(out))
		for i, d := range out {
			parts[i] = fmt.Sprintf("%s (%q, %d bins)", d.Name, d.Instrument, d.Len())
		}
		out[0].Notes = append(out[0].Notes, fmt.Sprintf("%s: the instrument column splits the file into %d data sets: %s", t.path, len(out), strings.Join(parts, ", ")))
	}
	return out, nil
}

var notNameChar = regexp.MustCompile(`[^A-Za-z0-9_]+`)

// sanitize makes an instrument value usable in a data set name.
func sanitize(s string) string {
	s = strings.Trim(notNameChar.ReplaceAllString(s, "_"), "_")
	if s == "" {
		return "x"
	}
	return s
}
