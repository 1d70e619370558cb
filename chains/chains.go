package chains

import (
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"github.com/parquet-go/parquet-go"

	"chord/internal/atomicfile"
	"chord/internal/filehash"
	"chord/internal/table"
	"chord/internal/version"
	"chord/sampler"
)

// DirName is the chain store's directory inside a run directory.
const DirName = "chains"

// Format names the version of the chain file schema written in each part
// of an ensemble chain, FormatNested that of the dead points of a
// nested-sampling run.
const (
	Format       = "chord-chains/1"
	FormatNested = "chord-dead-points/1"
)

// Column roles in a Layout.
const (
	RoleParameter = "parameter" // a free parameter: Pos[walker*Dim+Source]
	RoleDerived   = "derived"   // an extra value: Extra[walker*NumExtra+Source]
)

// Column describes one value column of the chain rows after the fixed
// columns (step, walker and log_posterior; for nested sampling point,
// final, log_weight and log_posterior).
type Column struct {
	Name     string `json:"name"`
	Role     string `json:"role"`               // RoleParameter or RoleDerived
	Source   int    `json:"source"`             // index into the step's Pos (parameter) or Extra (derived) of one walker
	Quantity string `json:"quantity,omitempty"` // the physical quantity set or computed
	Unit     string `json:"unit,omitempty"`     // "" when dimensionless
	Prior    string `json:"prior,omitempty"`    // the prior, as text (parameters only)
}

// Layout is the shape of the chain rows of one run.
type Layout struct {
	// Nested marks the dead points of a nested-sampling run (one row per
	// point, written by WriteDead) instead of an ensemble chain (one row
	// per walker and step, written by WriteStep); Walkers is then 1.
	Nested   bool
	Walkers  int
	Dim      int // free parameters per walker (per point)
	NumExtra int // extra values per walker (per point)
	Columns  []Column
	// Meta holds further key-value metadata written into every part
	// (keys should start with "chord.").
	Meta map[string]string
}

// Validate checks the layout: positive sizes, unique non-empty names that do
// not clash with the fixed columns, sources inside Pos or Extra.
func (l *Layout) Validate() error {
	if l.Walkers < 1 || l.Dim < 1 || l.NumExtra < 0 {
		return fmt.Errorf("chain layout: walkers %d, parameters %d, extras %d: need walkers >= 1, parameters >= 1", l.Walkers, l.Dim, l.NumExtra)
	}
	if l.Nested && l.Walkers != 1 {
		return fmt.Errorf("chain layout: dead points of nested sampling with %d walkers, want 1", l.Walkers)
	}
	seen := map[string]bool{}
	for _, c := range l.fixedColumns() {
		seen[c.Name] = true
	}
	stored := make([]bool, l.Dim)
	for i, c := range l.Columns {
		if c.Name == "" {
			return fmt.Errorf("chain layout: column %d has no name", i)
		}
		if seen[c.Name] {
			return fmt.Errorf("chain layout: column name %q used twice", c.Name)
		}
		seen[c.Name] = true
		n := l.Dim
		switch c.Role {
		case RoleParameter:
		case RoleDerived:
			n = l.NumExtra
		default:
			return fmt.Errorf("chain layout: column %q has role %q, want %q or %q", c.Name, c.Role, RoleParameter, RoleDerived)
		}
		if c.Source < 0 || c.Source >= n {
			return fmt.Errorf("chain layout: column %q takes %s value %d of %d", c.Name, c.Role, c.Source, n)
		}
		if c.Role == RoleParameter {
			if stored[c.Source] {
				return fmt.Errorf("chain layout: parameter %d stored twice (column %q)", c.Source, c.Name)
			}
			stored[c.Source] = true
		}
	}
	for j, ok := range stored {
		if !ok {
			return fmt.Errorf("chain layout: parameter %d has no column (every free parameter is stored)", j)
		}
	}
	return nil
}

