package hitran

import (
	"bufio"
	"bytes"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"

	"chord/forward/opacity/lbl"
	"chord/internal/compressed"
)

// HITRAN line-list reading.
//
// The layouts accepted, told apart by the first record of a file:
//
//   - the 160-character fixed-width record of HITRAN 2004 and later
//     (Rothman et al. 2005, JQSRT 96, 139, table 1; the 100-character 1996
//     record of Rothman et al. 1998, JQSRT 60, 665 extended): molecule I2,
//     isotopologue I1 (0 means 10, A 11, B 12, ...), wavenumber F12.6,
//     intensity E10.3, Einstein A E10.3, gamma_air F5.4, gamma_self F5.3,
//     E'' F10.4, n_air F4.2, delta_air F8.6, four 15-character quantum-number
//     fields, error and reference codes, line-mixing flag, g' F7.1, g'' F7.1.
//     HITEMP's files (Rothman et al. 2010, JQSRT 111, 2139) use the same
//     record;
//   - the same record followed by comma-separated fields, as HITRAN's
//     planetary-broadening files give per-line H2, He and CO2 parameters
//     (Tan et al. 2022, ApJS 262, 40). The fields are named by the caller
//     (Fields); 18 fields default to PlanetaryFields;
//   - the 127-character record of CDSD-HITEMP (Tashkun & Perevalov 2011,
//     JQSRT 112, 1403): its first 67 characters are the HITRAN fields up to
//     delta_air; the rest (n_self and quantum numbers) is not used;
//   - a tab- or comma-separated table whose first line names its columns
//     with HITRAN's parameter names (HITRANonline's output; NamedColumns);
//   - HITRANonline's tab-separated output without a header, with the nine
//     columns molecule id, nu, S, A, gamma_air, gamma_self, E'', n_air,
//     delta_air (no isotopologue column: the isotopologue is taken as 1,
//     the most abundant). A first line holding only column names that are
//     not HITRAN's is skipped.
//
// Lines are streamed, never read whole; a trailing carriage return (CRLF
// files) is removed before columns are sliced. Blank lines are skipped.
// Files whose names end in .bz2 or .gz are decompressed.

// RecordLen is the length of a HITRAN 2004+ fixed-width record.
const RecordLen = 160

// CDSDRecordLen is the length of a CDSD-HITEMP record.
const CDSDRecordLen = 127

// PlanetaryFields names the 18 comma-separated fields of HITRAN's
// planetary-broadening files for CO and CO2 after each record, in the
// order of their program's output (SOURCES.md, broadening/): gamma, error
// code and reference for He's half-width, then He's exponent, then H2's
// half-width and exponent, then CO2's.
var PlanetaryFields = []string{
	"gamma_He", "err", "ref", "n_He", "err", "ref",
	"gamma_H2", "err", "ref", "n_H2", "err", "ref",
	"gamma_CO2", "err", "ref", "n_CO2", "err", "ref",
}

// LineFilter selects lines while they are read. Its zero value keeps every
// line.
type LineFilter struct {
	NuMin, NuMax float64 // wavenumber range in cm^-1, inclusive; NuMax 0 means no upper limit
	SMin         float64 // minimum intensity at 296 K, cm^-1/(molecule cm^-2); 0 keeps all
	Mol          int     // keep only this HITRAN molecule id; 0 keeps all
	Iso          []int   // keep only these isotopologue numbers; empty keeps all
}

// Keep reports whether l passes the filter.
func (f *LineFilter) Keep(l *lbl.Line) bool {
	if l.Nu < f.NuMin || (f.NuMax > 0 && l.Nu > f.NuMax) || l.S < f.SMin {
		return false
	}
	if f.Mol != 0 && l.Mol != f.Mol {
		return false
	}
	return len(f.Iso) == 0 || slices.Contains(f.Iso, l.Iso)
}

// ReadLineFile reads a HITRAN line-list file (any layout) and returns the
// lines that pass the filter.
func ReadLineFile(path string, f LineFilter) ([]lbl.Line, error) {
	return ReadLineFileFields(path, f, nil)
}

