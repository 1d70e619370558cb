package hitran

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"sort"
	"strconv"
	"strings"

	"chord/forward/opacity"
	"chord/forward/opacity/internal/specfile"
)

// CIABlock is one temperature block of a file in the HITRAN collision-induced
// absorption format (Richard et al. 2012, JQSRT 113, 1276; Karman et al.
// 2019, Icarus 328, 160). A block is a header line
//
//	pair  nu_min  nu_max  N  T  k_max  resolution  comment  reference
//
// (Fortran A20, F10, F10, I7, F7, E10, F6, A27, I3; wavenumbers in cm^-1,
// k in cm^5 molecule^-2) followed by N rows "wavenumber k". Header fields
// are read by these columns; a header whose columns do not hold numbers
// (re-spaced by hand, trimmed) is read as whitespace-separated tokens, the
// last being the reference and those after the resolution the comment. Data
// rows are whitespace-separated. Some measured sets carry
// a third column per row (e.g. the 2000-2698 cm^-1 sets of N2-N2 2011); it
// is not documented in the format and is ignored.
//
// The reader converts to SI as it reads. Measured sets contain small
// negative values (laboratory noise); they are clipped to 0 as they are
// read, because an absorption coefficient is non-negative and tables must
// be (opacity.CIATable.Validate). Clipped counts them.
type CIABlock struct {
	File string // file name, for messages
	Line int    // line number of the header (1-based)

	Pair       [2]string // e.g. {"H2", "He"}
	NuMin      float64   // header wavenumber range, m^-1
	NuMax      float64   // m^-1
	T          float64   // K
	MaxK       float64   // header maximum of k, m^5 (not checked against the rows)
	Resolution float64   // header resolution, m^-1; 0 when the file gives none (-.999)
	Comment    string    // header comment, may be empty
	Ref        string    // header reference index into HITRAN's CIA reference list

	Wavenumber []float64 // m^-1, strictly ascending, len N
	K          []float64 // m^5, non-negative, len N
	Clipped    int       // negative values of the file set to 0
}

// maxCIARows bounds the row count a block header may declare.
const maxCIARows = 1 << 26

// CIAReader reads the blocks of a HITRAN CIA file one at a time, streaming:
// only the current block is held in memory.
type CIAReader struct {
	sc     *bufio.Scanner
	name   string
	line   int
	blocks int
}

// NewCIAReader returns a reader of the CIA blocks in r; name is used in
// error messages.
func NewCIAReader(r io.Reader, name string) *CIAReader {
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 0, 64*1024), 1<<20)
	return &CIAReader{sc: sc, name: name}
}

func (r *CIAReader) errorf(line int, format string, a ...any) error {
	return fmt.Errorf("opacity: CIA file %s, line %d: %s", r.name, line, fmt.Sprintf(format, a...))
}

// nextLine returns the next non-blank line, with any trailing CR removed;
// ok is false at the end of the input.
func (r *CIAReader) nextLine() (string, bool, error) {
	for r.sc.Scan() {
		r.line++
		s := strings.TrimRight(r.sc.Text(), "\r")
		if strings.TrimSpace(s) != "" {
			return s, true, nil
		}
	}
	if err := r.sc.Err(); err != nil {
		return "", false, fmt.Errorf("opacity: CIA file %s, after line %d: %w", r.name, r.line, err)
	}
	return "", false, nil
}