// ColumnNames returns the names of all columns of a part file, fixed ones first.
func (l *Layout) ColumnNames() []string {
	var names []string
	for _, c := range l.allColumns() {
		names = append(names, c.Name)
	}
	return names
}

// The fixed columns: two integer (for nested sampling, integer and
// boolean) index columns, then one or two doubles.
var (
	ensembleColumns = []Column{
		{Name: "step", Role: "index", Quantity: "ensemble step, 1 for the first step after the initial ensemble"},
		{Name: "walker", Role: "index", Quantity: "walker index from 0"},
		{Name: "log_posterior", Role: RoleLogDensity, Quantity: "natural log of the posterior density (unnormalised)"},
	}
	nestedColumns = []Column{
		{Name: "point", Role: "index", Quantity: "dead point, 1 for the first discarded live point"},
		{Name: "final", Role: "index", Quantity: "one of the live points added when the run finished"},
		{Name: "log_weight", Role: RoleLogWeight, Quantity: "natural log of prior mass times likelihood (unnormalised posterior weight; normalised by the run's final ln Z)"},
		{Name: "log_posterior", Role: RoleLogDensity, Quantity: "natural log of the posterior density (unnormalised)"},
	}
)

// Roles of the fixed value columns.
const (
	RoleLogDensity = "log_density" // log_posterior
	RoleLogWeight  = "log_weight"  // log_weight of a dead point
)

func (l *Layout) fixedColumns() []Column {
	if l.Nested {
		return nestedColumns
	}
	return ensembleColumns
}

// PartInfo describes one committed part file. For the dead points of a
// nested-sampling run, steps are points.
type PartInfo struct {
	Name      string `json:"name"` // base name, e.g. part-000001.parquet
	FirstStep int    `json:"first_step"`
	LastStep  int    `json:"last_step"`
	Rows      int64  `json:"rows"`
	Size      int64  `json:"size"`
	SHA256    string `json:"sha256"`
}

// LastStep returns the last step (or point) the parts hold, 0 for none.
func LastStep(parts []PartInfo) int {
	if len(parts) == 0 {
		return 0
	}
	return parts[len(parts)-1].LastStep
}

// partName returns the base name of part number i (1-based).
func partName(i int) string { return fmt.Sprintf("part-%06d.parquet", i) }

// partNumber parses a part's base name; ok is false for other names.
func partNumber(name string) (int, bool) {
	s, ok := strings.CutPrefix(name, "part-")
	if !ok {
		return 0, false
	}
	s, ok = strings.CutSuffix(s, ".parquet")
	if !ok || len(s) != 6 {
		return 0, false
	}
	n, err := strconv.Atoi(s)
	return n, err == nil && n > 0
}

// Writer streams chain rows into part files. It is the sampler's Recorder
// (Record) and Flusher (Flush commits the open part).
// Memory stays bounded by one Parquet row group whatever the chain length.
// After any write error the writer refuses further rows with the same error;
// parts committed before it are untouched.
type Writer struct {
	dir       string
	layout    Layout
	fs        atomicfile.FS
	schema    *parquet.Schema
	committed []PartInfo
	next      int // number of the next part
	nextStep  int // step index expected next

	cur      *openPart
	rows     []parquet.Row
	partMeta map[string]string // SetPartMeta's entries for the open part
	err      error
}

type openPart struct {
	name      string
	tmp       string
	file      atomicfile.File
	hw        *filehash.Writer
	pw        *parquet.Writer
	firstStep int
	lastStep  int
	rows      int64
}

// rowGroupRows bounds the rows buffered in memory per part (one row group).
const rowGroupRows = 1 << 15

func chainSchema(l *Layout) *parquet.Schema {
	var g table.Group
	for i, name := range l.ColumnNames() {
		leaf := parquet.Leaf(parquet.DoubleType)
		switch {
		case i == 0 || (i == 1 && !l.Nested):
			leaf = parquet.Leaf(parquet.Int64Type)
		case i == 1:
			leaf = parquet.Leaf(parquet.BooleanType)
		}
		g = append(g, table.Field(name, parquet.Compressed(parquet.Encoded(leaf, &parquet.Plain), &parquet.Snappy)))
	}
	return parquet.NewSchema("chord_chain", g)
}

