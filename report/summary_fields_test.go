package report

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"regexp"
	"sort"
	"strings"
	"testing"
)

// summary.json carries every top-level key docs/formats.md lists, and only
// those, even for an empty summary (no evidence, no checks, no invalid
// states); each column carries its unit, quantity and prior.
func TestSummaryJSONHasDocumentedFields(t *testing.T) {
	b, err := os.ReadFile(filepath.Join("..", "docs", "formats.md"))
	if err != nil {
		t.Fatal(err)
	}
	text := string(b)
	i := strings.Index(text, "**summary.json** has these top-level keys")
	j := strings.Index(text[i:], "Non-finite numbers")
	if i < 0 || j < 0 {
		t.Fatal("docs/formats.md: no paragraph listing summary.json's keys")
	}
	var documented []string
	seen := map[string]bool{"ensemble": true, "nested": true, "null": true}
	for _, m := range regexp.MustCompile("`([a-z_0-9]+)`").FindAllStringSubmatch(text[i:i+j], -1) {
		if !seen[m[1]] {
			seen[m[1]] = true
			documented = append(documented, m[1])
		}
	}
	sort.Strings(documented)

	var buf bytes.Buffer
	s := &Summary{Parameters: []ColumnSummary{{Name: "temperature_k"}}}
	if err := s.WriteJSON(&buf); err != nil {
		t.Fatal(err)
	}
	var got map[string]json.RawMessage
	if err := json.Unmarshal(buf.Bytes(), &got); err != nil {
		t.Fatal(err)
	}
	var written []string
	for k := range got {
		written = append(written, k)
	}
	sort.Strings(written)
	if strings.Join(written, ",") != strings.Join(documented, ",") {
		t.Errorf("summary.json keys\n  written:    %v\n  documented: %v", written, documented)
	}
	for _, k := range []string{"invalid_states", "warnings", "cautions", "checks", "derived"} {
		if s := string(got[k]); s != "{}" && s != "[]" {
			t.Errorf("%s = %s, want empty", k, s)
		}
	}
	var cols []map[string]json.RawMessage
	if err := json.Unmarshal(got["parameters"], &cols); err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{"unit", "quantity", "prior", "gas"} {
		if _, ok := cols[0][k]; !ok {
			t.Errorf("a parameter's summary lacks %q", k)
		}
	}
}
