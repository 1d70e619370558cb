package build_test

import (
	"os"
	"path/filepath"
	"slices"
	"testing"

	"chord/forward/opacity/build"
)

// TestCheckpointFile: windows saved are read back exactly; a file cut in
// the middle of a record keeps the records before it; a flipped byte in
// a record drops that record and those after it (each record carries its
// CRC-32), never reads a wrong value.
func TestCheckpointFile(t *testing.T) {
	path := filepath.Join(t.TempDir(), "cp")
	c, err := build.OpenCheckpoint(path, "fp")
	if err != nil {
		t.Fatal(err)
	}
	a, b := []float32{1, 2, 3, 4}, []float32{5, 6}
	if err := c.Save(4, 6, a); err != nil {
		t.Fatal(err)
	}
	if err := c.Save(2, 4, b); err != nil {
		t.Fatal(err)
	}
	c.Close()
	full, _ := os.ReadFile(path)
	for _, cc := range []struct {
		name  string
		data  []byte
		found int
	}{
		{"whole", full, 2},
		{"cut in the second record", full[:len(full)-3], 1},
		{"flipped byte in the first record", flip(full, len("chord k-table checkpoint fp\n")+14), 0},
	} {
		if err := os.WriteFile(path, cc.data, 0o644); err != nil {
			t.Fatal(err)
		}
		c, err := build.OpenCheckpoint(path, "fp")
		if err != nil {
			t.Fatal(err)
		}
		if c.Resumed != cc.found {
			t.Errorf("%s: %d windows read, want %d", cc.name, c.Resumed, cc.found)
		}
		if k, ok := c.Load(4, 6); ok && !slices.Equal(k, a) {
			t.Errorf("%s: window read as %v", cc.name, k)
		}
		c.Close()
	}
}

func flip(b []byte, i int) []byte {
	c := slices.Clone(b)
	c[i] ^= 1
	return c
}

// FuzzCheckpoint: any file content is read without a panic, and every
// window it yields has as many values as its record says.
func FuzzCheckpoint(f *testing.F) {
	f.Add([]byte("chord k-table checkpoint fp\n"))
	f.Add([]byte("chord k-table checkpoint fp\n\x04\x00\x00\x00\x06\x00\x00\x00\x01\x00\x00\x00\x00\x00\x80?\x00\x00\x00\x00"))
	f.Fuzz(func(t *testing.T, data []byte) {
		path := filepath.Join(t.TempDir(), "cp")
		if err := os.WriteFile(path, data, 0o644); err != nil {
			t.Fatal(err)
		}
		c, err := build.OpenCheckpoint(path, "fp")
		if err != nil {
			t.Fatal(err)
		}
		c.Close()
	})
}