// Create starts the chain store of a new run in dir, which must hold no
// part files.
func Create(dir string, layout Layout) (*Writer, error) {
	return NewWriter(atomicfile.OS, dir, layout, nil)
}

// Resume reopens the chain store of a run whose checkpoint lists the
// committed parts: it checks them (CheckParts), removes every other part or
// temporary file in dir (rows written after the checkpoint) and continues with
// the next part number and step.
func Resume(dir string, layout Layout, committed []PartInfo) (*Writer, []string, error) {
	if err := CheckParts(dir, committed, nil); err != nil {
		return nil, nil, err
	}
	removed, err := Trim(dir, committed)
	if err != nil {
		return nil, removed, err
	}
	w, err := NewWriter(atomicfile.OS, dir, layout, committed)
	return w, removed, err
}

// NewWriter opens the chain store in dir on fsys for writing after the
// committed parts (nil for a new store, which must hold no part files). It
// neither checks nor trims the committed parts (Resume does both).
func NewWriter(fsys atomicfile.FS, dir string, layout Layout, committed []PartInfo) (*Writer, error) {
	if err := layout.Validate(); err != nil {
		return nil, err
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("chain store: %w", err)
	}
	if committed == nil {
		names, err := listParts(dir)
		if err != nil {
			return nil, err
		}
		if len(names) > 0 {
			return nil, fmt.Errorf("chain store: %s already holds %s", dir, names[0])
		}
	}
	w := &Writer{
		dir:       dir,
		layout:    layout,
		fs:        fsys,
		schema:    chainSchema(&layout),
		committed: append([]PartInfo(nil), committed...),
		next:      len(committed) + 1,
		nextStep:  1,
	}
	if n := len(committed); n > 0 {
		w.nextStep = committed[n-1].LastStep + 1
	}
	ncol := len(layout.fixedColumns()) + len(layout.Columns)
	w.rows = make([]parquet.Row, layout.Walkers)
	for i := range w.rows {
		w.rows[i] = make(parquet.Row, ncol)
	}
	w.partMeta = map[string]string{}
	return w, nil
}

// Record writes the rows of the sampler's step (sampler.Recorder).
func (w *Writer) Record(s *sampler.Step) error {
	return w.WriteStep(s.Index, s.Pos, s.LogP, s.Extra)
}

var (
	_ sampler.Recorder = (*Writer)(nil)
	_ sampler.Flusher  = (*Writer)(nil)
)

// Committed returns the parts committed so far (the caller must not modify it).
func (w *Writer) Committed() []PartInfo { return w.committed }

// Err returns the error that stopped the writer, if any.
func (w *Writer) Err() error { return w.err }

// WriteStep appends the rows of one ensemble step: pos is walkers*dim,
// logp walkers, extra walkers*numExtra. Steps must come in order.
func (w *Writer) WriteStep(step int, pos, logp, extra []float64) error {
	if w.err != nil {
		return w.err
	}
	l := &w.layout
	if l.Nested {
		panic("chains: WriteStep on a store of dead points (use WriteDead)")
	}
	if len(pos) != l.Walkers*l.Dim || len(logp) != l.Walkers || len(extra) != l.Walkers*l.NumExtra {
		panic(fmt.Sprintf("retrieve: step of %d positions, %d log densities, %d extras for layout %d walkers x %d+%d", len(pos), len(logp), len(extra), l.Walkers, l.Dim, l.NumExtra))
	}
	if step != w.nextStep {
		w.err = fmt.Errorf("chain store: got step %d, expected step %d", step, w.nextStep)
		return w.err
	}
	if err := w.ensureOpen(step); err != nil {
		return err
	}
	for k := 0; k < l.Walkers; k++ {
		r := w.rows[k]
		r[0] = parquet.Int64Value(int64(step)).Level(0, 0, 0)
		r[1] = parquet.Int64Value(int64(k)).Level(0, 0, 1)
		r[2] = parquet.DoubleValue(logp[k]).Level(0, 0, 2)
		for j, c := range l.Columns {
			var v float64
			if c.Role == RoleParameter {
				v = pos[k*l.Dim+c.Source]
			} else {
				v = extra[k*l.NumExtra+c.Source]
			}
			r[3+j] = parquet.DoubleValue(v).Level(0, 0, 3+j)
		}
	}
	return w.writeRows(step)
}

