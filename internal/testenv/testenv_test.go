package testenv

import (
	"os"
	"path/filepath"
	"testing"
)

func TestRepoRoot(t *testing.T) {
	dir := RepoRoot(t)
	b, err := os.ReadFile(filepath.Join(dir, "go.mod"))
	if err != nil {
		t.Fatal(err)
	}
	if len(b) < 12 || string(b[:12]) != "module chord" {
		t.Errorf("%s/go.mod starts %q, want the chord module", dir, b[:min(len(b), 12)])
	}
}

func TestSharedDataSkipsWhenAbsent(t *testing.T) {
	var skipped bool
	t.Run("absent", func(t *testing.T) {
		defer func() { skipped = t.Skipped() }()
		SharedData(t, "no-such-sample-directory")
	})
	if !skipped {
		t.Error("SharedData did not skip for an absent directory")
	}
}
