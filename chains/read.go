package chains

import (
	"encoding/json"
	"fmt"
	"io"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strconv"

	"chord/sampler"

	"github.com/parquet-go/parquet-go"
)

// Chain holds the rows of a stored chain read back for reports: the kept
// steps (after burn-in and thinning) of every walker, one slice per value
// column. The equal-weight posterior samples of a nested-sampling run
// (ReadEqualWeight) are a Chain of one walker whose steps are the samples.
type Chain struct {
	Walkers int
	Steps   []int    // the kept step indexes, ascending
	Columns []Column // log_posterior (role "log_density") then the layout's columns
	// Values[c][i*Walkers+k] is column c at kept step i for walker k.
	Values [][]float64
	// TotalSteps is the number of steps in the chain files read (for
	// nested sampling, of dead points).
	TotalSteps int
	// EffectiveSize is, for the samples of a nested-sampling run, Kish's
	// effective size of the dead points' weights (sampler.EffectiveSize);
	// 0 for an ensemble chain.
	EffectiveSize float64
}

// Column returns the values of the named column, or nil.
func (c *Chain) Column(name string) []float64 {
	for i, col := range c.Columns {
		if col.Name == name {
			return c.Values[i]
		}
	}
	return nil
}

// Read reads the given parts of the chain store in dir (all part files
// when parts is nil), keeping steps s > burn with (s-burn) % thin == 0,
// with the checks of Reader.
func Read(dir string, parts []PartInfo, burn, thin int) (*Chain, error) {
	if burn < 0 || thin < 1 {
		return nil, fmt.Errorf("chains: burn-in %d and thinning %d: need burn >= 0, thin >= 1", burn, thin)
	}
	r, err := NewReader(dir, parts)
	if err != nil {
		return nil, err
	}
	defer r.Close()
	if r.Nested() {
		return nil, fmt.Errorf("chains: %s holds the weighted dead points of nested sampling, not a chain; read them with ReadEqualWeight", dir)
	}
	out := &Chain{Walkers: r.Walkers(), Columns: r.Columns()}
	out.Values = make([][]float64, len(out.Columns))
	for {
		s, err := r.Next()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, err
		}
		if s <= burn || (s-burn)%thin != 0 {
			continue
		}
		out.Steps = append(out.Steps, s)
		for k := range out.Walkers {
			for c, v := range r.Walker(k) {
				out.Values[c] = append(out.Values[c], v)
			}
		}
	}
	out.TotalSteps = r.Step()
	if len(out.Steps) == 0 {
		return nil, fmt.Errorf("chains: no steps left after burn-in %d and thinning %d of %d steps", burn, thin, out.TotalSteps)
	}
	return out, nil
}

// Points are weighted points of a nested-sampling run that are not in its
// store: the live points of a run that has not finished, each with the
// share of the prior mass left it would get as a final point. Columns are
// the store's value columns (Layout.ValueColumns: log_weight first) and
// each row holds one value per column.
type Points struct {
	Columns []Column
	Rows    [][]float64
}

// ReadEqualWeight reads the dead points of a nested-sampling run from the
// given parts of the store in dir (all part files when parts is nil; none
// when parts is empty), followed by the points of more (nil for none),
// and resamples them into equally weighted posterior samples
// (sampler.EqualWeight, systematic resampling with one uniform draw from
// rng), as many as the weights' effective size (sampler.EffectiveSize,
// rounded). The result is a Chain of one walker whose steps 1, 2, ... are
// the samples in the order of their points, with the columns log_posterior
// and the layout's (log_weight dropped); TotalSteps counts the points. It
// reads the store twice, keeping one weight per point and the samples in
// memory.
func ReadEqualWeight(dir string, parts []PartInfo, more *Points, rng *rand.Rand) (*Chain, error) {
	var cols []Column
	var logWt []float64
	stored := parts == nil || len(parts) > 0
	if stored {
		r, err := NewReader(dir, parts)
		if err != nil {
			return nil, err
		}
		if !r.Nested() {
			r.Close()
			return nil, fmt.Errorf("chains: %s holds an ensemble chain, not the dead points of nested sampling", dir)
		}
		cols = r.Columns()
		for {
			if _, err := r.Next(); err == io.EOF {
				break
			} else if err != nil {
				r.Close()
				return nil, err
			}
			logWt = append(logWt, r.Walker(0)[0])
		}
		r.Close()
	}
	if more != nil {
		if !stored {
			cols = more.Columns
		} else if !slices.Equal(cols, more.Columns) {
			return nil, fmt.Errorf("chains: the points added to %s have other columns than its dead points", dir)
		}
		for _, row := range more.Rows {
			logWt = append(logWt, row[0])
		}
	}
	if len(cols) == 0 || cols[0].Role != RoleLogWeight {
		return nil, fmt.Errorf("chains: no dead points in %s", dir)
	}
	ess := sampler.EffectiveSize(logWt)
	if !(ess > 0) {
		return nil, fmt.Errorf("chains: none of the %d points of %s has a positive weight (every likelihood was zero)", len(logWt), dir)
	}
	idx := sampler.EqualWeight(nil, logWt, rng)

	out := &Chain{Walkers: 1, Columns: cols[1:], Values: make([][]float64, len(cols)-1), TotalSteps: len(logWt), EffectiveSize: ess}
	for c := range out.Values {
		out.Values[c] = make([]float64, 0, len(idx))
	}
	j := 0
	take := func(p int, row []float64) { // p counts points from 1
		for ; j < len(idx) && idx[j] == p-1; j++ {
			out.Steps = append(out.Steps, j+1)
			for c, v := range row[1:] {
				out.Values[c] = append(out.Values[c], v)
			}
		}
	}
	n := 0
	if stored {
		r, err := NewReader(dir, parts)
		if err != nil {
			return nil, err
		}
		defer r.Close()
		for j < len(idx) {
			p, err := r.Next()
			if err == io.EOF {
				break
			}
			if err != nil {
				return nil, err
			}
			take(p, r.Walker(0))
			n = p
		}
	}
	if more != nil {
		for i, row := range more.Rows {
			take(n+i+1, row)
		}
	}
	if j != len(idx) {
		return nil, fmt.Errorf("chains: %s changed while it was read", dir)
	}
	return out, nil
}

