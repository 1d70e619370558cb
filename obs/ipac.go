package obs

import (
	"fmt"
	"slices"
	"strings"
)

// IPAC tables (IPAC Table Format, version 1.2, as documented by
// IPAC/IRSA):
//
//	\keyword = value                       keyword lines (optional)
//	\ comment                              comment lines (optional)
//	|  name1  |  name2  |  name3  |        column names (required)
//	|  double |  double |  char   |        data types
//	|  um     |  ppm    |         |        units (optional)
//	|  null   |  null   |  null   |        null values (optional)
//	   1.125     12340     NIRX            data rows, fixed width
//
// The bars of the names line define the columns: a row's value for a
// column is the text between the column's two bars, trimmed; text under a
// bar is an error (values must lie between the bars). The second to
// fourth header lines give types, units and null values, split at their
// bars (the format asks that they line up with the names line; the count
// of fields must match). A value equal to the column's null value (or
// "null", or blank) is missing. Types that begin like double, real, float,
// int or long (the format allows abbreviations) are numeric; a quantity
// read as a number from a column declared otherwise is an error. Tabs are
// not allowed (the format is defined by character positions).

func ipacNumeric(typ string) bool {
	t := strings.ToLower(typ)
	for _, n := range []string{"double", "real", "float", "int", "long", "integer"} {
		if strings.HasPrefix(n, t) || strings.HasPrefix(t, n) {
			return true
		}
	}
	return false
}

// parseIPAC reads an IPAC table from lines.
func parseIPAC(lines []string, path string) (*rawTable, error) {
	t := &rawTable{path: path, format: FormatIPAC, numeric: ipacNumeric}
	var bars []int
	var nulls []string
	header := 0 // header lines read
	for k, text := range lines {
		line := k + 1
		where := t.where(line)
		if strings.ContainsRune(text, '\t') {
			return nil, fmt.Errorf("%s: a tab character: IPAC tables are defined by character positions and may not hold tabs; replace them with spaces", where)
		}
		trimmed := strings.TrimSpace(text)
		switch {
		case trimmed == "":
			continue
		case trimmed[0] == '\\':
			continue // keywords and comments; their values are not needed
		case trimmed[0] == '|':
			if len(t.rows) > 0 || header == 4 {
				return nil, fmt.Errorf("%s: a header line ('|') after the data rows began, or a fifth header line (names, types, units and null values are four)", where)
			}
			text = strings.TrimRight(text, " ")
			if header == 0 {
				bars = barPositions(text)
				if len(bars) < 2 || bars[len(bars)-1] != len(text)-1 {
					return nil, fmt.Errorf("%s: the column names line must begin and end with '|'", where)
				}
				t.names = ipacFields(text, bars)
				for i, n := range t.names {
					if n == "" {
						return nil, fmt.Errorf("%s: column %d has no name", where, i+1)
					}
					if j := slices.Index(t.names[:i], n); j >= 0 {
						return nil, fmt.Errorf("%s: two columns named %q (columns %d and %d)", where, n, j+1, i+1)
					}
				}
				t.ncol, t.headerLine = len(t.names), line
				t.units = make([]unitSource, t.ncol)
				t.types = make([]string, t.ncol)
				nulls = make([]string, t.ncol)
				header = 1
				continue
			}
			f := strings.Split(strings.TrimSuffix(strings.TrimPrefix(strings.TrimSpace(text), "|"), "|"), "|")
			if len(f) != t.ncol {
				return nil, fmt.Errorf("%s: header line with %d fields between its bars; the column names line has %d columns", where, len(f), t.ncol)
			}
			for i := range f {
				f[i] = strings.TrimSpace(f[i])
				switch header {
				case 1:
					t.types[i] = f[i]
				case 2:
					if f[i] != "" {
						t.units[i] = unitSource{unit: f[i], where: fmt.Sprintf("the file's units line (line %d)", line)}
					}
				case 3:
					nulls[i] = f[i]
				}
			}
			header++
		default:
			if header == 0 {
				return nil, fmt.Errorf("%s: a data row before the column names line ('|' name '|' ... '|')", where)
			}
			row, err := ipacRow(text, bars, nulls, where)
			if err != nil {
				return nil, err
			}
			t.rows = append(t.rows, rawRow{line: line, fields: row})
		}
	}
	if header == 0 {
		return nil, fmt.Errorf("%s: no column names line ('|' name '|' ... '|'): not an IPAC table", path)
	}
	return t, nil
}

// barPositions returns the byte positions of the '|' characters of s.
func barPositions(s string) []int {
	var p []int
	for i := 0; i < len(s); i++ {
		if s[i] == '|' {
			p = append(p, i)
		}
	}
	return p
}

// ipacFields returns the trimmed text between consecutive bars of s.
func ipacFields(s string, bars []int) []string {
	f := make([]string, len(bars)-1)
	for i := range f {
		a, b := min(bars[i]+1, len(s)), min(bars[i+1], len(s))
		f[i] = strings.TrimSpace(s[a:b])
	}
	return f
}

// ipacRow splits a data row at the header's bars; nulls are the columns'
// null values, where its file:line.
func ipacRow(text string, bars []int, nulls []string, where string) ([]string, error) {
	for _, b := range bars {
		if b < len(text) && text[b] != ' ' {
			return nil, fmt.Errorf("%s: character %d (%q) lies under a '|' of the header: IPAC values must lie between the bars", where, b+1, text[b])
		}
	}
	if last := bars[len(bars)-1]; len(text) > last+1 && strings.TrimSpace(text[last+1:]) != "" {
		return nil, fmt.Errorf("%s: text after the last column (from character %d): %q", where, last+2, strings.TrimSpace(text[last+1:]))
	}
	f := ipacFields(text, bars)
	for i, v := range f {
		if v == "null" || (nulls[i] != "" && v == nulls[i]) {
			f[i] = ""
		}
	}
	return f, nil
}
