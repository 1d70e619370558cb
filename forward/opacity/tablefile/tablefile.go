// Package tablefile reads and writes opacity tables as files and loads a
// directory of them into an opacity.Set.
//
// Table files (schema version 1).
//
// A table file is a Parquet file holding one cross-section table (one gas)
// or one CIA table (one pair) in long form, one row per grid point, with the
// rows ordered as the in-memory layout (wavenumber fastest):
//
//	kind xsec:   log10_pressure_pa DOUBLE, temperature_k DOUBLE, wavenumber_per_m DOUBLE, sigma_m2 FLOAT
//	kind cia:    temperature_k DOUBLE, wavenumber_per_m DOUBLE, k_m5 DOUBLE
//	kind ktable: log10_pressure_pa DOUBLE, temperature_k DOUBLE, wavelength_lo_m DOUBLE,
//	             wavelength_hi_m DOUBLE, g DOUBLE, g_weight DOUBLE, k_m2 FLOAT
//
// A k-table (opacity.KTable, correlated-k) has four axes, pressure,
// temperature, spectral bin and quadrature node (g fastest); a bin is
// given by its two edges in wavelength (wavelength_lo_m, wavelength_hi_m,
// both repeating with the bin) and a node by its g and its quadrature
// weight (g, g_weight, both repeating with the node). The build settings
// (quadrature, fine grid, broadening mixture, partition-sum sources,
// cuts, lines kept and binned) are JSON in opacity.MetaBuildSettings.
//
// The axis columns are dictionary encoded (so they cost almost nothing), the
// data column is plain; all columns are zstd compressed and required. Any
// Parquet reader gives a tidy table (checked with Apache Arrow's Go reader,
// arrow-go v18.9.0); chord's reader rebuilds the axes from the columns and
// checks every row against them.
//
// The key-value metadata of the file carries the table's Meta map plus the
// structural keys the writer sets itself (MetaFormat, MetaSchemaVersion,
// MetaKind, MetaGas or MetaPair, MetaShape, the units keys, MetaContentSHA256
// and, for demo tables, opacity.MetaDemoNote); the provenance keys are
// package opacity's. The README ("Opacity table files") lists every key.
package tablefile

import (
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"maps"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"github.com/parquet-go/parquet-go"
	"github.com/parquet-go/parquet-go/encoding"

	"chord/forward/opacity"
	"chord/internal/atomicfile"
)

// SchemaVersion is the version of the table-file schema this package
// writes and reads.
const SchemaVersion = 1

// Metadata keys of table files. Keys set by the writer overwrite entries of
// the same name in a table's Meta; other Meta entries are stored as they are.
const (
	MetaFormat        = "format"         // always Format
	MetaSchemaVersion = "schema_version" // SchemaVersion, decimal
	MetaKind          = "kind"           // KindXSec or KindCIA
	MetaGas           = "gas"            // xsec: gas name
	MetaPair          = "pair"           // cia: "A-B"
	MetaShape         = "shape"          // axis lengths, slowest first, comma separated
	MetaContentSHA256 = "content_sha256" // SHA-256 of all other metadata, the axes and the data; see contentChecksum

	MetaUnitsLog10P      = "units.log10_pressure"
	MetaUnitsTemperature = "units.temperature"
	MetaUnitsWavenumber  = "units.wavenumber"
	MetaUnitsSigma       = "units.sigma"
	MetaUnitsK           = "units.k"
	MetaUnitsWavelength  = "units.wavelength"
	MetaUnitsKCoeff      = "units.k_coefficient"
)

// Values of the structural metadata keys.
const (
	Format   = "chord opacity table"
	KindXSec = "xsec"
	KindCIA  = "cia"
	KindK    = "ktable"
)

// Column names and units of schema version 1.
const (
	colLog10P = "log10_pressure_pa"
	colT      = "temperature_k"
	colNu     = "wavenumber_per_m"
	colSigma  = "sigma_m2"
	colK      = "k_m5"
	colLo     = "wavelength_lo_m"
	colHi     = "wavelength_hi_m"
	colG      = "g"
	colW      = "g_weight"
	colKCoeff = "k_m2"

	unitLog10P = "log10(Pa)"
	unitT      = "K"
	unitNu     = "m^-1"
	unitSigma  = "m^2 molecule^-1"
	unitK      = "m^5 molecule^-2"
	unitWl     = "m"
	unitKCoeff = "m^2 molecule^-1"
)

