// Package opacitytest holds helpers shared by the tests of the opacity
// packages: the shared line-list data's isotopologue table, independent
// readers of test files, and exact comparisons.
package opacitytest

import (
	"bufio"
	"math"
	"os"
	"path/filepath"
	"testing"

	"chord/forward/opacity/hitran"
	"chord/forward/opacity/lbl"
	"chord/internal/testenv"
)

// IsoData reads HITRAN's molparam table and the TIPS-2011 partition sums
// from the shared data (skipping the test where they are absent).
func IsoData(t testing.TB) lbl.IsoData {
	t.Helper()
	d, err := hitran.ReadMolParam(filepath.Join(testenv.SharedData(t, "partition"), "molparam_hitran.txt"))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := hitran.ReadTIPSTable(filepath.Join(testenv.SharedData(t, "partition"), "parsum2011_tips.dat"), d); err != nil {
		t.Fatal(err)
	}
	return d
}

// FileLines reads a text file into lines (numbered from 1 at index 1), for
// checks that read the file independently of the reader under test.
func FileLines(t *testing.T, path string) []string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	lines := []string{""}
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		lines = append(lines, sc.Text())
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	return lines
}

// EqualF64 fails the test unless got and want hold the same values, bit for bit.
func EqualF64(t *testing.T, name string, got, want []float64) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("%s: %d values, want %d", name, len(got), len(want))
	}
	for i := range got {
		if math.Float64bits(got[i]) != math.Float64bits(want[i]) {
			t.Fatalf("%s[%d] = %v, want %v (bit for bit)", name, i, got[i], want[i])
		}
	}
}

// WriteFile writes content to path, failing the test on error.
func WriteFile(t *testing.T, path, content string) {
	t.Helper()
	if err := os.WriteFile(path, []byte(content), 0o644); err != nil {
		t.Fatal(err)
	}
}