// ReadLineFileFields is ReadLineFile with the names of the comma-separated
// fields that follow each 160-character record (see Fields); nil takes
// the default.
func ReadLineFileFields(path string, f LineFilter, fields []string) ([]lbl.Line, error) {
	fh, err := compressed.Open(path, 1)
	if err != nil {
		return nil, fmt.Errorf("opacity: %w", err)
	}
	defer fh.Close()
	var out []lbl.Line
	err = ScanLines(fh, path, fields, func(l *lbl.Line) error {
		if f.Keep(l) {
			out = append(out, *l)
		}
		return nil
	})
	return out, err
}

// ReadLines reads a HITRAN line list from r; name is used in error messages
// (file name). Every record must parse: a malformed record is an error
// naming the file, the line number and the field. An input without any
// record is an error.
func ReadLines(r io.Reader, name string, f LineFilter) ([]lbl.Line, error) {
	var out []lbl.Line
	err := ScanLines(r, name, nil, func(l *lbl.Line) error {
		if f.Keep(l) {
			out = append(out, *l)
		}
		return nil
	})
	return out, err
}

// Fields names the comma-separated fields after each 160-character
// record, in order: a broadening parameter by its HITRAN name (gamma_B,
// n_B or delta_B for B = H2, He, CO2, H2O), or "err", "ref" or "" for a
// field that is skipped (uncertainty codes, references). Any other name is
// an error.
type Fields []string

// ScanLines reads a HITRAN line list from r in any of the layouts above
// and calls fn with each line in file order (the line is reused: copy it
// to keep it); name is used in errors. fields names the comma-separated
// fields after 160-character records (nil: PlanetaryFields for 18 fields,
// none otherwise). An error from fn stops the scan and is returned.
func ScanLines(r io.Reader, name string, fields []string, fn func(*lbl.Line) error) error {
	br := bufio.NewReaderSize(r, 1<<20)
	var (
		lineNo, records int
		p               parser
	)
	p.fields = fields
	for {
		raw, rerr := br.ReadSlice('\n')
		if rerr == bufio.ErrBufferFull {
			return fmt.Errorf("opacity: %s:%d: line longer than 1 MiB, not a HITRAN line list", name, lineNo+1)
		}
		if rerr != nil && rerr != io.EOF {
			return fmt.Errorf("opacity: %s: %w", name, rerr)
		}
		if len(raw) > 0 {
			lineNo++
			rec := bytes.TrimSuffix(bytes.TrimSuffix(raw, []byte{'\n'}), []byte{'\r'})
			if len(bytes.TrimSpace(rec)) > 0 {
				skip, err := p.decide(rec)
				if err == nil && !skip {
					var l lbl.Line
					if err = p.parse(&l, rec); err == nil {
						records++
						err = fn(&l)
						if err != nil {
							return err
						}
					}
				}
				if err != nil {
					return fmt.Errorf("opacity: %s:%d: %w", name, lineNo, err)
				}
			}
		}
		if rerr == io.EOF {
			break
		}
	}
	if records == 0 {
		return fmt.Errorf("opacity: %s: no line records (empty file)", name)
	}
	return nil
}

// parser parses the records of one file, in the layout its first record
// shows.
type parser struct {
	decided bool
	kind    int // layoutFixed, layoutCDSD, layoutTSV9, layoutNamed
	fields  []string
	extra   []fieldSetter // comma fields after fixed records, or named columns
	sep     byte          // named columns: separator
	named   namedColumns
}

const (
	layoutFixed = iota
	layoutCDSD
	layoutTSV9
	layoutNamed
)

// decide sets the layout from the first record; it reports whether the
// record is a header to skip.
func (p *parser) decide(rec []byte) (skip bool, err error) {
	if p.decided {
		return false, nil
	}
	p.decided = true
	sep := byte(',')
	if bytes.IndexByte(rec, '\t') >= 0 {
		sep = '\t'
	}
	switch {
	case isHeader(rec, sep):
		names := splitFields(rec, sep)
		nc, ok, err := newNamedColumns(names)
		if err != nil {
			return false, err
		}
		if ok {
			p.kind, p.sep, p.named = layoutNamed, sep, nc
			return true, nil
		}
		if sep != '\t' {
			return false, fmt.Errorf("header %q does not name HITRAN's columns (molec_id, nu, sw, elower, gamma_air, n_air, ...)", rec)
		}
		p.kind = layoutTSV9
		return true, nil
	case sep == '\t':
		p.kind = layoutTSV9
	case len(rec) == CDSDRecordLen:
		p.kind = layoutCDSD
	default:
		p.kind = layoutFixed
	}
	return false, nil
}