// maxTableValues bounds the number of grid points a table file may declare
// (1 or 2 GiB of data), so that a corrupted shape cannot exhaust memory.
const maxTableValues = 1 << 28

// rowsPerGroup is the Parquet row-group size of written files.
const rowsPerGroup = 1 << 20

type xsecRow struct {
	Log10P float64 `parquet:"log10_pressure_pa,dict,zstd"`
	T      float64 `parquet:"temperature_k,dict,zstd"`
	Nu     float64 `parquet:"wavenumber_per_m,dict,zstd"`
	Sigma  float32 `parquet:"sigma_m2,zstd"`
}

type kRow struct {
	Log10P float64 `parquet:"log10_pressure_pa,dict,zstd"`
	T      float64 `parquet:"temperature_k,dict,zstd"`
	Lo     float64 `parquet:"wavelength_lo_m,dict,zstd"`
	Hi     float64 `parquet:"wavelength_hi_m,dict,zstd"`
	G      float64 `parquet:"g,dict,zstd"`
	W      float64 `parquet:"g_weight,dict,zstd"`
	K      float32 `parquet:"k_m2,zstd"`
}

type ciaRow struct {
	T  float64 `parquet:"temperature_k,dict,zstd"`
	Nu float64 `parquet:"wavenumber_per_m,dict,zstd"`
	K  float64 `parquet:"k_m5,zstd"`
}

// layout describes the columns of one kind of table file.
type layout struct {
	axes []string // axis column names, slowest first
	// extra are further columns that repeat with an axis (a bin's upper
	// edge, a node's weight): name and axis index.
	extra []extraCol
	data  string // data column name
	units map[string]string
}

type extraCol struct {
	name string
	axis int
}

var layouts = map[string]layout{
	KindXSec: {
		axes: []string{colLog10P, colT, colNu},
		data: colSigma,
		units: map[string]string{
			MetaUnitsLog10P: unitLog10P, MetaUnitsTemperature: unitT,
			MetaUnitsWavenumber: unitNu, MetaUnitsSigma: unitSigma,
		},
	},
	KindK: {
		axes:  []string{colLog10P, colT, colLo, colG},
		extra: []extraCol{{colHi, 2}, {colW, 3}},
		data:  colKCoeff,
		units: map[string]string{
			MetaUnitsLog10P: unitLog10P, MetaUnitsTemperature: unitT,
			MetaUnitsWavelength: unitWl, MetaUnitsKCoeff: unitKCoeff,
		},
	},
	KindCIA: {
		axes: []string{colT, colNu},
		data: colK,
		units: map[string]string{
			MetaUnitsTemperature: unitT, MetaUnitsWavenumber: unitNu, MetaUnitsK: unitK,
		},
	},
}

// WriteXSec writes t to a table file at path. It refuses to replace an
// existing file unless overwrite is set. The file is written to a temporary
// file in the same directory, synced and renamed, so a reader never sees a
// partial table. t must validate and its Meta must name the program version
// (opacity.MetaProgramVersion).
func WriteXSec(path string, t *opacity.XSecTable, overwrite bool) error {
	if err := t.Validate(); err != nil {
		return fmt.Errorf("opacity: write %s: %w", path, err)
	}
	axes := [][]float64{t.Log10P, t.T, t.Wavenumber}
	meta, err := fileMeta(KindXSec, MetaGas, t.Gas, t.Meta, axes, t.Sigma)
	if err != nil {
		return fmt.Errorf("opacity: write %s (gas %s): %w", path, t.Gas, err)
	}
	nT, nW := len(t.T), len(t.Wavenumber)
	fill := func(dst []xsecRow, start int) {
		for i := range dst {
			r := start + i
			k, it, ip := r%nW, (r/nW)%nT, r/(nW*nT)
			dst[i] = xsecRow{Log10P: t.Log10P[ip], T: t.T[it], Nu: t.Wavenumber[k], Sigma: t.Sigma[r]}
		}
	}
	return writeFile(path, overwrite, meta, len(t.Sigma), fill)
}