// WriteDead appends one dead point of a nested-sampling run (a Nested
// layout): its index (points must come in order, 1 first), whether it is
// one of the final live points, its log weight and log posterior, its
// parameters x (len Dim) and extra values (len NumExtra).
func (w *Writer) WriteDead(point int, final bool, logWt, logPost float64, x, extra []float64) error {
	if w.err != nil {
		return w.err
	}
	l := &w.layout
	if !l.Nested {
		panic("chains: WriteDead on an ensemble chain store (use WriteStep)")
	}
	if len(x) != l.Dim || len(extra) != l.NumExtra {
		panic(fmt.Sprintf("chains: dead point of %d parameters and %d extras for layout %d+%d", len(x), len(extra), l.Dim, l.NumExtra))
	}
	if point != w.nextStep {
		w.err = fmt.Errorf("chain store: got dead point %d, expected point %d", point, w.nextStep)
		return w.err
	}
	if err := w.ensureOpen(point); err != nil {
		return err
	}
	r := w.rows[0]
	r[0] = parquet.Int64Value(int64(point)).Level(0, 0, 0)
	r[1] = parquet.BooleanValue(final).Level(0, 0, 1)
	r[2] = parquet.DoubleValue(logWt).Level(0, 0, 2)
	r[3] = parquet.DoubleValue(logPost).Level(0, 0, 3)
	for j, c := range l.Columns {
		var v float64
		if c.Role == RoleParameter {
			v = x[c.Source]
		} else {
			v = extra[c.Source]
		}
		r[4+j] = parquet.DoubleValue(v).Level(0, 0, 4+j)
	}
	return w.writeRows(point)
}

// ensureOpen opens a part starting at step (a dead point's index) unless
// one is open.
func (w *Writer) ensureOpen(step int) error {
	if w.cur != nil {
		return nil
	}
	if err := w.openPart(step); err != nil {
		return w.fail(err)
	}
	return nil
}

// writeRows writes w.rows as the rows of step.
func (w *Writer) writeRows(step int) error {
	if _, err := w.cur.pw.WriteRows(w.rows); err != nil {
		return w.fail(err)
	}
	w.cur.lastStep = step
	w.cur.rows += int64(len(w.rows))
	w.nextStep++
	return nil
}

// SetPartMeta sets a key-value metadata entry of the open part (or of the
// next one), written when it is committed; keys should start with "chord.".
// A nested run records its running evidence this way, so that every part
// states ln Z as it stood when the part was committed.
func (w *Writer) SetPartMeta(key, value string) { w.partMeta[key] = value }

func (w *Writer) openPart(step int) error {
	name := partName(w.next)
	tmp := filepath.Join(w.dir, name+".tmp")
	f, err := w.fs.Create(tmp)
	if err != nil {
		return err
	}
	hw := filehash.NewWriter(f)
	cols, err := json.Marshal(w.layout.allColumns())
	if err != nil {
		panic(err)
	}
	opts := []parquet.WriterOption{
		w.schema,
		parquet.MaxRowsPerRowGroup(rowGroupRows),
		parquet.CreatedBy("chord", version.Version, ""),
		parquet.KeyValueMetadata("chord.format", w.layout.format()),
		parquet.KeyValueMetadata("chord.columns", string(cols)),
		parquet.KeyValueMetadata("chord.walkers", strconv.Itoa(w.layout.Walkers)),
		parquet.KeyValueMetadata("chord.part", strconv.Itoa(w.next)),
	}
	keys := make([]string, 0, len(w.layout.Meta))
	for k := range w.layout.Meta {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		opts = append(opts, parquet.KeyValueMetadata(k, w.layout.Meta[k]))
	}
	w.cur = &openPart{name: name, tmp: tmp, file: f, hw: hw, pw: parquet.NewWriter(hw, opts...), firstStep: step}
	return nil
}

