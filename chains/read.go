package chains

import (
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"

	"github.com/parquet-go/parquet-go"
)

// Chain holds the rows of a stored chain read back for reports: the kept
// steps (after burn-in and thinning) of every walker, one slice per value
// column.
type Chain struct {
	Walkers int
	Steps   []int    // the kept step indexes, ascending
	Columns []Column // log_posterior (role "log_density") then the layout's columns
	// Values[c][i*Walkers+k] is column c at kept step i for walker k.
	Values [][]float64
	// TotalSteps is the number of steps in the chain files read.
	TotalSteps int
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
// when parts is nil), keeping steps s > burn with (s-burn) % thin == 0. It
// checks that the rows are the consecutive steps 1, 2, ... each with every
// walker in order, and that all parts share one set of columns.
func Read(dir string, parts []PartInfo, burn, thin int) (*Chain, error) {
	if burn < 0 || thin < 1 {
		return nil, fmt.Errorf("chains: burn-in %d and thinning %d: need burn >= 0, thin >= 1", burn, thin)
	}
	out := &Chain{}
	total, err := Scan(dir, parts, func(cols []Column, walkers int) {
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

// Scan streams the rows of the given parts (all part files in dir when
// parts is nil) to row, after calling start with the columns (fixed ones
// included) and the walker count of the first part. It checks that the rows
// are the consecutive steps 1, 2, ... each with every walker in order, and
// that all parts share one set of columns; it returns the number of steps.
func Scan(dir string, parts []PartInfo, start func(cols []Column, walkers int), row func(step, walker int, r parquet.Row) error) (int, error) {
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
			if format, _ := pf.Lookup("chord.format"); format != Format {
				return fmt.Errorf("chord.format is %q, want %q", format, Format)
			}
			if colsJSON == "" {
				colsJSON = cj
				var all []Column
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
