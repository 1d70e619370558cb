package hitran

import (
	"bufio"
	"bytes"
	"fmt"
	"io"
	"math"
	"os"
	"slices"
	"strconv"
	"strings"

	"chord/forward/opacity/lbl"
)

// HITRAN line-list reading.
//
// Two layouts are accepted, told apart by the first record of a file:
//
//   - the 160-character fixed-width record of HITRAN 2004 and later
//     (Rothman et al. 2005, JQSRT 96, 139, table 1; the 100-character 1996
//     record of Rothman et al. 1998, JQSRT 60, 665 extended): molecule I2,
//     isotopologue I1 (0 means 10, A 11, B 12, ...), wavenumber F12.6,
//     intensity E10.3, Einstein A E10.3, gamma_air F5.4, gamma_self F5.3,
//     E'' F10.4, n_air F4.2, delta_air F8.6, four 15-character quantum-number
//     fields, error and reference codes, line-mixing flag, g' F7.1, g'' F7.1;
//   - HITRANonline's tab-separated output with the nine columns molecule id,
//     nu, S, A, gamma_air, gamma_self, E'', n_air, delta_air (no isotopologue
//     column: the isotopologue is taken as 1, the most abundant). A first
//     line holding only column names is skipped.
//
// Lines are streamed (bufio), never read whole; a trailing carriage return
// (CRLF files) is removed before columns are sliced. Blank lines are
// skipped.

// RecordLen is the length of a HITRAN 2004+ fixed-width record.
const RecordLen = 160

// LineFilter selects lines while they are read. Its zero value keeps every
// line.
type LineFilter struct {
	NuMin, NuMax float64 // wavenumber range in cm^-1, inclusive; NuMax 0 means no upper limit
	SMin         float64 // minimum intensity at 296 K, cm^-1/(molecule cm^-2); 0 keeps all
	Mol          int     // keep only this HITRAN molecule id; 0 keeps all
	Iso          []int   // keep only these isotopologue numbers; empty keeps all
}

func (f *LineFilter) keep(l *lbl.Line) bool {
	if l.Nu < f.NuMin || (f.NuMax > 0 && l.Nu > f.NuMax) || l.S < f.SMin {
		return false
	}
	if f.Mol != 0 && l.Mol != f.Mol {
		return false
	}
	return len(f.Iso) == 0 || slices.Contains(f.Iso, l.Iso)
}

// ReadLineFile reads a HITRAN line-list file (either layout) and returns the
// lines that pass the filter.
func ReadLineFile(path string, f LineFilter) ([]lbl.Line, error) {
	fh, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("opacity: %w", err)
	}
	defer fh.Close()
	return ReadLines(fh, path, f)
}

// ReadLines reads a HITRAN line list from r; name is used in error messages
// (file name). Every record must parse: a malformed record is an error
// naming the file, the line number and the field. An input without any
// record is an error.
func ReadLines(r io.Reader, name string, f LineFilter) ([]lbl.Line, error) {
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 0, 4096), 1<<20)
	var (
		out     []lbl.Line
		lineNo  int
		records int
		tsv     bool
		decided bool
	)
	for sc.Scan() {
		lineNo++
		rec := bytes.TrimSuffix(sc.Bytes(), []byte{'\r'})
		if len(bytes.TrimSpace(rec)) == 0 {
			continue
		}
		if !decided {
			decided = true
			tsv = bytes.IndexByte(rec, '\t') >= 0
			if tsv && isHeader(rec) {
				continue
			}
		}
		var (
			l   lbl.Line
			err error
		)
		if tsv {
			err = parseTSV(&l, rec)
		} else {
			err = parseFixed(&l, rec)
		}
		if err != nil {
			return nil, fmt.Errorf("opacity: %s:%d: %w", name, lineNo, err)
		}
		records++
		if f.keep(&l) {
			out = append(out, l)
		}
	}
	if err := sc.Err(); err != nil {
		if err == bufio.ErrTooLong {
			return nil, fmt.Errorf("opacity: %s:%d: line longer than 1 MiB, not a HITRAN line list", name, lineNo+1)
		}
		return nil, fmt.Errorf("opacity: %s: %w", name, err)
	}
	if records == 0 {
		return nil, fmt.Errorf("opacity: %s: no line records (empty file)", name)
	}
	return out, nil
}

// isHeader reports whether a tab-separated record holds only column names
// (each field starts with a letter).
func isHeader(rec []byte) bool {
	for _, fld := range bytes.Split(rec, []byte{'\t'}) {
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