// WriteK writes the k-table t to a table file at path, as WriteXSec does.
// Its axes in the checksum are, in order, log10 P, T, bin lower edges,
// nodes, bin upper edges, weights.
func WriteK(path string, t *opacity.KTable, overwrite bool) error {
	if err := t.Validate(); err != nil {
		return fmt.Errorf("opacity: write %s: %w", path, err)
	}
	axes := [][]float64{t.Log10P, t.T, t.Lo, t.G, t.Hi, t.W}
	meta, err := fileMeta(KindK, MetaGas, t.Gas, t.Meta, axes, t.K)
	if err != nil {
		return fmt.Errorf("opacity: write %s (gas %s): %w", path, t.Gas, err)
	}
	nT, nB, nG := len(t.T), t.Bins(), len(t.G)
	fill := func(dst []kRow, start int) {
		for i := range dst {
			r := start + i
			ig, b, it, ip := r%nG, (r/nG)%nB, (r/(nG*nB))%nT, r/(nG*nB*nT)
			dst[i] = kRow{Log10P: t.Log10P[ip], T: t.T[it], Lo: t.Lo[b], Hi: t.Hi[b], G: t.G[ig], W: t.W[ig], K: t.K[r]}
		}
	}
	return writeFile(path, overwrite, meta, len(t.K), fill)
}

// WriteCIA writes t to a table file at path, as WriteXSec does.
func WriteCIA(path string, t *opacity.CIATable, overwrite bool) error {
	if err := t.Validate(); err != nil {
		return fmt.Errorf("opacity: write %s: %w", path, err)
	}
	axes := [][]float64{t.T, t.Wavenumber}
	if strings.Contains(t.Pair[0], "-") || strings.Contains(t.Pair[1], "-") {
		return fmt.Errorf("opacity: write %s: CIA pair names %q and %q must not contain '-'", path, t.Pair[0], t.Pair[1])
	}
	meta, err := fileMeta(KindCIA, MetaPair, t.Pair[0]+"-"+t.Pair[1], t.Meta, axes, t.K)
	if err != nil {
		return fmt.Errorf("opacity: write %s (pair %s-%s): %w", path, t.Pair[0], t.Pair[1], err)
	}
	nW := len(t.Wavenumber)
	fill := func(dst []ciaRow, start int) {
		for i := range dst {
			r := start + i
			dst[i] = ciaRow{T: t.T[r/nW], Nu: t.Wavenumber[r%nW], K: t.K[r]}
		}
	}
	return writeFile(path, overwrite, meta, len(t.K), fill)
}

// fileMeta returns the key-value metadata of a table file: the table's own
// Meta plus the structural keys, nameKey (MetaGas or MetaPair) set to name.
func fileMeta[E float32 | float64](kind, nameKey, name string, tm map[string]string, axes [][]float64, data []E) (map[string]string, error) {
	if tm[opacity.MetaProgramVersion] == "" {
		return nil, fmt.Errorf("metadata key %q is missing (set it to the version of the program that built the table)", opacity.MetaProgramVersion)
	}
	if d, ok := tm[opacity.MetaDemo]; ok && d != "true" && d != "false" {
		return nil, fmt.Errorf("metadata key %q is %q, want \"true\" or \"false\"", opacity.MetaDemo, d)
	}
	meta := maps.Clone(tm)
	if meta == nil {
		meta = map[string]string{}
	}
	delete(meta, MetaGas)
	delete(meta, MetaPair)
	delete(meta, opacity.MetaDemoNote)
	if meta[opacity.MetaDemo] == "" {
		meta[opacity.MetaDemo] = "false"
	}
	if opacity.IsDemo(meta) {
		meta[opacity.MetaDemoNote] = opacity.DemoNote
	}
	meta[MetaFormat] = Format
	meta[MetaSchemaVersion] = strconv.Itoa(SchemaVersion)
	meta[MetaKind] = kind
	meta[nameKey] = name
	shape := make([]int, len(layouts[kind].axes))
	for i := range shape {
		shape[i] = len(axes[i])
	}
	meta[MetaShape] = formatShape(shape)
	for k, v := range layouts[kind].units {
		meta[k] = v
	}
	meta[MetaContentSHA256] = contentChecksum(meta, axes, data)
	return meta, nil
}

