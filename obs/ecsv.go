package obs

import (
	"errors"
	"fmt"
	"regexp"
	"slices"
	"strconv"
	"strings"

	"go.yaml.in/yaml/v3"
)

// ECSV tables (astropy's Enhanced Character Separated Values, APE 6,
// versions 0.9 and 1.x):
//
//	# %ECSV 1.0
//	# ---
//	# delimiter: ','
//	# datatype:
//	# - {name: wavelength, unit: um, datatype: float64}
//	# - {name: depth, unit: ppm, datatype: float64}
//	# - {name: instrument, datatype: string}
//	wavelength,depth,instrument
//	1.125,12340,NIRX
//
// The header lines begin with "# " and hold a YAML document (lines
// beginning "##" are comments); it lists the columns (key datatype, or
// columns in the first drafts) with their name, data type (datatype, or
// type) and unit, and the delimiter (space, the default, or comma). The
// first line after the header names the columns again, as a check. Fields
// may be double-quoted ("" inside a quoted field is a quote); with the
// space delimiter, runs of spaces separate fields. An empty field is a
// missing value. Types int*, uint* and float* are numeric.

type ecsvColumn struct {
	Name     string `yaml:"name"`
	Datatype string `yaml:"datatype"`
	Type     string `yaml:"type"`
	Unit     string `yaml:"unit"`
}

type ecsvHeader struct {
	Delimiter string       `yaml:"delimiter"`
	Datatype  []ecsvColumn `yaml:"datatype"`
	Columns   []ecsvColumn `yaml:"columns"`
}

func ecsvNumeric(typ string) bool {
	t := strings.ToLower(typ)
	return strings.HasPrefix(t, "int") || strings.HasPrefix(t, "uint") || strings.HasPrefix(t, "float")
}

var (
	ecsvVersion = regexp.MustCompile(`^# %ECSV (\d+)\.(\d+)\s*$`)
	yamlLine    = regexp.MustCompile(`line (\d+)`)
)

