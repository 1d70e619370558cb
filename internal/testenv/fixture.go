package testenv

import (
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// TOML is a fixture of testdata/fixtures (a small configuration or
// scenario shared by tests of several packages) being adapted by a test:
// each test states only what differs from the fixture.
type TOML struct {
	t     testing.TB
	lines []string
}

// Fixture returns the fixture testdata/fixtures/name of the repository.
func Fixture(t testing.TB, name string) *TOML {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(RepoRoot(t), "testdata", "fixtures", name))
	if err != nil {
		t.Fatal(err)
	}
	return &TOML{t: t, lines: strings.Split(strings.TrimRight(string(b), "\n"), "\n")}
}

// String returns the text.
func (f *TOML) String() string { return strings.Join(f.lines, "\n") + "\n" }

// Write writes the text to path and returns path.
func (f *TOML) Write(path string) string {
	f.t.Helper()
	if err := os.WriteFile(path, []byte(f.String()), 0o644); err != nil {
		f.t.Fatal(err)
	}
	return path
}

var arrayIndex = regexp.MustCompile(`^(.*)\[(\d+)\]$`)

// table returns the lines [h, end) of a table: "spectrum",
// "atmosphere.temperature", or "parameters[2]", the second [[parameters]]
// table; h < 0 when there is none.
func (f *TOML) table(name string) (h, end int) {
	header, n := "["+name+"]", 1
	if m := arrayIndex.FindStringSubmatch(name); m != nil {
		header = "[[" + m[1] + "]]"
		n, _ = strconv.Atoi(m[2])
	}
	h = -1
	for i, l := range f.lines {
		if strings.TrimSpace(l) == header {
			if n--; n == 0 {
				h = i
				break
			}
		}
	}
	if h < 0 {
		return -1, -1
	}
	end = len(f.lines)
	for i := h + 1; i < len(f.lines); i++ {
		if strings.HasPrefix(strings.TrimSpace(f.lines[i]), "[") {
			end = i
			break
		}
	}
	return h, end
}

// key returns the table and the line of key ("sampler.steps",
// "parameters[2].high"); line < 0 when the key is absent.
func (f *TOML) key(key string) (h, end, line int) {
	i := strings.LastIndex(key, ".")
	table, name := key[:i], key[i+1:]
	h, end = f.table(table)
	for j := h + 1; h >= 0 && j < end; j++ {
		if k, _, ok := strings.Cut(f.lines[j], "="); ok && strings.TrimSpace(k) == name {
			return h, end, j
		}
	}
	return h, end, -1
}

// Set sets key (a dotted path: "sampler.steps",
// "atmosphere.temperature.temperature_k", "parameters[2].high") to value,
// TOML text, adding the key or its table when absent.
func (f *TOML) Set(key, value string) *TOML {
	h, end, line := f.key(key)
	kv := key[strings.LastIndex(key, ".")+1:] + " = " + value
	switch {
	case line >= 0:
		f.lines[line] = kv
	case h >= 0:
		at := end
		for at > h+1 && strings.TrimSpace(f.lines[at-1]) == "" {
			at--
		}
		f.lines = append(f.lines[:at], append([]string{kv}, f.lines[at:]...)...)
	default:
		f.lines = append(f.lines, "", "["+key[:strings.LastIndex(key, ".")]+"]", kv)
	}
	return f
}

// Delete removes key, which must be there.
func (f *TOML) Delete(key string) *TOML {
	f.t.Helper()
	_, _, line := f.key(key)
	if line < 0 {
		f.t.Fatalf("fixture: no key %s to delete", key)
	}
	f.lines = append(f.lines[:line], f.lines[line+1:]...)
	return f
}

// DeleteTable removes the table name, or every table of the array of
// tables name ("parameters"), which must be there.
func (f *TOML) DeleteTable(name string) *TOML {
	f.t.Helper()
	found := false
	for _, n := range []string{name, name + "[1]"} {
		for {
			h, end := f.table(n)
			if h < 0 {
				break
			}
			found = true
			f.lines = append(f.lines[:h], f.lines[end:]...)
		}
	}
	if !found {
		f.t.Fatalf("fixture: no table %s to delete", name)
	}
	return f
}

// Append adds text at the end.
func (f *TOML) Append(text string) *TOML {
	f.lines = append(f.lines, strings.Split(strings.TrimRight(text, "\n"), "\n")...)
	return f
}