func formatShape(shape []int) string {
	s := make([]string, len(shape))
	for i, n := range shape {
		s[i] = strconv.Itoa(n)
	}
	return strings.Join(s, ",")
}

// contentChecksum is the SHA-256 (hex) of the metadata except
// MetaContentSHA256 (sorted by key, each entry as the key's and the value's
// lengths as uint64 little-endian followed by their bytes), then the axes as
// float64 little-endian, slowest axis first, then the data little-endian
// in its own type (float32 cross-sections, float64 CIA coefficients). The axis lengths are in the metadata (MetaShape).
func contentChecksum[E float32 | float64](meta map[string]string, axes [][]float64, data []E) string {
	h := sha256.New()
	buf := make([]byte, 0, 1<<16)
	keys := make([]string, 0, len(meta))
	for k := range meta {
		if k != MetaContentSHA256 {
			keys = append(keys, k)
		}
	}
	sort.Strings(keys)
	for _, k := range keys {
		buf = binary.LittleEndian.AppendUint64(buf, uint64(len(k)))
		buf = binary.LittleEndian.AppendUint64(buf, uint64(len(meta[k])))
		h.Write(buf)
		buf = buf[:0]
		h.Write([]byte(k))
		h.Write([]byte(meta[k]))
	}
	buf = buf[:cap(buf)]
	put64 := func(x []float64) {
		for len(x) > 0 {
			n := min(len(x), len(buf)/8)
			for i, v := range x[:n] {
				binary.LittleEndian.PutUint64(buf[8*i:], math.Float64bits(v))
			}
			h.Write(buf[:8*n])
			x = x[n:]
		}
	}
	for _, a := range axes {
		put64(a)
	}
	switch d := any(data).(type) {
	case []float64:
		put64(d)
	case []float32:
		for len(d) > 0 {
			n := min(len(d), len(buf)/4)
			for i, v := range d[:n] {
				binary.LittleEndian.PutUint32(buf[4*i:], math.Float32bits(v))
			}
			h.Write(buf[:4*n])
			d = d[n:]
		}
	}
	return hex.EncodeToString(h.Sum(nil))
}