// parseECSV reads an ECSV table from lines.
func parseECSV(lines []string, path string) (*rawTable, error) {
	t := &rawTable{path: path, format: FormatECSV, numeric: ecsvNumeric}
	if len(lines) == 0 || !strings.HasPrefix(lines[0], "# %ECSV") {
		return nil, fmt.Errorf("%s:1: an ECSV file begins with \"# %%ECSV 1.0\"", path)
	}
	m := ecsvVersion.FindStringSubmatch(lines[0])
	if m == nil || !(m[1] == "1" || m[1] == "0" && m[2] == "9") {
		return nil, fmt.Errorf("%s:1: %q: ECSV versions 0.9 and 1.x are read", path, lines[0])
	}
	// The YAML header: lines 2.. beginning with '#'; yamlAt maps a line of
	// the YAML text to the file's line.
	var doc strings.Builder
	var yamlAt []int
	k := 1
	for ; k < len(lines) && strings.HasPrefix(lines[k], "#"); k++ {
		l := lines[k]
		switch {
		case strings.HasPrefix(l, "##"):
			continue
		case l == "#":
			doc.WriteString("\n")
		case strings.HasPrefix(l, "# "):
			doc.WriteString(l[2:] + "\n")
		default:
			return nil, fmt.Errorf("%s:%d: an ECSV header line begins with \"# \" (hash and space)", path, k+1)
		}
		yamlAt = append(yamlAt, k+1)
	}
	text := doc.String()
	if first, _, _ := strings.Cut(text, "\n"); strings.TrimSpace(first) != "---" {
		return nil, fmt.Errorf("%s:2: the ECSV header begins with the line \"# ---\"", path)
	}
	var h ecsvHeader
	if err := yaml.Unmarshal([]byte(text), &h); err != nil {
		msg := yamlLine.ReplaceAllStringFunc(err.Error(), func(s string) string {
			n, _ := strconv.Atoi(s[5:])
			if n >= 1 && n <= len(yamlAt) {
				return fmt.Sprintf("line %d", yamlAt[n-1])
			}
			return s
		})
		return nil, fmt.Errorf("%s: the ECSV header is not valid YAML: %s", path, msg)
	}
	cols := h.Datatype
	if len(cols) == 0 {
		cols = h.Columns
	}
	if len(cols) == 0 {
		return nil, fmt.Errorf("%s: the ECSV header lists no columns (datatype: a list of {name, datatype, unit})", path)
	}
	delim := byte(' ')
	switch h.Delimiter {
	case "", " ":
	case ",":
		delim = ','
	default:
		return nil, fmt.Errorf("%s: ECSV delimiter %q: a space or a comma", path, h.Delimiter)
	}
	t.ncol = len(cols)
	t.names = make([]string, t.ncol)
	t.types = make([]string, t.ncol)
	t.units = make([]unitSource, t.ncol)
	for i, c := range cols {
		if c.Name == "" {
			return nil, fmt.Errorf("%s: ECSV column %d has no name", path, i+1)
		}
		if j := slices.Index(t.names[:i], c.Name); j >= 0 {
			return nil, fmt.Errorf("%s: two ECSV columns named %q (columns %d and %d)", path, c.Name, j+1, i+1)
		}
		t.names[i] = c.Name
		t.types[i] = c.Datatype
		if t.types[i] == "" {
			t.types[i] = c.Type
		}
		if c.Unit != "" {
			t.units[i] = unitSource{unit: c.Unit, where: fmt.Sprintf("the file's header (unit of %s)", c.Name)}
		}
	}
	for ; k < len(lines); k++ {
		l := lines[k]
		if strings.TrimSpace(l) == "" || strings.HasPrefix(l, "#") {
			continue
		}
		where := t.where(k + 1)
		f, err := splitQuoted(l, delim)
		if err != nil {
			return nil, fmt.Errorf("%s: %w", where, err)
		}
		if t.headerLine == 0 {
			if !slices.Equal(f, t.names) {
				return nil, fmt.Errorf("%s: the column names line gives %s; the ECSV header lists %s", where, strings.Join(f, ", "), strings.Join(t.names, ", "))
			}
			t.headerLine = k + 1
			continue
		}
		if len(f) != t.ncol {
			return nil, fmt.Errorf("%s: %d fields, the header lists %d columns", where, len(f), t.ncol)
		}
		t.rows = append(t.rows, rawRow{line: k + 1, fields: f})
	}
	if t.headerLine == 0 {
		return nil, fmt.Errorf("%s: no column names line after the ECSV header", path)
	}
	return t, nil
}

// splitQuoted splits a line at delim (a comma, or runs of spaces), with
// double-quoted fields.
func splitQuoted(line string, delim byte) ([]string, error) {
	var f []string
	i, n := 0, len(line)
	for {
		if delim == ' ' {
			for i < n && line[i] == ' ' {
				i++
			}
			if i == n {
				return f, nil
			}
		}
		var b strings.Builder
		if i < n && line[i] == '"' {
			i++
			closed := false
			for i < n {
				if line[i] == '"' {
					if i+1 < n && line[i+1] == '"' {
						b.WriteByte('"')
						i += 2
						continue
					}
					i++
					closed = true
					break
				}
				b.WriteByte(line[i])
				i++
			}
			if !closed {
				return nil, errors.New("a quoted field is not closed")
			}
			if i < n && line[i] != delim {
				return nil, fmt.Errorf("text after the quoted field %q", b.String())
			}
		} else {
			for i < n && line[i] != delim {
				b.WriteByte(line[i])
				i++
			}
		}
		f = append(f, strings.TrimSpace(b.String()))
		if i == n {
			return f, nil
		}
		i++ // the delimiter
		if delim == ',' && i == n {
			return append(f, ""), nil
		}
	}
}