// ValueColumns returns the columns a Reader gives (Reader.Columns): every
// column after the two index columns.
func (l *Layout) ValueColumns() []Column { return l.allColumns()[2:] }

// allColumns lists the fixed and layout columns for the metadata.
func (l *Layout) allColumns() []Column {
	return append(append([]Column(nil), l.fixedColumns()...), l.Columns...)
}

func (l *Layout) format() string {
	if l.Nested {
		return FormatNested
	}
	return Format
}

// fail records err as the writer's final error, drops the open part's
// temporary file and says what is lost and what is safe.
func (w *Writer) fail(err error) error {
	lost := ""
	if w.cur != nil {
		w.cur.file.Close()
		w.fs.Remove(w.cur.tmp)
		if w.cur.rows > 0 {
			lost = fmt.Sprintf("; the rows of steps %d-%d, not yet committed, are lost", w.cur.firstStep, w.cur.lastStep)
		}
		err = fmt.Errorf("writing %s: %w", filepath.Join(w.dir, w.cur.name+".tmp"), err)
		w.cur = nil
	}
	safe := "no part file was committed before"
	if n := len(w.committed); n > 0 {
		safe = fmt.Sprintf("the %d committed part files (steps 1-%d) are intact", n, w.committed[n-1].LastStep)
	}
	w.err = fmt.Errorf("chain store: %w%s; %s", err, lost, safe)
	return w.err
}

// Flush commits the open part, if any (the sampler's Flusher).
func (w *Writer) Flush() error {
	_, err := w.Commit()
	return err
}

// Commit closes the open part as a complete file (temporary file, fsync,
// rename, directory fsync) and returns it; ok is false when no rows were
// written since the last commit.
func (w *Writer) Commit() (info PartInfo, err error) {
	if w.err != nil {
		return PartInfo{}, w.err
	}
	p := w.cur
	if p == nil {
		return PartInfo{}, nil
	}
	first, last := "chord.first_step", "chord.last_step"
	if w.layout.Nested {
		first, last = "chord.first_point", "chord.last_point"
	}
	p.pw.SetKeyValueMetadata(first, strconv.Itoa(p.firstStep))
	p.pw.SetKeyValueMetadata(last, strconv.Itoa(p.lastStep))
	keys := make([]string, 0, len(w.partMeta))
	for k := range w.partMeta {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		p.pw.SetKeyValueMetadata(k, w.partMeta[k])
	}
	if err := p.pw.Close(); err != nil {
		return PartInfo{}, w.fail(err)
	}
	if err := p.file.Sync(); err != nil {
		return PartInfo{}, w.fail(err)
	}
	if err := p.file.Close(); err != nil {
		return PartInfo{}, w.fail(err)
	}
	final := filepath.Join(w.dir, p.name)
	if err := w.fs.Rename(p.tmp, final); err != nil {
		return PartInfo{}, w.fail(err)
	}
	w.cur = nil
	if err := w.fs.SyncDir(w.dir); err != nil {
		return PartInfo{}, w.fail(fmt.Errorf("syncing %s: %w", w.dir, err))
	}
	info = PartInfo{
		Name: p.name, FirstStep: p.firstStep, LastStep: p.lastStep, Rows: p.rows,
		Size: p.hw.Size(), SHA256: p.hw.Sum(),
	}
	w.committed = append(w.committed, info)
	w.next++
	return info, nil
}