// writeFile writes n rows made by fill to path through a temporary file in
// the same directory, synced and then moved into place without ever
// replacing a file unless overwrite is set (atomicfile.WriteFrom).
func writeFile[R any](path string, overwrite bool, meta map[string]string, n int, fill func(dst []R, start int)) error {
	keys := make([]string, 0, len(meta))
	for k := range meta {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	opts := []parquet.WriterOption{parquet.MaxRowsPerRowGroup(rowsPerGroup)}
	for _, k := range keys {
		opts = append(opts, parquet.KeyValueMetadata(k, meta[k]))
	}
	err := atomicfile.WriteFrom(atomicfile.OS, path, overwrite, func(f io.Writer) error {
		w := parquet.NewGenericWriter[R](f, opts...)
		batch := make([]R, min(n, 8192))
		for start := 0; start < n; start += len(batch) {
			b := batch[:min(len(batch), n-start)]
			fill(b, start)
			if _, err := w.Write(b); err != nil {
				return err
			}
		}
		return w.Close()
	})
	if errors.Is(err, fs.ErrExist) && !overwrite {
		return fmt.Errorf("opacity: %s exists; refusing to overwrite it (ask for overwrite to replace it)", path)
	}
	if err != nil {
		return fmt.Errorf("opacity: %w", err)
	}
	return nil
}

// ReadXSec reads a cross-section table file written by WriteXSec.
// The file is checked completely: schema, shape, every row's axis values,
// the data checksum and opacity.XSecTable.Validate. Errors name the file.
func ReadXSec(path string) (*opacity.XSecTable, error) {
	x, _, err := readTableFile(path, KindXSec)
	return x, err
}

// ReadCIA reads a CIA table file written by WriteCIA, checked as
// ReadXSec checks cross-section files.
func ReadCIA(path string) (*opacity.CIATable, error) {
	_, c, err := readTableFile(path, KindCIA)
	return c, err
}

// ReadK reads a k-table file written by WriteK, checked as ReadXSec
// checks cross-section files.
func ReadK(path string) (*opacity.KTable, error) {
	t, err := readAny(path, KindK)
	return t.K, err
}

// Table is a table of any kind: one field is set.
type Table struct {
	XSec *opacity.XSecTable
	CIA  *opacity.CIATable
	K    *opacity.KTable
}

// Meta returns the table's metadata.
func (t Table) Meta() map[string]string {
	switch {
	case t.XSec != nil:
		return t.XSec.Meta
	case t.CIA != nil:
		return t.CIA.Meta
	case t.K != nil:
		return t.K.Meta
	}
	return nil
}

// Read reads a table file of any kind.
func Read(path string) (Table, error) {
	return readAny(path, "")
}

func readAny(path, want string) (t Table, err error) {
	// The Parquet decoder is not ours; a damaged file must give an error
	// here, never a panic.
	defer func() {
		if r := recover(); r != nil {
			t, err = Table{}, fmt.Errorf("opacity: table file %s: unreadable (corrupted?): %v", path, r)
		}
	}()
	o, err := openTable(path, want)
	if err != nil {
		return Table{}, err
	}
	defer o.f.Close()
	if o.kind != KindK {
		t.XSec, t.CIA, err = o.readXSecOrCIA()
		return t, err
	}
	data, err := readData[float32](o)
	if err != nil {
		return Table{}, err
	}
	a := o.axes
	k := &opacity.KTable{Gas: o.meta[MetaGas], Log10P: a[0], T: a[1], Lo: a[2], G: a[3], Hi: a[4], W: a[5], K: data, Meta: o.meta}
	if err := k.Validate(); err != nil {
		return Table{}, fmt.Errorf("opacity: table file %s: %w", path, err)
	}
	t.K = k
	return t, nil
}

func readTableFile(path, want string) (*opacity.XSecTable, *opacity.CIATable, error) {
	t, err := readAny(path, want)
	return t.XSec, t.CIA, err
}

func (o *openedTable) readXSecOrCIA() (*opacity.XSecTable, *opacity.CIATable, error) {
	path := o.path
	meta, axes := o.meta, o.axes
	switch o.kind {
	case KindXSec:
		data, err := readData[float32](o)
		if err != nil {
			return nil, nil, err
		}
		t := &opacity.XSecTable{Gas: meta[MetaGas], Log10P: axes[0], T: axes[1], Wavenumber: axes[2], Sigma: data, Meta: meta}
		if err := t.Validate(); err != nil {
			return nil, nil, fmt.Errorf("opacity: table file %s: %w", path, err)
		}
		return t, nil, nil
	default:
		a, b, ok := strings.Cut(meta[MetaPair], "-")
		if !ok || a == "" || b == "" || strings.Contains(b, "-") {
			return nil, nil, fmt.Errorf("opacity: table file %s: metadata key %q is %q, want \"A-B\"", path, MetaPair, meta[MetaPair])
		}
		data, err := readData[float64](o)
		if err != nil {
			return nil, nil, err
		}
		t := &opacity.CIATable{Pair: [2]string{a, b}, T: axes[0], Wavenumber: axes[1], K: data, Meta: meta}
		if err := t.Validate(); err != nil {
			return nil, nil, fmt.Errorf("opacity: table file %s: %w", path, err)
		}
		return nil, t, nil
	}
}

// openedTable is a table file whose metadata and axes have been read and
// checked.
type openedTable struct {
	path string
	f    *os.File
	pf   *parquet.File
	kind string
	lay  layout
	meta map[string]string
	axes [][]float64
}

func (o *openedTable) fail(format string, a ...any) error {
	return fmt.Errorf("opacity: table file %s: "+format, append([]any{o.path}, a...)...)
}

// openTable opens a table file, checks its metadata against the schema and
// reads its axes. want is the required kind ("" for either). The caller
// closes o.f.
func openTable(path, want string) (o *openedTable, err error) {
	o = &openedTable{path: path}
	fail := o.fail
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("opacity: %w", err)
	}
	defer func() {
		if err != nil {
			f.Close()
		}
	}()
	o.f = f
	st, err := f.Stat()
	if err != nil {
		return nil, fmt.Errorf("opacity: %w", err)
	}
	if st.IsDir() {
		return nil, fail("is a directory, not a table file")
	}
	pf, err := parquet.OpenFile(f, st.Size(), parquet.SkipPageIndex(true), parquet.SkipBloomFilters(true))
	if err != nil {
		return nil, fail("not a readable Parquet file (truncated or corrupted?): %v", err)
	}
	meta := map[string]string{}
	for _, kv := range pf.Metadata().KeyValueMetadata {
		meta[kv.Key] = kv.Value
	}
	if meta[MetaFormat] != Format {
		return nil, fail("not a chord opacity table (metadata key %q is %q, want %q)", MetaFormat, meta[MetaFormat], Format)
	}
	if v := meta[MetaSchemaVersion]; v != strconv.Itoa(SchemaVersion) {
		return nil, fail("schema version %q is not supported (this program reads version %d)", v, SchemaVersion)
	}
	kind := meta[MetaKind]
	lay, ok := layouts[kind]
	if !ok {
		return nil, fail("metadata key %q is %q, want %q, %q or %q", MetaKind, kind, KindXSec, KindCIA, KindK)
	}
	if want != "" && kind != want {
		return nil, fail("holds a %s table, not a %s table", kind, want)
	}
	for k, v := range lay.units {
		if meta[k] != v {
			return nil, fail("metadata key %q is %q, want %q", k, meta[k], v)
		}
	}
	shape, err := parseShape(meta[MetaShape], len(lay.axes))
	if err != nil {
		return nil, fail("metadata key %q: %v", MetaShape, err)
	}
	total := 1
	for _, n := range shape {
		total *= n
	}
	if pf.NumRows() != int64(total) {
		return nil, fail("%d rows, but the shape %s needs %d", pf.NumRows(), meta[MetaShape], total)
	}

	axes := make([][]float64, len(shape))
	for j, name := range lay.axes {
		axes[j] = make([]float64, shape[j])
		stride := 1
		for _, n := range shape[j+1:] {
			stride *= n
		}
		if err := readAxisColumn(pf, name, axes[j], stride); err != nil {
			return nil, fail("column %s: %v", name, err)
		}
	}
	for _, e := range lay.extra {
		x := make([]float64, shape[e.axis])
		stride := 1
		for _, n := range shape[e.axis+1:] {
			stride *= n
		}
		if err := readAxisColumn(pf, e.name, x, stride); err != nil {
			return nil, fail("column %s: %v", e.name, err)
		}
		axes = append(axes, x)
	}
	o.pf, o.kind, o.lay, o.meta, o.axes = pf, kind, lay, meta, axes
	return o, nil
}

