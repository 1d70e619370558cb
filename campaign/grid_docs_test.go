package campaign

import (
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"chord/internal/testenv"
)

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
	accepted := testenv.TOMLKeys(reflect.TypeOf(GridSpec{}))
	if len(accepted) < 15 {
		t.Fatalf("only %d keys found in GridSpec; the walk is broken", len(accepted))
	}
	for _, d := range testenv.KeyDifferences(testenv.DocumentedKeys(text[i:j]), accepted) {
		t.Error("docs/configuration.md, grid file: " + d)
	}
}
