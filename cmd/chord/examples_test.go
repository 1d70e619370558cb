package main

import (
	"path/filepath"
	"strings"
	"testing"
)

// TestExampleConfigurationsCheck runs `chord fit --check` on every
// retrieval configuration the README and docs point a user to: each must
// load with its observations and the demo opacity tables, and give a
// finite posterior. (The tutorial's observation once lay on bins the demo
// k-tables could not serve, and nothing noticed.) What is checked is the
// program's own consistency; no external value is involved.
func TestExampleConfigurationsCheck(t *testing.T) {
	for _, cfg := range []string{
		"tutorial/pellucid-b.toml",
		"retrieval-example.toml",
	} {
		t.Run(cfg, func(t *testing.T) {
			path := filepath.Join("..", "..", "testdata", cfg)
			out, stderr, err := runCmd(t, "fit", "--check", "-c", path)
			if err != nil {
				t.Fatalf("fit --check -c %s: %v\n%s", path, err, stderr)
			}
			if !strings.Contains(out, "posterior:") || !strings.Contains(stderr, "nothing was written") {
				t.Errorf("fit --check -c %s:\n%s\n%s", path, out, stderr)
			}
			if strings.Contains(stderr, "old name") || strings.Contains(stderr, "old spelling") {
				t.Errorf("%s uses an old spelling:\n%s", path, stderr)
			}
		})
	}
}