// readData reads the data column of an opened table and checks the content
// checksum.
func readData[E float32 | float64](o *openedTable) ([]E, error) {
	data := make([]E, o.pf.NumRows())
	if err := readDataColumn(o.pf, o.lay.data, data); err != nil {
		return nil, o.fail("column %s: %v", o.lay.data, err)
	}
	if sum := contentChecksum(o.meta, o.axes, data); sum != o.meta[MetaContentSHA256] {
		return nil, o.fail("content checksum %s does not match the stored %q (file corrupted or edited?)", sum, o.meta[MetaContentSHA256])
	}
	return data, nil
}

func parseShape(s string, dims int) ([]int, error) {
	parts := strings.Split(s, ",")
	if len(parts) != dims {
		return nil, fmt.Errorf("%q has %d axis lengths, want %d", s, len(parts), dims)
	}
	shape := make([]int, dims)
	total := 1
	for i, p := range parts {
		n, err := strconv.Atoi(strings.TrimSpace(p))
		if err != nil || n < 1 {
			return nil, fmt.Errorf("%q: axis length %q is not a positive integer", s, p)
		}
		if n > maxTableValues || total > maxTableValues/n {
			return nil, fmt.Errorf("%q: more than %d grid points", s, maxTableValues)
		}
		total *= n
		shape[i] = n
	}
	return shape, nil
}

// leaf finds a required, non-repeated column of the given physical kind.
func leaf(pf *parquet.File, name string, kind parquet.Kind) (int, error) {
	lc, ok := pf.Schema().Lookup(name)
	if !ok {
		return 0, fmt.Errorf("missing")
	}
	if lc.MaxRepetitionLevel != 0 || lc.Node.Type().Kind() != kind {
		return 0, fmt.Errorf("has type %v, want a plain %v column", lc.Node.Type(), kind)
	}
	return lc.ColumnIndex, nil
}