// Next returns the next block. At the end of the input it returns io.EOF;
// an input with no block at all is an error.
func (r *CIAReader) Next() (*CIABlock, error) {
	s, ok, err := r.nextLine()
	if err != nil {
		return nil, err
	}
	if !ok {
		if r.blocks == 0 {
			return nil, fmt.Errorf("opacity: CIA file %s is empty (no CIA blocks)", r.name)
		}
		return nil, io.EOF
	}
	b, n, tol, err := r.parseHeader(s, r.line)
	if err != nil {
		return nil, err
	}
	for i := range n {
		s, ok, err := r.nextLine()
		if err != nil {
			return nil, err
		}
		if !ok {
			return nil, r.errorf(b.Line, "block %s at %g K declares %d rows, but the file ends at line %d after %d (truncated?)",
				b.pairName(), b.T, n, r.line, i)
		}
		f := strings.Fields(s)
		if len(f) > 3 || (len(f) >= 1 && !looksNumeric(f[0])) {
			return nil, r.errorf(r.line, "row %d of the block at line %d (which declares %d rows) is not a data row: %q (row count in the header too large?)",
				i+1, b.Line, n, clip(s))
		}
		if len(f) < 2 {
			return nil, r.errorf(r.line, "data row has %d field, want wavenumber and value", len(f))
		}
		nu, err := specfile.ParseFinite(f[0])
		if err != nil {
			return nil, r.errorf(r.line, "wavenumber %q: %v", f[0], err)
		}
		k, err := specfile.ParseFinite(f[1])
		if err != nil {
			return nil, r.errorf(r.line, "value %q: %v", f[1], err)
		}
		nu *= specfile.PerCmToPerM
		k *= specfile.Cm5ToM5
		// 1 m^5 is far above any CIA coefficient (about 1e-53 m^5); the
		// bound keeps every interpolated value finite.
		if math.IsInf(nu, 0) || math.Abs(k) > 1 {
			return nil, r.errorf(r.line, "row %s %s is out of range for a table", f[0], f[1])
		}
		if i > 0 && !(nu > b.Wavenumber[i-1]) {
			return nil, r.errorf(r.line, "wavenumber %s cm^-1 is not above the previous row's %g cm^-1 (rows must be strictly ascending)",
				f[0], b.Wavenumber[i-1]/specfile.PerCmToPerM)
		}
		if k < 0 {
			k = 0
			b.Clipped++
		}
		b.Wavenumber = append(b.Wavenumber, nu)
		b.K = append(b.K, k)
	}
	first, last := b.Wavenumber[0], b.Wavenumber[len(b.Wavenumber)-1]
	if math.Abs(first-b.NuMin) > tol[0] || math.Abs(last-b.NuMax) > tol[1] {
		return nil, r.errorf(b.Line, "header range %g-%g cm^-1 does not match the rows' %g-%g cm^-1",
			b.NuMin/specfile.PerCmToPerM, b.NuMax/specfile.PerCmToPerM, first/specfile.PerCmToPerM, last/specfile.PerCmToPerM)
	}
	r.blocks++
	return b, nil
}

func (b *CIABlock) pairName() string { return b.Pair[0] + "-" + b.Pair[1] }