// Reader streams a stored chain one ensemble step at a time, as
// archive/tar's Reader streams entries: Next advances to the next step,
// whose values Walker then gives. Memory stays bounded by one read buffer
// whatever the chain length. It checks as it goes that the rows are the
// consecutive steps 1, 2, ... each with every walker in order, and that all
// parts share one set of columns; errors name the part file.
//
// A store of the dead points of nested sampling reads the same way, one
// point per step with one walker: its value columns begin with log_weight
// (role "log_weight"), and Final tells the final live points.
type Reader struct {
	dir     string
	names   []string // part files, in order
	next    int      // index in names of the next file to open
	colsJS  string   // chord.columns of the first part
	cols    []Column // value columns: log_posterior (nested: log_weight, log_posterior), then the layout's
	walkers int
	nested  bool
	final   bool      // nested: the current point is a final live point
	step    int       // the current step, 0 before the first Next
	vals    []float64 // walkers x len(cols) of the current step

	f    *os.File
	path string
	pr   *parquet.Reader
	buf  []parquet.Row
	n, i int // rows in buf, next row in buf
	eof  bool
}

// NewReader opens the given parts of the chain store in dir (all part
// files in dir when parts is nil) and reads the first part's columns and
// walker count.
func NewReader(dir string, parts []PartInfo) (*Reader, error) {
	r := &Reader{dir: dir, buf: make([]parquet.Row, 1024)}
	if parts == nil {
		var err error
		if r.names, err = listParts(dir); err != nil {
			return nil, err
		}
	} else {
		for _, p := range parts {
			r.names = append(r.names, p.Name)
		}
	}
	if len(r.names) == 0 {
		return nil, fmt.Errorf("chains: no part files in %s", dir)
	}
	if err := r.open(); err != nil {
		return nil, err
	}
	r.vals = make([]float64, r.walkers*len(r.cols))
	return r, nil
}

// Columns returns the value columns: log_posterior (role "log_density"),
// then the layout's columns. The caller must not modify it.
func (r *Reader) Columns() []Column { return r.cols }

// Walkers returns the number of walkers (1 for dead points).
func (r *Reader) Walkers() int { return r.walkers }

// Nested reports whether the store holds the dead points of nested
// sampling.
func (r *Reader) Nested() bool { return r.nested }

// Final reports whether the current dead point is one of the live points
// added when the run finished (false for ensemble chains).
func (r *Reader) Final() bool { return r.final }

// Step returns the current step (the number of steps read).
func (r *Reader) Step() int { return r.step }

// Walker returns walker k's values of the current step, one per column of
// Columns; the slice is overwritten by the next call of Next.
func (r *Reader) Walker(k int) []float64 {
	n := len(r.cols)
	return r.vals[k*n : (k+1)*n]
}

// StepTo fills dst, sized for the chain's walkers, parameters and extras,
// with the current step as the sampler recorded it (the inverse of
// Writer.Record): the index, the log posteriors, and every column at its
// Source in Pos (parameters) or Extra (derived values). dst.Accepted is
// left as it is: acceptance is not stored.
func (r *Reader) StepTo(dst *sampler.Step) error {
	if dst.Walkers != r.walkers || len(dst.LogP) != r.walkers || len(dst.Pos) != r.walkers*dst.Dim || len(dst.Extra) != r.walkers*dst.NumExtra {
		return fmt.Errorf("chains: a step of %d walkers x %d parameters + %d extras for a chain of %d walkers", dst.Walkers, dst.Dim, dst.NumExtra, r.walkers)
	}
	dst.Index = r.step
	for k := range r.walkers {
		for c, v := range r.Walker(k) {
			col := r.cols[c]
			switch {
			case col.Role == RoleParameter && col.Source < dst.Dim:
				dst.Pos[k*dst.Dim+col.Source] = v
			case col.Role == RoleDerived && col.Source < dst.NumExtra:
				dst.Extra[k*dst.NumExtra+col.Source] = v
			case c == 0:
				dst.LogP[k] = v
			default:
				return fmt.Errorf("chains: column %q (%s %d) does not fit a step of %d parameters and %d extras", col.Name, col.Role, col.Source, dst.Dim, dst.NumExtra)
			}
		}
	}
	return nil
}