// eachPage calls fn with every page of column col, in row order.
func eachPage(pf *parquet.File, col int, fn func(p parquet.Page) error) error {
	for _, rg := range pf.RowGroups() {
		pages := rg.ColumnChunks()[col].Pages()
		for {
			p, err := pages.ReadPage()
			if err == io.EOF {
				break
			}
			if err != nil {
				pages.Close()
				return err
			}
			if p.NumNulls() != 0 {
				parquet.Release(p)
				pages.Close()
				return fmt.Errorf("has %d null values", p.NumNulls())
			}
			err = fn(p)
			parquet.Release(p)
			if err != nil {
				pages.Close()
				return err
			}
		}
		if err := pages.Close(); err != nil {
			return err
		}
	}
	return nil
}

// readAxisColumn reads an axis column, whose row r holds axis value
// (r/stride) mod len(axis): the first occurrence of each index sets the
// axis value, every other row must repeat it exactly.
func readAxisColumn(pf *parquet.File, name string, axis []float64, stride int) error {
	col, err := leaf(pf, name, parquet.Double)
	if err != nil {
		return err
	}
	n, total := len(axis), int(pf.NumRows())
	// Row row is at axis index i, at position within of its run of stride
	// equal values; first is true during the first pass over the axis.
	row, i, within, first := 0, 0, 0, true
	var buf []float64
	err = eachPage(pf, col, func(p parquet.Page) error {
		var vals []float64
		if d := p.Dictionary(); d != nil {
			dv := d.Page().Data()
			if dv.Kind() != encoding.Double {
				return fmt.Errorf("dictionary holds %v values, want DOUBLE", dv.Kind())
			}
			dict := dv.Double()
			idx := p.Data()
			if idx.Kind() != encoding.Int32 {
				return fmt.Errorf("dictionary indexes are %v, want INT32", idx.Kind())
			}
			ix := idx.Int32()
			if cap(buf) < len(ix) {
				buf = make([]float64, len(ix))
			}
			buf = buf[:len(ix)]
			for i, k := range ix {
				if k < 0 || int(k) >= len(dict) {
					return fmt.Errorf("row %d: dictionary index %d out of range [0, %d)", row+i, k, len(dict))
				}
				buf[i] = dict[k]
			}
			vals = buf
		} else {
			dv := p.Data()
			if dv.Kind() != encoding.Double {
				return fmt.Errorf("page holds %v values, want DOUBLE", dv.Kind())
			}
			vals = dv.Double()
		}
		if row+len(vals) > total {
			return fmt.Errorf("more than %d values", total)
		}
		// Work in runs: a stretch of the axis (stride 1) or a run of one
		// repeated value (stride > 1).
		for len(vals) > 0 {
			var m int
			if stride == 1 {
				m = min(n-i, len(vals))
				seg := axis[i : i+m]
				if first {
					copy(seg, vals[:m])
				} else {
					for k, v := range vals[:m] {
						if v != seg[k] {
							return outOfOrder(row+k, v, i+k, seg[k])
						}
					}
				}
				if i += m; i == n {
					i, first = 0, false
				}
			} else {
				m = min(stride-within, len(vals))
				if first && within == 0 {
					axis[i] = vals[0]
				}
				a := axis[i]
				for k, v := range vals[:m] {
					if v != a {
						return outOfOrder(row+k, v, i, a)
					}
				}
				if within += m; within == stride {
					within = 0
					if i++; i == n {
						i, first = 0, false
					}
				}
			}
			vals = vals[m:]
			row += m
		}
		return nil
	})
	if err != nil {
		return err
	}
	if row != total {
		return fmt.Errorf("%d values, want %d", row, total)
	}
	return nil
}

func outOfOrder(row int, v float64, i int, a float64) error {
	return fmt.Errorf("row %d holds %g, but the axis value at index %d is %g (rows out of grid order)", row, v, i, a)
}

