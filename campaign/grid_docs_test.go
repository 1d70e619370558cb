package campaign

import (
	"os"
	"path/filepath"
	"reflect"
	"regexp"
	"sort"
	"strings"
	"testing"
)

// gridKeys lists the keys a grid file may hold (GridSpec's TOML keys, a
// map being one key, arrays of tables named without an index).
func gridKeys(t reflect.Type, prefix string, out map[string]bool) {
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
		if ft.Kind() == reflect.Struct {
			gridKeys(ft, prefix+name+".", out)
			continue
		}
		out[prefix+name] = true
	}
}

// The grid file's keys documented in docs/configuration.md (section 2.4)
// are those the grid decoder accepts, no more and no fewer.
func TestGridKeysDocumented(t *testing.T) {
	b, err := os.ReadFile(filepath.Join("..", "docs", "configuration.md"))
	if err != nil {
		t.Fatal(err)
	}
	text := string(b)
	i, j := strings.Index(text, "## 2.4"), strings.Index(text, "## 2.5")
	if i < 0 || j < i {
		t.Fatal("docs/configuration.md: no section 2.4 before 2.5")
	}
	tick := regexp.MustCompile("`([^`]+)`")
	documented := map[string]bool{}
	inKeys := false
	for _, line := range strings.Split(text[i:j], "\n") {
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
		prefix := ""
		for _, m := range tick.FindAllStringSubmatch(first, -1) {
			k := m[1]
			if strings.HasPrefix(k, "[") {
				k = strings.Trim(k, "[]")
				if strings.HasPrefix(m[1], "[[") {
					prefix = k + "."
					continue
				}
			}
			documented[prefix+k] = true
		}
	}
	accepted := map[string]bool{}
	gridKeys(reflect.TypeOf(GridSpec{}), "", accepted)
	var diff []string
	for k := range documented {
		if !accepted[k] {
			diff = append(diff, "documented, not accepted: "+k)
		}
	}
	for k := range accepted {
		if !documented[k] {
			diff = append(diff, "accepted, not documented: "+k)
		}
	}
	sort.Strings(diff)
	if len(diff) > 0 || len(accepted) < 15 {
		t.Errorf("grid keys (%d accepted):\n%s", len(accepted), strings.Join(diff, "\n"))
	}
}