func (p *parser) parse(l *lbl.Line, rec []byte) error {
	switch p.kind {
	case layoutTSV9:
		return parseTSV(l, rec)
	case layoutNamed:
		return p.named.parse(l, rec, p.sep)
	case layoutCDSD:
		if len(rec) != CDSDRecordLen {
			return fmt.Errorf("record has %d characters; this file's first record has the %d of CDSD-HITEMP", len(rec), CDSDRecordLen)
		}
		return parseFixedFields(l, rec, false)
	}
	if len(rec) > RecordLen && rec[RecordLen] == ',' {
		if err := p.parseExtra(l, rec[RecordLen+1:]); err != nil {
			return err
		}
		rec = rec[:RecordLen]
	}
	return parseFixed(l, rec)
}

// parseExtra reads the comma-separated fields after a record.
func (p *parser) parseExtra(l *lbl.Line, rest []byte) error {
	flds := splitFields(rest, ',')
	if p.extra == nil {
		names := p.fields
		if names == nil {
			if len(flds) != len(PlanetaryFields) {
				return fmt.Errorf("%d comma-separated fields after the record; name them (e.g. delta_H2,err,ref): only the %d fields of HITRAN's planetary-broadening files have a default order",
					len(flds), len(PlanetaryFields))
			}
			names = PlanetaryFields
		}
		ex, err := fieldSetters(names, true)
		if err != nil {
			return err
		}
		p.extra = ex
	}
	if len(flds) != len(p.extra) {
		return fmt.Errorf("%d comma-separated fields after the record, want %d (%s)", len(flds), len(p.extra), strings.Join(p.fieldNames(), ","))
	}
	for i, set := range p.extra {
		if set.set == nil {
			continue
		}
		if err := set.set(l, flds[i], fmt.Sprintf("field %d after the record (%s)", i+1, set.name)); err != nil {
			return err
		}
	}
	return nil
}

func (p *parser) fieldNames() []string {
	out := make([]string, len(p.extra))
	for i, s := range p.extra {
		out[i] = s.name
	}
	return out
}

// fieldSetter stores one named field in a line; set is nil for a skipped
// field.
type fieldSetter struct {
	name string
	set  func(l *lbl.Line, v []byte, what string) error
}

// broadSetter returns the setter of a broadening parameter name such as
// gamma_H2, or ok false when name is not one.
func broadSetter(name string) (fieldSetter, bool, error) {
	kind, gas, ok := strings.Cut(name, "_")
	if !ok || (kind != "gamma" && kind != "n" && kind != "delta") {
		return fieldSetter{}, false, nil
	}
	if gas == "air" || gas == "self" {
		return fieldSetter{}, false, nil
	}
	b, known := lbl.ParseBroadener(gas)
	if !known {
		return fieldSetter{}, false, fmt.Errorf("field %q: unknown broadener %q (known: H2, He, CO2, H2O)", name, gas)
	}
	flag := map[string]uint8{"gamma": lbl.HasGamma, "n": lbl.HasN, "delta": lbl.HasDelta}[kind]
	return fieldSetter{name: name, set: func(l *lbl.Line, v []byte, what string) error {
		v = bytes.TrimSpace(v)
		if isMissing(v) {
			return nil
		}
		x, err := parseNum(v, what, false)
		if err != nil {
			return err
		}
		bp := &l.Broad[b]
		switch flag {
		case lbl.HasGamma:
			if x < 0 {
				return fmt.Errorf("%s %g must not be negative", what, x)
			}
			bp.Gamma = float32(x)
		case lbl.HasN:
			bp.N = float32(x)
		default:
			bp.Delta = float32(x)
		}
		bp.Has |= flag
		return nil
	}}, true, nil
}

