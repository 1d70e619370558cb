package atomicfile

import (
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"sync"
	"testing"
)

// Write replaces when asked, refuses an existing file otherwise (an error
// wrapping fs.ErrExist, the file untouched) and leaves no temporary file.
func TestWrite(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "a.txt")
	if err := Write(p, []byte("one"), false); err != nil {
		t.Fatal(err)
	}
	if err := Write(p, []byte("two"), false); !errors.Is(err, fs.ErrExist) {
		t.Errorf("second new write: %v, want fs.ErrExist", err)
	}
	if b, _ := os.ReadFile(p); string(b) != "one" {
		t.Errorf("refused write changed the file to %q", b)
	}
	if err := Write(p, []byte("three"), true); err != nil {
		t.Fatal(err)
	}
	if b, _ := os.ReadFile(p); string(b) != "three" {
		t.Errorf("replaced file holds %q", b)
	}
	if st, err := os.Stat(p); err != nil || st.Mode().Perm() != 0o644 {
		t.Errorf("mode %v, %v; want 0644", st.Mode().Perm(), err)
	}
	if left, _ := filepath.Glob(filepath.Join(dir, TempPattern(p))); len(left) > 0 {
		t.Errorf("temporary files left: %v", left)
	}
	if err := Write(filepath.Join(dir, "no", "such", "dir"), nil, true); err == nil {
		t.Error("write into a missing directory succeeded")
	}
}

// Writers racing to create one new file: exactly one wins and the file
// holds its complete data, never a mixture (the link cannot replace).
func TestWriteNewRace(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "race.txt")
	const n = 8
	data := make([][]byte, n)
	for i := range data {
		data[i] = make([]byte, 1<<16)
		for j := range data[i] {
			data[i][j] = byte('a' + i)
		}
	}
	var wg sync.WaitGroup
	errs := make([]error, n)
	for i := range n {
		wg.Add(1)
		go func() { defer wg.Done(); errs[i] = Write(p, data[i], false) }()
	}
	wg.Wait()
	won := -1
	for i, err := range errs {
		switch {
		case err == nil && won >= 0:
			t.Fatalf("writers %d and %d both created the file", won, i)
		case err == nil:
			won = i
		case !errors.Is(err, fs.ErrExist):
			t.Errorf("writer %d: %v", i, err)
		}
	}
	b, _ := os.ReadFile(p)
	if won < 0 || string(b) != string(data[won]) {
		t.Fatalf("winner %d; the file does not hold its data", won)
	}
}
