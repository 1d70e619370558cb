package retrieve

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"hash"
	"io"
	"os"
	"path/filepath"
	"reflect"
	"sort"
	"strconv"
	"strings"

	"github.com/parquet-go/parquet-go"
	"github.com/parquet-go/parquet-go/compress"
	"github.com/parquet-go/parquet-go/encoding"
)

// Chain store.
//
// The chains of a run are a Parquet dataset in RUNDIR/chains: part-000001.parquet,
// part-000002.parquet, ... Each part is a complete Parquet file holding the rows
// of consecutive ensemble steps, one row per walker and step, in step then
// walker order. Columns (all required, plain encoding, Snappy pages):
//
//	step           int64   ensemble step, 1 for the first step after the initial ensemble
//	walker         int64   walker index, 0 ... walkers-1
//	log_posterior  double  log posterior density (natural log)
//	...            double  the columns of the ChainLayout, in its order
//	               (log_likelihood, one column per free parameter, derived quantities)
//
// Key-value metadata of every part: "chord.format" (ChainFormat), "chord.columns"
// (a JSON array of ChainColumn: name, role, quantity, unit, prior),
// "chord.walkers", "chord.part", "chord.first_step", "chord.last_step", and the
// layout's own entries (program version, run identity, demo flag).
//
// A part is written to part-NNNNNN.parquet.tmp, closed, fsynced, renamed to its
// final name and the directory fsynced (Commit), so a part file either is
// complete or does not exist under its final name. The run's checkpoint lists
// the committed parts with their sizes and SHA-256 digests; rows not yet in a
// committed part are lost by a crash, nothing else.

// ChainFormat names the version of the chain file schema written in each part.
const ChainFormat = "chord-chains/1"

// Column roles in a ChainLayout.
const (
	RoleParameter = "parameter" // a free parameter: Pos[walker*Dim+Source]
	RoleDerived   = "derived"   // an extra value: Extra[walker*NumExtra+Source]
)

// ChainColumn describes one value column of the chain rows after the fixed
// step, walker and log_posterior columns.
type ChainColumn struct {
	Name     string `json:"name"`
	Role     string `json:"role"`               // RoleParameter or RoleDerived
	Source   int    `json:"source"`             // index into the step's Pos (parameter) or Extra (derived) of one walker
	Quantity string `json:"quantity,omitempty"` // the physical quantity set or computed
	Unit     string `json:"unit,omitempty"`     // "" when dimensionless
	Prior    string `json:"prior,omitempty"`    // the prior, as text (parameters only)
}

// ChainLayout is the shape of the chain rows of one run.
type ChainLayout struct {
	Walkers  int
	Dim      int // free parameters per walker
	NumExtra int // extra values per walker
	Columns  []ChainColumn
	// Meta holds further key-value metadata written into every part
	// (keys should start with "chord.").
	Meta map[string]string
}