// fieldSetters turns field names into setters; with skips, "err", "ref"
// and "" are skipped fields.
func fieldSetters(names []string, skips bool) ([]fieldSetter, error) {
	out := make([]fieldSetter, len(names))
	for i, n := range names {
		n = strings.TrimSpace(n)
		if skips && (n == "err" || n == "ref" || n == "") {
			out[i] = fieldSetter{name: n}
			continue
		}
		s, ok, err := broadSetter(n)
		if err != nil {
			return nil, err
		}
		if !ok {
			return nil, fmt.Errorf("field name %q is not a broadening parameter (gamma_B, n_B, delta_B for B = H2, He, CO2, H2O) nor err, ref or empty", n)
		}
		out[i] = s
	}
	return out, nil
}

// isMissing reports whether a field holds no value: empty, or "#" as
// HITRANonline writes for parameters a line lacks.
func isMissing(v []byte) bool {
	return len(v) == 0 || (len(v) == 1 && v[0] == '#')
}

func splitFields(rec []byte, sep byte) [][]byte {
	return bytes.Split(rec, []byte{sep})
}

// namedColumns maps the columns of a header-named table to line fields.
type namedColumns struct {
	n    int
	cols []namedCol
}

type namedCol struct {
	idx      int
	name     string
	required bool
	set      func(l *lbl.Line, v []byte, what string) error
}

// The HITRAN parameter names of the columns the named-column reader
// uses; other columns are ignored, except broadening parameters of
// unknown broadeners, which are an error.
var namedFloat = map[string]struct {
	required bool
	field    func(l *lbl.Line) *float64
}{
	"nu":         {true, func(l *lbl.Line) *float64 { return &l.Nu }},
	"sw":         {true, func(l *lbl.Line) *float64 { return &l.S }},
	"a":          {false, func(l *lbl.Line) *float64 { return &l.A }},
	"gamma_air":  {true, func(l *lbl.Line) *float64 { return &l.GammaAir }},
	"gamma_self": {false, func(l *lbl.Line) *float64 { return &l.GammaSelf }},
	"elower":     {true, func(l *lbl.Line) *float64 { return &l.Elower }},
	"n_air":      {true, func(l *lbl.Line) *float64 { return &l.NAir }},
	"delta_air":  {false, func(l *lbl.Line) *float64 { return &l.DeltaAir }},
	"gp":         {false, func(l *lbl.Line) *float64 { return &l.GUpper }},
	"gpp":        {false, func(l *lbl.Line) *float64 { return &l.GLower }},
}

// newNamedColumns maps a header; ok is false when the header does not
// name HITRAN parameters (no molec_id and nu columns).
func newNamedColumns(header [][]byte) (namedColumns, bool, error) {
	nc := namedColumns{n: len(header)}
	seen := map[string]int{}
	for i, h := range header {
		name := string(bytes.TrimSpace(h))
		if j, dup := seen[name]; dup {
			return nc, false, fmt.Errorf("column %q named twice (columns %d and %d)", name, j+1, i+1)
		}
		seen[name] = i
	}
	if _, ok := seen["molec_id"]; !ok {
		return nc, false, nil
	}
	if _, ok := seen["nu"]; !ok {
		return nc, false, nil
	}
	for name, i := range seen {
		switch {
		case name == "molec_id":
			nc.cols = append(nc.cols, namedCol{idx: i, name: name, required: true, set: func(l *lbl.Line, v []byte, what string) error {
				mol, err := strconv.Atoi(string(v))
				if err != nil {
					return fmt.Errorf("%s %q is not an integer", what, v)
				}
				l.Mol = mol
				return checkMol(mol)
			}})
		case name == "local_iso_id":
			nc.cols = append(nc.cols, namedCol{idx: i, name: name, set: func(l *lbl.Line, v []byte, what string) error {
				if len(v) == 1 {
					iso, err := isoNumber(v[0])
					l.Iso = iso
					return err
				}
				iso, err := strconv.Atoi(string(v))
				if err != nil || iso < 1 {
					return fmt.Errorf("%s %q is not an isotopologue number", what, v)
				}
				l.Iso = iso
				return nil
			}})
		default:
			if f, ok := namedFloat[name]; ok {
				field := f.field
				nc.cols = append(nc.cols, namedCol{idx: i, name: name, required: f.required, set: func(l *lbl.Line, v []byte, what string) error {
					x, err := parseNum(v, what, false)
					*field(l) = x
					return err
				}})
				continue
			}
			s, ok, err := broadSetter(name)
			if err != nil {
				return nc, false, err
			}
			if ok {
				nc.cols = append(nc.cols, namedCol{idx: i, name: name, set: s.set})
			}
		}
	}
	for name, f := range namedFloat {
		if _, ok := seen[name]; f.required && !ok {
			return nc, false, fmt.Errorf("header has no %q column (HITRAN's tables need molec_id, nu, sw, elower, gamma_air, n_air)", name)
		}
	}
	slices.SortFunc(nc.cols, func(a, b namedCol) int { return a.idx - b.idx })
	return nc, true, nil
}

