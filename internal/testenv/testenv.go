package testenv

import (
	"errors"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"testing"

	"github.com/parquet-go/parquet-go"
)

// root walks up from the working directory (a package's directory while
// its tests run) to the directory holding go.mod.
func root() (string, error) {
	dir, err := os.Getwd()
	if err != nil {
		return "", err
	}
	for {
		if _, err := os.Stat(filepath.Join(dir, "go.mod")); err == nil {
			return dir, nil
		}
		parent := filepath.Dir(dir)
		if parent == dir {
			return "", errors.New("no go.mod in the working directory or above it")
		}
		dir = parent
	}
}

// RepoRoot returns the repository root (the directory holding go.mod),
// failing the test when there is none above the working directory.
func RepoRoot(t testing.TB) string {
	t.Helper()
	dir, err := root()
	if err != nil {
		t.Fatalf("repository root: %v", err)
	}
	return dir
}

// SharedData returns ../shared/data relative to the repository root, joined
// with the optional path elements sub (e.g. "cia"), and skips the test when
// that path is absent: the samples are read in place, never copied into the
// repository (see ../shared/data/SOURCES.md).
func SharedData(t testing.TB, sub ...string) string {
	t.Helper()
	rel := filepath.Join(append([]string{"..", "shared", "data"}, sub...)...)
	dir, err := root()
	if err != nil {
		t.Skipf("%s cannot be located (%v): skipping test that needs the real line-list samples", rel, err)
	}
	p := filepath.Join(dir, rel)
	if _, err := os.Stat(p); err != nil {
		t.Skipf("%s not found at %s: skipping test that needs the real line-list samples", rel, p)
	}
	return p
}

// BuildChord builds the chord command (chord/cmd/chord) into a temporary
// directory of the test, removed when it ends, and returns the binary's
// path. The Go build cache makes every build after the first one a link.
func BuildChord(t testing.TB) string {
	t.Helper()
	bin := filepath.Join(t.TempDir(), "chord")
	cmd := exec.Command("go", "build", "-o", bin, "chord/cmd/chord")
	cmd.Dir = RepoRoot(t)
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("go build chord/cmd/chord: %v\n%s", err, out)
	}
	return bin
}

// ParquetFile is one file opened by ParquetFiles.
type ParquetFile struct {
	Name string // the file's path
	*parquet.File
}

// ParquetFiles opens the files matching pattern, in name order, with
// parquet-go alone (a reader that shares no code with chord's), for tests
// that check chord's Parquet output independently. cols are the column
// names of the first file. The files are closed when the test ends.
func ParquetFiles(t testing.TB, pattern string) (files []ParquetFile, cols []string) {
	t.Helper()
	names, err := filepath.Glob(pattern)
	if err != nil {
		t.Fatal(err)
	}
	sort.Strings(names)
	for _, name := range names {
		f, err := os.Open(name)
		if err != nil {
			t.Fatal(err)
		}
		t.Cleanup(func() { f.Close() })
		st, err := f.Stat()
		if err != nil {
			t.Fatal(err)
		}
		pf, err := parquet.OpenFile(f, st.Size())
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if cols == nil {
			for _, c := range pf.Schema().Fields() {
				cols = append(cols, c.Name())
			}
		}
		files = append(files, ParquetFile{name, pf})
	}
	return files, cols
}

// ParquetRows reads every row of the files matching pattern with
// parquet-go's generic row reader into maps (a reader path that shares no
// code with chord's) and returns the column names of the first file and
// all rows.
func ParquetRows(t testing.TB, pattern string) ([]string, []map[string]any) {
	t.Helper()
	files, cols := ParquetFiles(t, pattern)
	var rows []map[string]any
	for _, pf := range files {
		r := parquet.NewGenericReader[map[string]any](pf.File, pf.Schema())
		buf := make([]map[string]any, 100)
		for {
			for i := range buf {
				buf[i] = map[string]any{}
			}
			n, err := r.Read(buf)
			rows = append(rows, buf[:n]...)
			if err == io.EOF {
				break
			}
			if err != nil {
				t.Fatalf("%s: %v", pf.Name, err)
			}
		}
		r.Close()
	}
	return cols, rows
}