// readDataColumn reads the data column (FLOAT for float32, DOUBLE for
// float64) into dst (len = rows).
func readDataColumn[E float32 | float64](pf *parquet.File, name string, dst []E) error {
	kind, ekind := parquet.Double, encoding.Double
	if _, ok := any(dst).([]float32); ok {
		kind, ekind = parquet.Float, encoding.Float
	}
	col, err := leaf(pf, name, kind)
	if err != nil {
		return err
	}
	values := func(v encoding.Values) []E {
		if ekind == encoding.Float {
			return any(v.Float()).([]E)
		}
		return any(v.Double()).([]E)
	}
	row := 0
	err = eachPage(pf, col, func(p parquet.Page) error {
		if d := p.Dictionary(); d != nil {
			dv := d.Page().Data()
			idx := p.Data()
			if dv.Kind() != ekind || idx.Kind() != encoding.Int32 {
				return fmt.Errorf("dictionary page of %v values with %v indexes, want %v and INT32", dv.Kind(), idx.Kind(), ekind)
			}
			dict, ix := values(dv), idx.Int32()
			if row+len(ix) > len(dst) {
				return fmt.Errorf("more than %d values", len(dst))
			}
			for i, k := range ix {
				if k < 0 || int(k) >= len(dict) {
					return fmt.Errorf("row %d: dictionary index %d out of range [0, %d)", row+i, k, len(dict))
				}
				dst[row+i] = dict[k]
			}
			row += len(ix)
			return nil
		}
		dv := p.Data()
		if dv.Kind() != ekind {
			return fmt.Errorf("page holds %v values, want %v", dv.Kind(), ekind)
		}
		v := values(dv)
		if row+len(v) > len(dst) {
			return fmt.Errorf("more than %d values", len(dst))
		}
		row += copy(dst[row:], v)
		return nil
	})
	if err != nil {
		return err
	}
	if row != len(dst) {
		return fmt.Errorf("%d values, want %d", row, len(dst))
	}
	return nil
}

// LoadDir reads every *.parquet table file in dir into an opacity.Set:
// cross-section tables and k-tables by gas, CIA tables in file-name
// order. Two tables of the same kind and gas, or of the same pair (in
// either order), are an error naming both files. Set.Files lists the files read; Set.Demo is true if any table
// is a demo table.
func LoadDir(dir string) (*opacity.Set, error) {
	entries, err := os.ReadDir(dir)
	if err != nil {
		return nil, fmt.Errorf("opacity: table directory: %w", err)
	}
	s := &opacity.Set{XSec: map[string]*opacity.XSecTable{}, K: map[string]*opacity.KTable{}}
	gasFile := map[string]string{}
	kFile := map[string]string{}
	pairFile := map[[2]string]string{}
	for _, e := range entries {
		if !strings.HasSuffix(e.Name(), ".parquet") {
			continue
		}
		path := filepath.Join(dir, e.Name())
		t, err := Read(path)
		if err != nil {
			return nil, err
		}
		x, c := t.XSec, t.CIA
		switch {
		case t.K != nil:
			if prev, dup := kFile[t.K.Gas]; dup {
				return nil, fmt.Errorf("opacity: table directory %s: k-tables of gas %s are in both %s and %s", dir, t.K.Gas, prev, path)
			}
			kFile[t.K.Gas] = path
			s.K[t.K.Gas] = t.K
			s.Demo = s.Demo || opacity.IsDemo(t.K.Meta)
		case x != nil:
			if prev, dup := gasFile[x.Gas]; dup {
				return nil, fmt.Errorf("opacity: table directory %s: gas %s is in both %s and %s", dir, x.Gas, prev, path)
			}
			gasFile[x.Gas] = path
			s.XSec[x.Gas] = x
			s.Demo = s.Demo || opacity.IsDemo(x.Meta)
		default:
			key := c.Pair
			if key[1] < key[0] {
				key[0], key[1] = key[1], key[0]
			}
			if prev, dup := pairFile[key]; dup {
				return nil, fmt.Errorf("opacity: table directory %s: CIA pair %s-%s is in both %s and %s", dir, c.Pair[0], c.Pair[1], prev, path)
			}
			pairFile[key] = path
			s.CIA = append(s.CIA, c)
			s.Demo = s.Demo || opacity.IsDemo(c.Meta)
		}
		s.Files = append(s.Files, path)
	}
	if len(s.Files) == 0 {
		return nil, fmt.Errorf("opacity: table directory %s holds no *.parquet table files", dir)
	}
	return s, nil
}