// parseHeader parses a block header. It returns the block with empty rows,
// the declared row count and the tolerances of the header range (half a unit
// in the last printed digit, in m^-1).
func (r *CIAReader) parseHeader(s string, line int) (*CIABlock, int, [2]float64, error) {
	var tol [2]float64
	f, ok := fixedHeader(s)
	if !ok {
		f = strings.Fields(s)
	}
	if looksNumeric(f[0]) {
		if r.blocks == 0 {
			return nil, 0, tol, r.errorf(line, "expected a block header (pair, range, count, temperature, ...), found %q", clip(s))
		}
		return nil, 0, tol, r.errorf(line, "expected a block header (pair, range, count, temperature, ...), found a data row %q (row count of the block before too small?)", clip(s))
	}
	if len(f) < 7 {
		return nil, 0, tol, r.errorf(line, "block header has %d fields, want at least 7 (pair, nu_min, nu_max, N, T, max, resolution): %q", len(f), clip(s))
	}
	if !ok && len(f) >= 8 {
		// Tokens: the last is the reference, those between are the comment.
		f = append(f[:7:7], strings.Join(f[7:len(f)-1], " "), f[len(f)-1])
	}
	a, bname, found := strings.Cut(f[0], "-")
	if !found || a == "" || bname == "" || strings.Contains(bname, "-") {
		return nil, 0, tol, r.errorf(line, "pair %q is not of the form A-B", f[0])
	}
	b := &CIABlock{File: r.name, Line: line, Pair: [2]string{a, bname}}
	nums := make([]float64, 6)
	names := []string{"nu_min", "nu_max", "N", "temperature", "maximum", "resolution"}
	for i := range nums {
		if i == 2 {
			continue
		}
		v, err := specfile.ParseFinite(f[1+i])
		if err != nil {
			return nil, 0, tol, r.errorf(line, "header field %s %q: %v", names[i], f[1+i], err)
		}
		nums[i] = v
	}
	n, err := strconv.Atoi(f[3])
	if err != nil || n < 1 || n > maxCIARows {
		return nil, 0, tol, r.errorf(line, "header field N %q is not a row count in 1..%d", f[3], maxCIARows)
	}
	if !(nums[0] <= nums[1]) || nums[0] < 0 {
		return nil, 0, tol, r.errorf(line, "header range %s-%s cm^-1 is not an ascending range of wavenumbers", f[1], f[2])
	}
	if !(nums[3] > 0) {
		return nil, 0, tol, r.errorf(line, "header temperature %s K is not positive", f[4])
	}
	b.NuMin, b.NuMax = nums[0]*specfile.PerCmToPerM, nums[1]*specfile.PerCmToPerM
	if math.IsInf(b.NuMax, 0) {
		return nil, 0, tol, r.errorf(line, "header range %s-%s cm^-1 is out of range", f[1], f[2])
	}
	b.T, b.MaxK = nums[3], nums[4]*specfile.Cm5ToM5
	if nums[5] > 0 {
		b.Resolution = nums[5] * specfile.PerCmToPerM
	}
	if len(f) == 9 {
		b.Comment, b.Ref = f[7], f[8]
	}
	tol[0] = halfLastDigit(f[1])*specfile.PerCmToPerM*(1+1e-9) + 1e-12*b.NuMin
	tol[1] = halfLastDigit(f[2])*specfile.PerCmToPerM*(1+1e-9) + 1e-12*b.NuMax
	c := min(n, 1<<16) // a corrupt count must not allocate much before rows arrive
	b.Wavenumber = make([]float64, 0, c)
	b.K = make([]float64, 0, c)
	return b, n, tol, nil
}

// headerColumns are the column boundaries of the header's Fortran layout
// A20,F10,F10,I7,F7,E10,F6,A27,I3.
var headerColumns = [...]int{0, 20, 30, 40, 47, 54, 64, 70, 97}

// fixedHeader splits a header line by the columns of the format. It fails
// (ok false) on lines too short to hold the numeric fields or whose columns
// do not hold numbers, e.g. headers re-spaced by hand; those are read as
// whitespace-separated tokens instead.
func fixedHeader(s string) (f []string, ok bool) {
	if len(s) < headerColumns[7] {
		return nil, false
	}
	f = make([]string, 0, 9)
	for i, c := range headerColumns {
		end := len(s)
		if i+1 < len(headerColumns) {
			end = min(headerColumns[i+1], len(s))
		}
		if c > end {
			c = end
		}
		f = append(f, strings.TrimSpace(s[c:end]))
	}
	if f[0] == "" || strings.ContainsAny(f[0], " \t") {
		return nil, false
	}
	for _, v := range f[1:7] {
		if _, err := strconv.ParseFloat(v, 64); err != nil {
			return nil, false
		}
	}
	return f, true
}