// Next reads the next step and returns its index; after the last complete
// step it returns io.EOF.
func (r *Reader) Next() (int, error) {
	n := len(r.cols)
	for k := range r.walkers {
		row, err := r.row()
		if err == io.EOF {
			if k != 0 {
				return r.step, fmt.Errorf("chains: %s ends inside step %d (walker %d of %d)", r.dir, r.step+1, k, r.walkers)
			}
			return r.step, io.EOF
		}
		if err != nil {
			return r.step, err
		}
		if r.nested {
			if p := int(row[0].Int64()); p != r.step+1 {
				return r.step, r.fail(fmt.Errorf("found dead point %d where point %d was expected", p, r.step+1))
			}
			f := row[1].Boolean()
			if r.final && !f {
				return r.step, r.fail(fmt.Errorf("dead point %d is not final but follows a final point", r.step+1))
			}
			r.final = f
		} else if s, w := int(row[0].Int64()), int(row[1].Int64()); s != r.step+1 || w != k {
			return r.step, r.fail(fmt.Errorf("found step %d walker %d where step %d walker %d was expected", s, w, r.step+1, k))
		}
		for c := range n {
			r.vals[k*n+c] = row[2+c].Double()
		}
	}
	r.step++
	return r.step, nil
}

// Close closes the part file being read.
func (r *Reader) Close() error {
	if r.f == nil {
		return nil
	}
	r.pr.Close()
	err := r.f.Close()
	r.f = nil
	return err
}

// row returns the next row, opening the next part when one ends; io.EOF
// after the last part.
func (r *Reader) row() (parquet.Row, error) {
	for r.i == r.n {
		if r.eof {
			r.Close()
			if r.next == len(r.names) {
				return nil, io.EOF
			}
			if err := r.open(); err != nil {
				return nil, err
			}
		}
		n, err := r.pr.ReadRows(r.buf)
		r.n, r.i = n, 0
		if err == io.EOF {
			r.eof = true
		} else if err != nil {
			return nil, r.fail(err)
		}
	}
	row := r.buf[r.i]
	r.i++
	if len(row) != 2+len(r.cols) {
		return nil, r.fail(fmt.Errorf("row of %d values, want %d", len(row), 2+len(r.cols)))
	}
	return row, nil
}

// open opens the next part and checks its metadata against the first's.
func (r *Reader) open() error {
	r.path = filepath.Join(r.dir, r.names[r.next])
	first := r.next == 0
	r.next++
	f, err := os.Open(r.path)
	if err != nil {
		return r.fail(err)
	}
	r.f = f
	st, err := f.Stat()
	if err != nil {
		return r.fail(err)
	}
	pf, err := parquet.OpenFile(f, st.Size())
	if err != nil {
		return r.fail(err)
	}
	cj, _ := pf.Lookup("chord.columns")
	format, _ := pf.Lookup("chord.format")
	if format != Format && format != FormatNested {
		return r.fail(fmt.Errorf("chord.format is %q, want %q or %q", format, Format, FormatNested))
	}
	if nested := format == FormatNested; first {
		r.nested = nested
	} else if nested != r.nested {
		return r.fail(fmt.Errorf("chord.format %q differs from that of %s", format, r.names[0]))
	}
	if first {
		r.colsJS = cj
		var all []Column
		if err := json.Unmarshal([]byte(cj), &all); err != nil || len(all) < 3 {
			return r.fail(fmt.Errorf("bad chord.columns metadata"))
		}
		if len(pf.Schema().Columns()) != len(all) {
			return r.fail(fmt.Errorf("%d columns, metadata lists %d", len(pf.Schema().Columns()), len(all)))
		}
		ws, _ := pf.Lookup("chord.walkers")
		if r.walkers, err = strconv.Atoi(ws); err != nil || r.walkers < 1 || (r.nested && r.walkers != 1) {
			return r.fail(fmt.Errorf("bad chord.walkers metadata %q", ws))
		}
		r.cols = all[2:]
	} else if cj != r.colsJS {
		return r.fail(fmt.Errorf("columns differ from those of %s", r.names[0]))
	}
	r.pr = parquet.NewReader(pf)
	r.n, r.i, r.eof = 0, 0, false
	return nil
}

// fail closes the open part and names it in err.
func (r *Reader) fail(err error) error {
	if r.f != nil {
		r.f.Close()
		r.f = nil
	}
	return fmt.Errorf("chains: %s: %w", r.path, err)
}

// Sample fills dst (len Dim, allocated if nil) with the free-parameter
// vector of sample i (kept step i/Walkers, walker i%Walkers), placing each
// parameter column at its Source index.
func (c *Chain) Sample(dst []float64, i int) []float64 {
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
func (c *Chain) Walker(dst []float64, col, k int) []float64 {
	dst = dst[:0]
	for i := range c.Steps {
		dst = append(dst, c.Values[col][i*c.Walkers+k])
	}
	return dst
}
