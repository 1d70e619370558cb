package config

import (
	"os"
	"path/filepath"
	"reflect"
	"regexp"
	"sort"
	"strings"
	"testing"
)

// acceptedKeys lists the keys the decoder accepts in a value of type t,
// as dotted paths under prefix: tables of structs are walked, arrays of
// tables are named without an index, and a map is one key (its keys are
// free, e.g. atmosphere.gases).
func acceptedKeys(t reflect.Type, prefix string, out map[string]bool) {
	for i := range t.NumField() {
		f := t.Field(i)
		name, _, _ := strings.Cut(f.Tag.Get("toml"), ",")
		if name == "-" || !f.IsExported() {
			continue
		}
		ft := f.Type
		for ft.Kind() == reflect.Pointer {
			ft = ft.Elem()
		}
		if f.Anonymous && name == "" {
			acceptedKeys(ft, prefix, out)
			continue
		}
		key := prefix + name
		if ft.Kind() == reflect.Slice && ft.Elem().Kind() == reflect.Struct {
			ft = ft.Elem()
		}
		if ft.Kind() == reflect.Struct {
			acceptedKeys(ft, key+".", out)
			continue
		}
		out[key] = true
	}
}

// documentedKeys reads the key tables of docs/configuration.md: under a
// heading **`[section]`** (or **`[[section]]`**), every table whose first
// column is headed "key" names keys in backquotes in its first cell
// ("`radius_rjup` / `radius_rearth`", "`[atmosphere.gases]`"). It stops at
// the grid file's section, whose keys are not those of a configuration.
func documentedKeys(t *testing.T, text string) map[string]bool {
	section := regexp.MustCompile("^\\*\\*`\\[\\[?([a-z_.]+)\\]\\]?`\\*\\*")
	tick := regexp.MustCompile("`([^`]+)`")
	keys := map[string]bool{}
	sec, inKeys := "", false
	for _, line := range strings.Split(text, "\n") {
		if strings.HasPrefix(line, "## 2.3") {
			break
		}
		if m := section.FindStringSubmatch(line); m != nil {
			sec, inKeys = m[1], false
			continue
		}
		if !strings.HasPrefix(line, "|") {
			inKeys = false
			continue
		}
		cells := strings.Split(line, "|")
		first := strings.TrimSpace(cells[1])
		switch {
		case first == "key":
			inKeys = true
			continue
		case !inKeys || strings.HasPrefix(first, "---"):
			continue
		}
		if sec == "" {
			t.Fatalf("docs/configuration.md: key row %q before any section heading", line)
		}
		for _, m := range tick.FindAllStringSubmatch(first, -1) {
			k := strings.Trim(m[1], "[]")
			if !strings.Contains(m[1], "[") {
				k = sec + "." + k
			}
			keys[k] = true
		}
	}
	return keys
}

// Every key the configuration decoder accepts is documented in
// docs/configuration.md, and every key documented there is accepted.
func TestDocumentedKeysAreAccepted(t *testing.T) {
	text, err := os.ReadFile(filepath.Join("..", "docs", "configuration.md"))
	if err != nil {
		t.Fatal(err)
	}
	documented := documentedKeys(t, string(text))
	accepted := map[string]bool{}
	acceptedKeys(reflect.TypeOf(Config{}), "", accepted)
	if len(accepted) < 50 {
		t.Fatalf("only %d keys found in Config; the walk is broken", len(accepted))
	}
	var notAccepted, notDocumented []string
	for k := range documented {
		if !accepted[k] {
			notAccepted = append(notAccepted, k)
		}
	}
	for k := range accepted {
		if !documented[k] {
			notDocumented = append(notDocumented, k)
		}
	}
	sort.Strings(notAccepted)
	sort.Strings(notDocumented)
	if len(notAccepted) > 0 {
		t.Errorf("documented in docs/configuration.md but not accepted by the decoder: %v", notAccepted)
	}
	if len(notDocumented) > 0 {
		t.Errorf("accepted by the decoder but not documented in docs/configuration.md: %v", notDocumented)
	}
}

// docs/configuration.md lists every quantity a parameter can set, and the
// table of renamed names lists every entry of Renames.
func TestDocumentedQuantitiesAndRenames(t *testing.T) {
	b, err := os.ReadFile(filepath.Join("..", "docs", "configuration.md"))
	if err != nil {
		t.Fatal(err)
	}
	text := string(b)
	for _, q := range Quantities {
		if !strings.Contains(text, "| `"+string(q)+"`") && !strings.Contains(text, ", `"+string(q)+"`") {
			t.Errorf("quantity %s is not in the table of what parameters set", q)
		}
	}
	renamed := text[strings.Index(text, "## 2.5"):]
	for _, r := range Renames {
		row := "| `" + r.Old + "` | `" + r.New + "` |"
		if r.Key != "" {
			row = "| `" + r.Key + " = \"" + r.Old + "\"` | `" + r.Key + " = \"" + r.New + "\"` |"
		}
		if !strings.Contains(renamed, row) {
			t.Errorf("renamed %v: no row %s in section 2.5", r, row)
		}
	}
}
