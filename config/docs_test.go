package config

import (
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"chord/internal/testenv"
)

// configurationDoc is docs/configuration.md.
func configurationDoc(t *testing.T) string {
	b, err := os.ReadFile(filepath.Join("..", "docs", "configuration.md"))
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// Every key the configuration decoder accepts is documented in
// docs/configuration.md (sections 2.1 and 2.2), and every key documented
// there is accepted.
func TestDocumentedKeysAreAccepted(t *testing.T) {
	text := configurationDoc(t)
	text = text[:strings.Index(text, "## 2.3")]
	accepted := testenv.TOMLKeys(reflect.TypeOf(Config{}))
	if len(accepted) < 50 {
		t.Fatalf("only %d keys found in Config; the walk is broken", len(accepted))
	}
	for _, d := range testenv.KeyDifferences(testenv.DocumentedKeys(text), accepted) {
		t.Error("docs/configuration.md: " + d)
	}
}

// docs/configuration.md lists every quantity a parameter can set, and the
// table of renamed names lists every entry of Renames.
func TestDocumentedQuantitiesAndRenames(t *testing.T) {
	text := configurationDoc(t)
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
