package testenv

import (
	"reflect"
	"regexp"
	"sort"
	"strings"
)

// TOMLKeys lists the keys a strict TOML decoder accepts in a value of
// type t, as dotted paths: tables of structs are walked (embedded structs
// without a tag are flattened), arrays of tables are named without an
// index, and a map is one key (its own keys are free, e.g.
// atmosphere.gases).
func TOMLKeys(t reflect.Type) map[string]bool {
	out := map[string]bool{}
	tomlKeys(t, "", out)
	return out
}

func tomlKeys(t reflect.Type, prefix string, out map[string]bool) {
	for i := range t.NumField() {
		f := t.Field(i)
		name, _, _ := strings.Cut(f.Tag.Get("toml"), ",")
		if name == "-" || !f.IsExported() {
			continue
		}
		ft := f.Type
		for ft.Kind() == reflect.Pointer || (ft.Kind() == reflect.Slice && ft.Elem().Kind() == reflect.Struct) {
			ft = ft.Elem()
		}
		switch {
		case f.Anonymous && name == "" && ft.Kind() == reflect.Struct:
			tomlKeys(ft, prefix, out)
		case ft.Kind() == reflect.Struct:
			tomlKeys(ft, prefix+name+".", out)
		default:
			out[prefix+name] = true
		}
	}
}

var (
	docSection = regexp.MustCompile("^\\*\\*`\\[\\[?([a-z_.]+)\\]\\]?`\\*\\*")
	docTick    = regexp.MustCompile("`([^`]+)`")
)

// DocumentedKeys reads the key tables of a Markdown reference: a heading
// line **`[section]`** (or **`[[section]]`**) sets the section of the
// keys below it; in every table whose first column is headed "key" the
// first cell names keys in backquotes, relative to the section
// ("`radius_rjup` / `radius_rearth`"), or whole in single brackets
// ("`[atmosphere.gases]`", "`[set]`"), or after an array of tables in
// double brackets ("`[[axes]]` `key`, `values`": axes.key, axes.values).
func DocumentedKeys(markdown string) map[string]bool {
	keys := map[string]bool{}
	sec, inKeys := "", false
	for _, line := range strings.Split(markdown, "\n") {
		if m := docSection.FindStringSubmatch(line); m != nil {
			sec, inKeys = m[1]+".", false
			continue
		}
		if !strings.HasPrefix(line, "|") {
			inKeys = false
			continue
		}
		first := strings.TrimSpace(strings.Split(line, "|")[1])
		if first == "key" {
			inKeys = true
			continue
		}
		if !inKeys || strings.HasPrefix(first, "---") {
			continue
		}
		prefix := sec
		for _, m := range docTick.FindAllStringSubmatch(first, -1) {
			k := m[1]
			switch {
			case strings.HasPrefix(k, "[["):
				prefix = strings.Trim(k, "[]") + "."
			case strings.HasPrefix(k, "["):
				keys[strings.Trim(k, "[]")] = true
			default:
				keys[prefix+k] = true
			}
		}
	}
	return keys
}

// KeyDifferences compares documented and accepted keys, naming each key
// documented but not accepted and each accepted but not documented.
func KeyDifferences(documented, accepted map[string]bool) []string {
	var d []string
	for k := range documented {
		if !accepted[k] {
			d = append(d, "documented but not accepted by the decoder: "+k)
		}
	}
	for k := range accepted {
		if !documented[k] {
			d = append(d, "accepted by the decoder but not documented: "+k)
		}
	}
	sort.Strings(d)
	return d
}