func (nc *namedColumns) parse(l *lbl.Line, rec []byte, sep byte) error {
	flds := splitFields(rec, sep)
	if len(flds) != nc.n {
		return fmt.Errorf("%d fields, the header names %d", len(flds), nc.n)
	}
	l.Iso = 1
	for _, c := range nc.cols {
		v := bytes.TrimSpace(flds[c.idx])
		what := fmt.Sprintf("column %d (%s)", c.idx+1, c.name)
		if isMissing(v) {
			if c.required {
				return fmt.Errorf("%s is blank", what)
			}
			continue
		}
		if err := c.set(l, v, what); err != nil {
			return err
		}
	}
	return l.Validate()
}

// isHeader reports whether a record holds only column names separated by
// sep (each field starts with a letter).
func isHeader(rec []byte, sep byte) bool {
	if sep == ',' && bytes.IndexByte(rec, ',') < 0 {
		return false
	}
	for _, fld := range bytes.Split(rec, []byte{sep}) {
		fld = bytes.TrimSpace(fld)
		if len(fld) == 0 || !(fld[0] >= 'a' && fld[0] <= 'z' || fld[0] >= 'A' && fld[0] <= 'Z') {
			return false
		}
	}
	return true
}

// fixedField is one numeric column of the 160-character record (1-based
// first column, width) with its meaning for error messages.
type fixedField struct {
	start, width int
	name         string
}

var (
	fNu        = fixedField{4, 12, "wavenumber (columns 4-15)"}
	fS         = fixedField{16, 10, "intensity (columns 16-25)"}
	fA         = fixedField{26, 10, "Einstein A (columns 26-35)"}
	fGammaAir  = fixedField{36, 5, "gamma_air (columns 36-40)"}
	fGammaSelf = fixedField{41, 5, "gamma_self (columns 41-45)"}
	fElower    = fixedField{46, 10, "lower-state energy (columns 46-55)"}
	fNAir      = fixedField{56, 4, "n_air (columns 56-59)"}
	fDeltaAir  = fixedField{60, 8, "delta_air (columns 60-67)"}
	fGUpper    = fixedField{147, 7, "g' (columns 147-153)"}
	fGLower    = fixedField{154, 7, "g'' (columns 154-160)"}
)

func parseFixed(l *lbl.Line, rec []byte) error {
	if len(rec) < RecordLen {
		return fmt.Errorf("truncated record: %d characters, a HITRAN record has %d", len(rec), RecordLen)
	}
	if len(rec) > RecordLen {
		return fmt.Errorf("record has %d characters, a HITRAN record has %d (tab-separated files must use tabs from the first line)", len(rec), RecordLen)
	}
	return parseFixedFields(l, rec, true)
}