// halfLastDigit returns half a unit in the last digit of a printed number:
// "554.000" gives 0.0005, "750" 0.5, "1.5e3" 50.
func halfLastDigit(s string) float64 {
	mant, exp := s, 0
	if i := strings.IndexAny(s, "eEdD"); i >= 0 {
		mant = s[:i]
		e, err := strconv.Atoi(strings.TrimPrefix(s[i+1:], "+"))
		if err == nil {
			exp = e
		}
	}
	d := 0
	if i := strings.IndexByte(mant, '.'); i >= 0 {
		d = len(mant) - i - 1
	}
	return 0.5 * math.Pow(10, float64(exp-d))
}

// looksNumeric reports whether a token starts like a number.
func looksNumeric(s string) bool {
	c := s[0]
	return c >= '0' && c <= '9' || c == '.' || c == '-' || c == '+'
}

func clip(s string) string {
	if len(s) > 80 {
		return s[:80] + "..."
	}
	return s
}

// ReadCIA reads every block of a HITRAN CIA stream; name is used in errors.
func ReadCIA(r io.Reader, name string) ([]*CIABlock, error) {
	cr := NewCIAReader(r, name)
	var blocks []*CIABlock
	for {
		b, err := cr.Next()
		if err == io.EOF {
			return blocks, nil
		}
		if err != nil {
			return nil, err
		}
		blocks = append(blocks, b)
	}
}

// ReadCIAFile reads every block of a HITRAN CIA file.
func ReadCIAFile(path string) ([]*CIABlock, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("opacity: %w", err)
	}
	defer f.Close()
	return ReadCIA(bufio.NewReaderSize(f, 1<<16), path)
}

// CIAFromBlocks combines the blocks of one pair (from one or several files)
// into an opacity.CIATable.
//
// Temperature axis: the distinct block temperatures, ascending.
// Wavenumber axis: grid (m^-1, strictly ascending) if given, else the union
// of all block wavenumbers.
//
// Value at (T, nu): the blocks that cover nu (nu within a block's first and
// last row) are interpolated linearly in wavenumber at nu; blocks at the same
// temperature are averaged; the result is interpolated linearly in T between
// the covering temperatures that bracket T and held at the nearest covering
// temperature outside them. Where no block covers nu the table holds 0. At a
// block's own temperature and wavenumbers the table therefore holds the
// file's value (as float32), where no other block of that temperature
// overlaps it.
func CIAFromBlocks(blocks []*CIABlock, grid []float64) (*opacity.CIATable, error) {
	if len(blocks) == 0 {
		return nil, errors.New("opacity: no CIA blocks to combine")
	}
	p0 := blocks[0].Pair
	clipped := 0
	refs := map[string]bool{}
	for _, b := range blocks {
		if b.Pair != p0 {
			return nil, fmt.Errorf("opacity: CIA file %s, line %d: pair %s differs from %s (%s, line %d); one table holds one pair",
				b.File, b.Line, b.pairName(), blocks[0].pairName(), blocks[0].File, blocks[0].Line)
		}
		if len(b.Wavenumber) == 0 || len(b.Wavenumber) != len(b.K) {
			return nil, fmt.Errorf("opacity: CIA file %s, line %d: block has %d wavenumbers and %d values", b.File, b.Line, len(b.Wavenumber), len(b.K))
		}
		clipped += b.Clipped
		if b.Ref != "" {
			refs[b.Ref] = true
		}
	}
	if grid != nil {
		if err := opacity.CheckAxis(grid, "wavenumber grid"); err != nil {
			return nil, fmt.Errorf("opacity: CIA %s: %w", blocks[0].pairName(), err)
		}
		grid = append([]float64(nil), grid...)
	} else {
		grid = unionAxis(blocks)
	}

	// Blocks by temperature; temps are the distinct temperatures.
	bs := append([]*CIABlock(nil), blocks...)
	sort.SliceStable(bs, func(i, j int) bool { return bs[i].T < bs[j].T })
	var temps []float64
	for _, b := range bs {
		if len(temps) == 0 || b.T != temps[len(temps)-1] {
			temps = append(temps, b.T)
		}
	}
	t := &opacity.CIATable{
		Pair:       p0,
		T:          temps,
		Wavenumber: grid,
		K:          make([]float64, len(temps)*len(grid)),
	}
	nW := len(grid)
	cursor := make([]int, len(bs))
	// Per wavenumber: the covering temperatures (distinct, ascending) and
	// their mean values.
	covT := make([]float64, 0, len(temps))
	covV := make([]float64, 0, len(temps))
	for k, nu := range grid {
		covT, covV = covT[:0], covV[:0]
		nSame := 0
		for j, b := range bs {
			x := b.Wavenumber
			if nu < x[0] || nu > x[len(x)-1] {
				continue
			}
			i := cursor[j]
			for i+1 < len(x) && x[i+1] < nu {
				i++
			}
			cursor[j] = i
			v := b.K[i]
			if i+1 < len(x) && nu > x[i] {
				w := (nu - x[i]) / (x[i+1] - x[i])
				v = (1-w)*b.K[i] + w*b.K[i+1]
			}
			if n := len(covT); n > 0 && covT[n-1] == b.T {
				nSame++
				covV[n-1] += (v - covV[n-1]) / float64(nSame)
				continue
			}
			covT, covV = append(covT, b.T), append(covV, v)
			nSame = 1
		}
		if len(covT) == 0 {
			continue
		}
		for it, temp := range temps {
			i, w := opacity.Weights(covT, temp)
			v := covV[i]
			if len(covT) > 1 {
				v = (1-w)*covV[i] + w*covV[i+1]
			}
			t.K[it*nW+k] = v
		}
	}
	refList := make([]string, 0, len(refs))
	for r := range refs {
		refList = append(refList, r)
	}
	sort.Strings(refList)
	t.Meta = map[string]string{
		"cia_blocks":              strconv.Itoa(len(blocks)),
		"cia_references":          strings.Join(refList, ","),
		"negative_values_clipped": strconv.Itoa(clipped),
	}
	if err := t.Validate(); err != nil {
		return nil, err
	}
	return t, nil
}