// Abort drops the open part's temporary file without committing it.
func (w *Writer) Abort() {
	if w.cur != nil {
		w.cur.file.Close()
		w.fs.Remove(w.cur.tmp)
		w.cur = nil
	}
}

// listParts returns the base names of the part files in dir, in order.
func listParts(dir string) ([]string, error) {
	ents, err := os.ReadDir(dir)
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return nil, nil
		}
		return nil, fmt.Errorf("chain store: %w", err)
	}
	var names []string
	for _, e := range ents {
		if _, ok := partNumber(e.Name()); ok {
			names = append(names, e.Name())
		}
	}
	sort.Strings(names)
	return names, nil
}

// CheckParts verifies that every committed part exists with its recorded
// size and SHA-256 digest and, for each key of meta, holds that key-value
// metadata (e.g. "chord.run_id": the run's identity, so that a part of
// another run is refused even with a checkpoint copied along). A
// *PartError names the first part that fails.
func CheckParts(dir string, parts []PartInfo, meta map[string]string) error {
	for i, p := range parts {
		err := checkPart(dir, p)
		if err == nil && len(meta) > 0 {
			err = checkMeta(filepath.Join(dir, p.Name), meta)
		}
		if err != nil {
			return &PartError{Index: i, Part: p, Err: err}
		}
	}
	return nil
}

// checkMeta checks the key-value metadata of the part file at path.
func checkMeta(path string, meta map[string]string) error {
	f, err := os.Open(path)
	if err != nil {
		return err
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return err
	}
	pf, err := parquet.OpenFile(f, st.Size())
	if err != nil {
		return err
	}
	keys := make([]string, 0, len(meta))
	for k := range meta {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		if got, _ := pf.Lookup(k); got != meta[k] {
			return fmt.Errorf("its %s is %q, this run's is %q: it belongs to another run", k, got, meta[k])
		}
	}
	return nil
}

// PartError reports a committed part file that is missing, damaged, or
// not the file the checkpoint recorded.
type PartError struct {
	Index int // position in the checkpoint's list of parts
	Part  PartInfo
	Err   error
}

func (e *PartError) Error() string {
	return fmt.Sprintf("chain part %s (steps %d-%d) is missing, damaged or replaced: %v", e.Part.Name, e.Part.FirstStep, e.Part.LastStep, e.Err)
}
func (e *PartError) Unwrap() error { return e.Err }

func checkPart(dir string, p PartInfo) error {
	got, n, err := filehash.File(filepath.Join(dir, p.Name))
	if err != nil {
		return err
	}
	if n != p.Size {
		return fmt.Errorf("size %d bytes, the checkpoint recorded %d", n, p.Size)
	}
	if got != p.SHA256 {
		return fmt.Errorf("SHA-256 %s, the checkpoint recorded %s", got, p.SHA256)
	}
	return nil
}

// Trim removes the part and temporary files of the store in dir that are
// not in keep (rows written after the checkpoint) and returns their names.
func Trim(dir string, keep []PartInfo) ([]string, error) {
	fsys := atomicfile.OS
	ents, err := os.ReadDir(dir)
	if err != nil {
		return nil, fmt.Errorf("chain store: %w", err)
	}
	kept := make(map[string]bool, len(keep))
	for _, p := range keep {
		kept[p.Name] = true
	}
	var removed []string
	for _, e := range ents {
		name := e.Name()
		base := strings.TrimSuffix(name, ".tmp")
		if _, ok := partNumber(base); !ok || (kept[name] && base == name) {
			continue
		}
		if err := fsys.Remove(filepath.Join(dir, name)); err != nil {
			return removed, fmt.Errorf("chain store: removing rows written after the checkpoint: %w", err)
		}
		removed = append(removed, name)
	}
	if len(removed) > 0 {
		if err := fsys.SyncDir(dir); err != nil {
			return removed, fmt.Errorf("chain store: %w", err)
		}
	}
	return removed, nil
}