// parseFixedFields parses the fixed-width HITRAN fields of rec, up to
// delta_air, and the statistical weights when weights is set.
func parseFixedFields(l *lbl.Line, rec []byte, weights bool) error {
	mol, err := strconv.Atoi(string(bytes.TrimSpace(rec[0:2])))
	if err != nil {
		return fmt.Errorf("molecule id (columns 1-2) %q is not an integer", rec[0:2])
	}
	if err := checkMol(mol); err != nil {
		return err
	}
	iso, err := isoNumber(rec[2])
	if err != nil {
		return err
	}
	l.Mol, l.Iso = mol, iso
	dst := [...]*float64{&l.Nu, &l.S, &l.A, &l.GammaAir, &l.GammaSelf, &l.Elower, &l.NAir, &l.DeltaAir}
	for i, fld := range [...]fixedField{fNu, fS, fA, fGammaAir, fGammaSelf, fElower, fNAir, fDeltaAir} {
		v, err := parseNum(rec[fld.start-1:fld.start-1+fld.width], fld.name, false)
		if err != nil {
			return err
		}
		*dst[i] = v
	}
	if !weights {
		return l.Validate()
	}
	// Statistical weights are blank in some older records: 0 means unknown.
	if l.GUpper, err = parseNum(rec[fGUpper.start-1:fGUpper.start-1+fGUpper.width], fGUpper.name, true); err != nil {
		return err
	}
	if l.GLower, err = parseNum(rec[fGLower.start-1:fGLower.start-1+fGLower.width], fGLower.name, true); err != nil {
		return err
	}
	return l.Validate()
}

var (
	tsvNames = [...]string{"molecule id", "nu", "S", "A", "gamma_air", "gamma_self", "E''", "n_air", "delta_air"}
	// tsvFields names the numeric fields 2-9 in error messages.
	tsvFields = func() (f [8]string) {
		for i := range f {
			f[i] = fmt.Sprintf("field %d (%s)", i+2, tsvNames[i+1])
		}
		return f
	}()
)

func parseTSV(l *lbl.Line, rec []byte) error {
	flds := bytes.Split(rec, []byte{'\t'})
	if len(flds) != len(tsvNames) {
		return fmt.Errorf("%d tab-separated fields, want %d (%s)", len(flds), len(tsvNames), strings.Join(tsvNames[:], ", "))
	}
	mol, err := strconv.Atoi(string(bytes.TrimSpace(flds[0])))
	if err != nil {
		return fmt.Errorf("field 1 (molecule id) %q is not an integer", flds[0])
	}
	if err := checkMol(mol); err != nil {
		return err
	}
	l.Mol, l.Iso = mol, 1
	dst := [...]*float64{&l.Nu, &l.S, &l.A, &l.GammaAir, &l.GammaSelf, &l.Elower, &l.NAir, &l.DeltaAir}
	for i, p := range dst {
		v, err := parseNum(flds[i+1], tsvFields[i], false)
		if err != nil {
			return err
		}
		*p = v
	}
	return l.Validate()
}

func checkMol(mol int) error {
	if mol < 1 || mol >= len(lbl.MoleculeNames) {
		return fmt.Errorf("unknown HITRAN molecule id %d (known: 1-%d)", mol, len(lbl.MoleculeNames)-1)
	}
	return nil
}

// isoNumber decodes HITRAN's one-character isotopologue code: 1-9, 0 for
// 10, A for 11, B for 12, and so on.
func isoNumber(c byte) (int, error) {
	switch {
	case c >= '1' && c <= '9':
		return int(c - '0'), nil
	case c == '0':
		return 10, nil
	case c >= 'A' && c <= 'Z':
		return 11 + int(c-'A'), nil
	}
	return 0, fmt.Errorf("isotopologue code (column 3) %q is not 0-9 or A-Z", string(c))
}

// parseNum parses a Fortran-style number field. Blank fields are an error
// unless blankOK (then 0). Only decimal notation is accepted (no hex, no
// Inf or NaN).
func parseNum(b []byte, name string, blankOK bool) (float64, error) {
	b = bytes.TrimSpace(b)
	if len(b) == 0 {
		if blankOK {
			return 0, nil
		}
		return 0, fmt.Errorf("%s is blank", name)
	}
	for _, c := range b {
		if !(c >= '0' && c <= '9' || c == '.' || c == '-' || c == '+' || c == 'e' || c == 'E') {
			return 0, fmt.Errorf("%s %q is not a number", name, b)
		}
	}
	v, err := strconv.ParseFloat(string(b), 64) // no copy: strconv does not keep its argument
	if err != nil || math.IsInf(v, 0) {
		return 0, fmt.Errorf("%s %q is not a number", name, b)
	}
	return v, nil
}
