// Package table writes tables of named columns, in the given column order,
// as Parquet (chain parts, grid indexes and summaries) and CSV.
package table

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"path/filepath"
	"reflect"
	"sort"
	"strconv"
	"strings"

	"github.com/parquet-go/parquet-go"
	"github.com/parquet-go/parquet-go/compress"
	"github.com/parquet-go/parquet-go/encoding"

	"chord/internal/atomicfile"
	"chord/internal/version"
)

// Group is a Parquet group node whose fields keep the given order
// (parquet.Group sorts them by name).
type Group []parquet.Field

func (g Group) ID() int                               { return 0 }
func (g Group) String() string                        { return "chain row" }
func (g Group) Type() parquet.Type                    { return parquet.Group{}.Type() }
func (g Group) Optional() bool                        { return false }
func (g Group) Repeated() bool                        { return false }
func (g Group) Required() bool                        { return true }
func (g Group) Leaf() bool                            { return false }
func (g Group) Fields() []parquet.Field               { return g }
func (g Group) Encoding() encoding.Encoding           { return nil }
func (g Group) Compression() compress.Codec           { return nil }
func (g Group) GoType() reflect.Type                  { return reflect.TypeFor[map[string]any]() }
func (f namedLeaf) Name() string                      { return f.name }
func (f namedLeaf) Value(reflect.Value) reflect.Value { return reflect.Value{} }

type namedLeaf struct {
	parquet.Node
	name string
}

// Field names the node n, for a Group.
func Field(name string, n parquet.Node) parquet.Field { return namedLeaf{Node: n, name: name} }

// Column is a column of a table written as CSV and Parquet: kind 'i'
// (int64), 'f' (double), 's' (string) or 'b' (boolean).
type Column struct {
	Name string
	Kind byte
}

// Write writes rows as base.csv and base.parquet in dir (each
// atomically). Values are int64, float64, string or bool as the column
// says; a float in an integer column is written as a double column's.
func Write(dir, base string, cols []Column, rows [][]any, meta map[string]string) error {
	var cb bytes.Buffer
	w := csv.NewWriter(&cb)
	head := make([]string, len(cols))
	var g Group
	for i, c := range cols {
		head[i] = c.Name
		var n parquet.Node
		switch c.Kind {
		case 'i':
			n = parquet.Leaf(parquet.Int64Type)
		case 'f':
			n = parquet.Leaf(parquet.DoubleType)
		case 'b':
			n = parquet.Leaf(parquet.BooleanType)
		default:
			n = parquet.String()
		}
		g = append(g, Field(c.Name, parquet.Compressed(n, &parquet.Snappy)))
	}
	w.Write(head)
	opts := []parquet.WriterOption{parquet.NewSchema("chord_"+base, g), parquet.CreatedBy("chord", version.Version, "")}
	keys := make([]string, 0, len(meta))
	for k := range meta {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		opts = append(opts, parquet.KeyValueMetadata(k, meta[k]))
	}
	var pb bytes.Buffer
	pw := parquet.NewWriter(&pb, opts...)
	rec := make([]string, len(cols))
	prow := make(parquet.Row, len(cols))
	for _, r := range rows {
		for j, c := range cols {
			v := r[j]
			var pv parquet.Value
			switch c.Kind {
			case 'i':
				n, _ := v.(int64)
				pv = parquet.Int64Value(n)
			case 'f':
				f, _ := ToFloat(v)
				pv = parquet.DoubleValue(f)
			case 'b':
				b, _ := v.(bool)
				pv = parquet.BooleanValue(b)
			default:
				pv = parquet.ByteArrayValue([]byte(FormatValue(v)))
			}
			prow[j] = pv.Level(0, 0, j)
			rec[j] = FormatValue(v)
		}
		w.Write(rec)
		if _, err := pw.WriteRows([]parquet.Row{prow}); err != nil {
			return fmt.Errorf("%s.parquet: %w", base, err)
		}
	}
	w.Flush()
	if err := pw.Close(); err != nil {
		return fmt.Errorf("%s.parquet: %w", base, err)
	}
	if err := atomicfile.Write(filepath.Join(dir, base+".csv"), cb.Bytes(), true); err != nil {
		return err
	}
	return atomicfile.Write(filepath.Join(dir, base+".parquet"), pb.Bytes(), true)
}

// ToFloat returns an integer or float value as a float64; ok is false for
// other values.
func ToFloat(v any) (float64, bool) {
	switch x := v.(type) {
	case int64:
		return float64(x), true
	case float64:
		return x, true
	}
	return 0, false
}

// FormatValue formats a TOML value (int64, float64, string, bool or an
// array of them) as a table cell shows it.
func FormatValue(v any) string {
	switch x := v.(type) {
	case int64:
		return strconv.FormatInt(x, 10)
	case float64:
		return strconv.FormatFloat(x, 'g', -1, 64)
	case string:
		return x
	case bool:
		return strconv.FormatBool(x)
	case []any:
		s := make([]string, len(x))
		for i, e := range x {
			s[i] = FormatValue(e)
		}
		return "[" + strings.Join(s, ", ") + "]"
	}
	return fmt.Sprint(v)
}