// Validate checks the layout: positive sizes, unique non-empty names that do
// not clash with the fixed columns, sources inside Pos or Extra.
func (l *ChainLayout) Validate() error {
	if l.Walkers < 1 || l.Dim < 1 || l.NumExtra < 0 {
		return fmt.Errorf("chain layout: walkers %d, parameters %d, extras %d: need walkers >= 1, parameters >= 1", l.Walkers, l.Dim, l.NumExtra)
	}
	seen := map[string]bool{"step": true, "walker": true, "log_posterior": true}
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
func (l *ChainLayout) ColumnNames() []string {
	names := []string{"step", "walker", "log_posterior"}
	for _, c := range l.Columns {
		names = append(names, c.Name)
	}
	return names
}

// PartInfo describes one committed part file.
type PartInfo struct {
	Name      string `json:"name"` // base name, e.g. part-000001.parquet
	FirstStep int    `json:"first_step"`
	LastStep  int    `json:"last_step"`
	Rows      int64  `json:"rows"`
	Size      int64  `json:"size"`
	SHA256    string `json:"sha256"`
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

// fileSystem is what the chain store and the checkpoint need from the
// operating system; tests substitute one that fails (a full disk).
type fileSystem interface {
	Create(name string) (writableFile, error)
	Rename(oldName, newName string) error
	Remove(name string) error
	SyncDir(dir string) error
}

type writableFile interface {
	io.Writer
	Sync() error
	Close() error
}

type osFS struct{}

func (osFS) Create(name string) (writableFile, error) {
	return os.OpenFile(name, os.O_WRONLY|os.O_CREATE|os.O_TRUNC, 0o644)
}
func (osFS) Rename(o, n string) error { return os.Rename(o, n) }
func (osFS) Remove(name string) error { return os.Remove(name) }
func (osFS) SyncDir(dir string) error {
	d, err := os.Open(dir)
	if err != nil {
		return err
	}
	err = d.Sync()
	if cerr := d.Close(); err == nil {
		err = cerr
	}
	return err
}

// writeFileAtomic writes data to path through a temporary file that is
// synced and renamed, then syncs the directory.
func writeFileAtomic(fsys fileSystem, path string, data []byte) error {
	tmp := path + ".tmp"
	f, err := fsys.Create(tmp)
	if err != nil {
		return err
	}
	_, err = f.Write(data)
	if err == nil {
		err = f.Sync()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = fsys.Rename(tmp, path)
	}
	if err != nil {
		fsys.Remove(tmp)
		return err
	}
	return fsys.SyncDir(filepath.Dir(path))
}

// hashingWriter counts and hashes what passes through it.
type hashingWriter struct {
	w    io.Writer
	h    hash.Hash
	size int64
}

func (hw *hashingWriter) Write(p []byte) (int, error) {
	n, err := hw.w.Write(p)
	hw.h.Write(p[:n])
	hw.size += int64(n)
	return n, err
}

// ChainWriter streams chain rows into part files. It implements the
// sampler's Recorder (Record) and Flusher (Flush commits the open part).
// Memory stays bounded by one Parquet row group whatever the chain length.
// After any write error the writer refuses further rows with the same error;
// parts committed before it are untouched.
type ChainWriter struct {
	dir       string
	layout    ChainLayout
	fs        fileSystem
	schema    *parquet.Schema
	committed []PartInfo
	next      int // number of the next part
	nextStep  int // step index expected next

	cur  *openPart
	rows []parquet.Row
	err  error
}

type openPart struct {
	name      string
	tmp       string
	file      writableFile
	hw        *hashingWriter
	pw        *parquet.Writer
	firstStep int
	lastStep  int
	rows      int64
}

// rowGroupRows bounds the rows buffered in memory per part (one row group).
const rowGroupRows = 1 << 15

// orderedGroup is a Parquet group node whose fields keep the given order
// (parquet.Group sorts them by name).
type orderedGroup []parquet.Field

func (g orderedGroup) ID() int                        { return 0 }
func (g orderedGroup) String() string                 { return "chain row" }
func (g orderedGroup) Type() parquet.Type             { return parquet.Group{}.Type() }
func (g orderedGroup) Optional() bool                 { return false }
func (g orderedGroup) Repeated() bool                 { return false }
func (g orderedGroup) Required() bool                 { return true }
func (g orderedGroup) Leaf() bool                     { return false }
func (g orderedGroup) Fields() []parquet.Field        { return g }
func (g orderedGroup) Encoding() encoding.Encoding    { return nil }
func (g orderedGroup) Compression() compress.Codec    { return nil }
func (g orderedGroup) GoType() reflect.Type           { return reflect.TypeFor[map[string]any]() }
func (f namedLeaf) Name() string                      { return f.name }
func (f namedLeaf) Value(reflect.Value) reflect.Value { return reflect.Value{} }

type namedLeaf struct {
	parquet.Node
	name string
}

func chainSchema(l *ChainLayout) *parquet.Schema {
	var g orderedGroup
	for i, name := range l.ColumnNames() {
		leaf := parquet.Leaf(parquet.DoubleType)
		if i < 2 {
			leaf = parquet.Leaf(parquet.Int64Type)
		}
		g = append(g, namedLeaf{Node: parquet.Compressed(parquet.Encoded(leaf, &parquet.Plain), &parquet.Snappy), name: name})
	}
	return parquet.NewSchema("chord_chain", g)
}

// CreateChains starts the chain store of a new run in dir, which must hold no
// part files.
func CreateChains(dir string, layout ChainLayout) (*ChainWriter, error) {
	return newChainWriter(osFS{}, dir, layout, nil)
}

// ResumeChains reopens the chain store of a run whose checkpoint lists the
// committed parts: it checks them (CheckParts), removes every other part or
// temporary file in dir (rows written after the checkpoint) and continues with
// the next part number and step.
func ResumeChains(dir string, layout ChainLayout, committed []PartInfo) (*ChainWriter, []string, error) {
	if err := CheckParts(dir, committed); err != nil {
		return nil, nil, err
	}
	removed, err := trimParts(osFS{}, dir, committed)
	if err != nil {
		return nil, removed, err
	}
	w, err := newChainWriter(osFS{}, dir, layout, committed)
	return w, removed, err
}

func newChainWriter(fsys fileSystem, dir string, layout ChainLayout, committed []PartInfo) (*ChainWriter, error) {
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
	w := &ChainWriter{
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
	ncol := 3 + len(layout.Columns)
	w.rows = make([]parquet.Row, layout.Walkers)
	for i := range w.rows {
		w.rows[i] = make(parquet.Row, ncol)
	}
	return w, nil
}

// Committed returns the parts committed so far (the caller must not modify it).
func (w *ChainWriter) Committed() []PartInfo { return w.committed }

// Err returns the error that stopped the writer, if any.
func (w *ChainWriter) Err() error { return w.err }

// WriteStep appends the rows of one ensemble step: pos is walkers*dim,
// logp walkers, extra walkers*numExtra. Steps must come in order.
func (w *ChainWriter) WriteStep(step int, pos, logp, extra []float64) error {
	if w.err != nil {
		return w.err
	}
	l := &w.layout
	if len(pos) != l.Walkers*l.Dim || len(logp) != l.Walkers || len(extra) != l.Walkers*l.NumExtra {
		panic(fmt.Sprintf("retrieve: step of %d positions, %d log densities, %d extras for layout %d walkers x %d+%d", len(pos), len(logp), len(extra), l.Walkers, l.Dim, l.NumExtra))
	}
	if step != w.nextStep {
		w.err = fmt.Errorf("chain store: got step %d, expected step %d", step, w.nextStep)
		return w.err
	}
	if w.cur == nil {
		if err := w.openPart(step); err != nil {
			return w.fail(err)
		}
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
	if _, err := w.cur.pw.WriteRows(w.rows); err != nil {
		return w.fail(err)
	}
	w.cur.lastStep = step
	w.cur.rows += int64(l.Walkers)
	w.nextStep++
	return nil
}

func (w *ChainWriter) openPart(step int) error {
	name := partName(w.next)
	tmp := filepath.Join(w.dir, name+".tmp")
	f, err := w.fs.Create(tmp)
	if err != nil {
		return err
	}
	hw := &hashingWriter{w: f, h: sha256.New()}
	cols, err := json.Marshal(w.layout.allColumns())
	if err != nil {
		panic(err)
	}
	opts := []parquet.WriterOption{
		w.schema,
		parquet.MaxRowsPerRowGroup(rowGroupRows),
		parquet.CreatedBy("chord", Version, ""),
		parquet.KeyValueMetadata("chord.format", ChainFormat),
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

// allColumns lists the fixed and layout columns for the metadata.
func (l *ChainLayout) allColumns() []ChainColumn {
	cols := []ChainColumn{
		{Name: "step", Role: "index", Quantity: "ensemble step, 1 for the first step after the initial ensemble"},
		{Name: "walker", Role: "index", Quantity: "walker index from 0"},
		{Name: "log_posterior", Role: "log_density", Quantity: "natural log of the posterior density (unnormalised)"},
	}
	return append(cols, l.Columns...)
}

// fail records err as the writer's final error, drops the open part's
// temporary file and says what is lost and what is safe.
func (w *ChainWriter) fail(err error) error {
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
func (w *ChainWriter) Flush() error {
	_, err := w.Commit()
	return err
}

// Commit closes the open part as a complete file (temporary file, fsync,
// rename, directory fsync) and returns it; ok is false when no rows were
// written since the last commit.
func (w *ChainWriter) Commit() (info PartInfo, err error) {
	if w.err != nil {
		return PartInfo{}, w.err
	}
	p := w.cur
	if p == nil {
		return PartInfo{}, nil
	}
	p.pw.SetKeyValueMetadata("chord.first_step", strconv.Itoa(p.firstStep))
	p.pw.SetKeyValueMetadata("chord.last_step", strconv.Itoa(p.lastStep))
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
		Size: p.hw.size, SHA256: hex.EncodeToString(p.hw.h.Sum(nil)),
	}
	w.committed = append(w.committed, info)
	w.next++
	return info, nil
}

// Abort drops the open part's temporary file without committing it.
func (w *ChainWriter) Abort() {
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
// size and SHA-256 digest. A *PartError names the first damaged part.
func CheckParts(dir string, parts []PartInfo) error {
	for i, p := range parts {
		if err := checkPart(dir, p); err != nil {
			return &PartError{Index: i, Part: p, Err: err}
		}
	}
	return nil
}

// PartError reports a committed part file that is missing or damaged.
type PartError struct {
	Index int // position in the checkpoint's list of parts
	Part  PartInfo
	Err   error
}

func (e *PartError) Error() string {
	return fmt.Sprintf("chain part %s (steps %d-%d) is damaged: %v", e.Part.Name, e.Part.FirstStep, e.Part.LastStep, e.Err)
}
func (e *PartError) Unwrap() error { return e.Err }

func checkPart(dir string, p PartInfo) error {
	f, err := os.Open(filepath.Join(dir, p.Name))
	if err != nil {
		return err
	}
	defer f.Close()
	h := sha256.New()
	n, err := io.Copy(h, f)
	if err != nil {
		return err
	}
	if n != p.Size {
		return fmt.Errorf("size %d bytes, the checkpoint recorded %d", n, p.Size)
	}
	if got := hex.EncodeToString(h.Sum(nil)); got != p.SHA256 {
		return fmt.Errorf("SHA-256 %s, the checkpoint recorded %s", got, p.SHA256)
	}
	return nil
}

// trimParts removes the part and temporary files of dir not in keep.
func trimParts(fsys fileSystem, dir string, keep []PartInfo) ([]string, error) {
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

// Chains holds chain rows read back for reports: the kept steps (after
// burn-in and thinning) of every walker, one slice per value column.
type Chains struct {
	Walkers int
	Steps   []int         // the kept step indexes, ascending
	Columns []ChainColumn // log_posterior (role "log_density") then the layout's columns
	// Values[c][i*Walkers+k] is column c at kept step i for walker k.
	Values [][]float64
	// TotalSteps is the number of steps in the chain files read.
	TotalSteps int
}

// Column returns the values of the named column, or nil.
func (c *Chains) Column(name string) []float64 {
	for i, col := range c.Columns {
		if col.Name == name {
			return c.Values[i]
		}
	}
	return nil
}

// ReadChains reads the given parts of the chain store in dir (all part files
// when parts is nil), keeping steps s > burn with (s-burn) % thin == 0. It
// checks that the rows are the consecutive steps 1, 2, ... each with every
// walker in order, and that all parts share one set of columns.
func ReadChains(dir string, parts []PartInfo, burn, thin int) (*Chains, error) {
	if burn < 0 || thin < 1 {
		return nil, fmt.Errorf("chains: burn-in %d and thinning %d: need burn >= 0, thin >= 1", burn, thin)
	}
	out := &Chains{}
	total, err := scanParts(dir, parts, func(cols []ChainColumn, walkers int) {
		out.Columns = cols[2:]
		out.Values = make([][]float64, len(out.Columns))
		out.Walkers = walkers
	}, func(s, k int, row parquet.Row) error {
		if s > burn && (s-burn)%thin == 0 {
			if k == 0 {
				out.Steps = append(out.Steps, s)
			}
			for c := range out.Columns {
				out.Values[c] = append(out.Values[c], row[2+c].Double())
			}
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	out.TotalSteps = total
	if len(out.Steps) == 0 {
		return nil, fmt.Errorf("chains: no steps left after burn-in %d and thinning %d of %d steps", burn, thin, out.TotalSteps)
	}
	return out, nil
}

// scanParts streams the rows of the given parts (all part files in dir when
// parts is nil) to row, after calling start with the columns (fixed ones
// included) and the walker count of the first part. It checks that the rows
// are the consecutive steps 1, 2, ... each with every walker in order, and
// that all parts share one set of columns; it returns the number of steps.
func scanParts(dir string, parts []PartInfo, start func(cols []ChainColumn, walkers int), row func(step, walker int, r parquet.Row) error) (int, error) {
	var names []string
	if parts == nil {
		var err error
		if names, err = listParts(dir); err != nil {
			return 0, err
		}
	} else {
		for _, p := range parts {
			names = append(names, p.Name)
		}
	}
	if len(names) == 0 {
		return 0, fmt.Errorf("chains: no part files in %s", dir)
	}
	var colsJSON string
	ncol, walkers := 0, 0
	step, walker := 1, 0
	buf := make([]parquet.Row, 1024)
	for _, name := range names {
		path := filepath.Join(dir, name)
		err := func() error {
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
			cj, _ := pf.Lookup("chord.columns")
			if format, _ := pf.Lookup("chord.format"); format != ChainFormat {
				return fmt.Errorf("chord.format is %q, want %q", format, ChainFormat)
			}
			if colsJSON == "" {
				colsJSON = cj
				var all []ChainColumn
				if err := json.Unmarshal([]byte(cj), &all); err != nil || len(all) < 3 {
					return fmt.Errorf("bad chord.columns metadata")
				}
				ncol = len(all)
				if len(pf.Schema().Columns()) != ncol {
					return fmt.Errorf("%d columns, metadata lists %d", len(pf.Schema().Columns()), ncol)
				}
				ws, _ := pf.Lookup("chord.walkers")
				if walkers, err = strconv.Atoi(ws); err != nil || walkers < 1 {
					return fmt.Errorf("bad chord.walkers metadata %q", ws)
				}
				start(all, walkers)
			} else if cj != colsJSON {
				return fmt.Errorf("columns differ from those of %s", names[0])
			}
			r := parquet.NewReader(pf)
			defer r.Close()
			for {
				n, err := r.ReadRows(buf)
				for _, rw := range buf[:n] {
					if len(rw) != ncol {
						return fmt.Errorf("row of %d values, want %d", len(rw), ncol)
					}
					s, k := int(rw[0].Int64()), int(rw[1].Int64())
					if s != step || k != walker {
						return fmt.Errorf("found step %d walker %d where step %d walker %d was expected", s, k, step, walker)
					}
					if err := row(s, k, rw); err != nil {
						return err
					}
					if walker++; walker == walkers {
						walker, step = 0, step+1
					}
				}
				if err == io.EOF {
					return nil
				}
				if err != nil {
					return err
				}
			}
		}()
		if err != nil {
			return 0, fmt.Errorf("chains: %s: %w", path, err)
		}
	}
	if walker != 0 {
		return 0, fmt.Errorf("chains: %s ends inside step %d (walker %d of %d)", dir, step, walker, walkers)
	}
	return step - 1, nil
}

// Sample fills dst (len Dim, allocated if nil) with the free-parameter
// vector of sample i (kept step i/Walkers, walker i%Walkers), placing each
// parameter column at its Source index.
func (c *Chains) Sample(dst []float64, i int) []float64 {
	dim := 0
	for _, col := range c.Columns {
		if col.Role == RoleParameter {
			dim = max(dim, col.Source+1)
		}
	}
	if dst == nil {
		dst = make([]float64, dim)
	}
	for j, col := range c.Columns {
		if col.Role == RoleParameter {
			dst[col.Source] = c.Values[j][i]
		}
	}
	return dst
}

// Walker returns column c of walker k over the kept steps, into dst.
func (c *Chains) Walker(dst []float64, col, k int) []float64 {
	dst = dst[:0]
	for i := range c.Steps {
		dst = append(dst, c.Values[col][i*c.Walkers+k])
	}
	return dst
}
