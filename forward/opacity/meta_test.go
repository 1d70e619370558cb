package opacity

import (
	"os"
	"path/filepath"
	"testing"
)

func TestSourcesMeta(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "lines.par")
	if err := os.WriteFile(p, []byte("abc"), 0o644); err != nil {
		t.Fatal(err)
	}
	v, err := SourcesMeta(p)
	if err != nil {
		t.Fatal(err)
	}
	src, err := ParseSources(v)
	if err != nil {
		t.Fatal(err)
	}
	// want: SHA-256("abc") from FIPS 180-2, appendix B.1.
	const want = "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
	if len(src) != 1 || src[0].File != "lines.par" || src[0].SHA256 != want || src[0].Bytes != 3 {
		t.Errorf("sources = %+v", src)
	}
	if _, err := SourcesMeta(filepath.Join(dir, "missing.par")); err == nil {
		t.Error("missing source file: no error")
	}
}