// unionAxis returns the sorted distinct wavenumbers of all blocks.
func unionAxis(blocks []*CIABlock) []float64 {
	n := 0
	for _, b := range blocks {
		n += len(b.Wavenumber)
	}
	all := make([]float64, 0, n)
	for _, b := range blocks {
		all = append(all, b.Wavenumber...)
	}
	sort.Float64s(all)
	out := all[:0]
	for i, v := range all {
		if i == 0 || v != out[len(out)-1] {
			out = append(out, v)
		}
	}
	return append([]float64(nil), out...)
}

// LoadCIA reads the HITRAN CIA files (all of one pair), combines their
// blocks with CIAFromBlocks on grid (nil: the union of their wavenumbers)
// and records the files and their SHA-256 in the table's opacity.MetaSources.
// opacity.MetaProgramVersion is left for the caller to set.
func LoadCIA(grid []float64, paths ...string) (*opacity.CIATable, error) {
	var blocks []*CIABlock
	for _, p := range paths {
		b, err := ReadCIAFile(p)
		if err != nil {
			return nil, err
		}
		blocks = append(blocks, b...)
	}
	t, err := CIAFromBlocks(blocks, grid)
	if err != nil {
		return nil, err
	}
	src, err := opacity.SourcesMeta(paths...)
	if err != nil {
		return nil, err
	}
	t.Meta[opacity.MetaSources] = src
	gridNote := "union of the block wavenumbers"
	if grid != nil {
		gridNote = fmt.Sprintf("supplied grid of %d points", len(grid))
	}
	t.Meta[opacity.MetaBuildSettings] = fmt.Sprintf(`{"source_format":"HITRAN CIA","wavenumber_grid":%q,"negative_values":"clipped to 0","temperature":"linear between covering blocks, nearest outside","uncovered":"0"}`, gridNote)
	return t, nil
}
