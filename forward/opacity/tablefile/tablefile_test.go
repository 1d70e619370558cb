package tablefile

import (
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"chord/forward/opacity"
	"chord/forward/opacity/internal/opacitytest"
)

// testXSec returns a small cross-section table with values spread over many
// decades, zeros and subnormals included, so that exact float32 round trips
// are tested on awkward bit patterns.
func testXSec(gas string, nP, nT, nW int, seed uint64) *opacity.XSecTable {
	rng := rand.New(rand.NewPCG(seed, 2))
	t := &opacity.XSecTable{Gas: gas, Meta: map[string]string{opacity.MetaProgramVersion: "test", opacity.MetaBuildSettings: `{"cutoff_cm-1":25}`}}
	for i := range nP {
		t.Log10P = append(t.Log10P, -1+float64(i)*0.5+0.1*rng.Float64())
	}
	for i := range nT {
		t.T = append(t.T, 100+200*float64(i)+rng.Float64())
	}
	for i := range nW {
		t.Wavenumber = append(t.Wavenumber, 1e4+1e2*float64(i)+rng.Float64())
	}
	t.Sigma = make([]float32, nP*nT*nW)
	for i := range t.Sigma {
		switch i % 17 {
		case 0:
			t.Sigma[i] = 0
		case 1:
			t.Sigma[i] = math.SmallestNonzeroFloat32 * float32(1+rng.IntN(1000))
		default:
			t.Sigma[i] = float32(math.Pow(10, -35+10*rng.Float64()))
		}
	}
	return t
}

func testCIA(a, b string, nT, nW int, seed uint64) *opacity.CIATable {
	rng := rand.New(rand.NewPCG(seed, 3))
	t := &opacity.CIATable{Pair: [2]string{a, b}, Meta: map[string]string{opacity.MetaProgramVersion: "test"}}
	for i := range nT {
		t.T = append(t.T, 50+100*float64(i)+rng.Float64())
	}
	for i := range nW {
		t.Wavenumber = append(t.Wavenumber, 10+1e3*float64(i)+rng.Float64())
	}
	t.K = make([]float64, nT*nW)
	for i := range t.K {
		switch i % 5 {
		case 0:
		case 1:
			t.K[i] = math.SmallestNonzeroFloat64 * float64(1+rng.IntN(1000))
		default:
			t.K[i] = math.Pow(10, -66+14*rng.Float64())
		}
	}
	return t
}

func equalXSec(t *testing.T, got, want *opacity.XSecTable) {
	t.Helper()
	if got.Gas != want.Gas {
		t.Errorf("gas %q, want %q", got.Gas, want.Gas)
	}
	opacitytest.EqualF64(t, "log10 P", got.Log10P, want.Log10P)
	opacitytest.EqualF64(t, "T", got.T, want.T)
	opacitytest.EqualF64(t, "wavenumber", got.Wavenumber, want.Wavenumber)
	equalF32(t, "sigma", got.Sigma, want.Sigma)
}

func equalF32(t *testing.T, name string, got, want []float32) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("%s: %d values, want %d", name, len(got), len(want))
	}
	for i := range got {
		if math.Float32bits(got[i]) != math.Float32bits(want[i]) {
			t.Fatalf("%s[%d] = %v, want %v (bit for bit)", name, i, got[i], want[i])
		}
	}
}

// Exactness: Parquet FLOAT and DOUBLE are IEEE 754 binary32/binary64 stored
// as they are (Apache Parquet format specification, "Types"), so a round
// trip must give the same bits.
func TestXSecFileRoundTrip(t *testing.T) {
	dir := t.TempDir()
	want := testXSec("H2O", 4, 3, 257, 1)
	want.Meta[opacity.MetaDemo] = "true"
	path := filepath.Join(dir, "H2O.parquet")
	if err := WriteXSec(path, want, false); err != nil {
		t.Fatal(err)
	}
	got, err := ReadXSec(path)
	if err != nil {
		t.Fatal(err)
	}
	equalXSec(t, got, want)
	for k, v := range want.Meta {
		if got.Meta[k] != v {
			t.Errorf("meta %q = %q, want %q", k, got.Meta[k], v)
		}
	}
	checks := map[string]string{
		MetaFormat: Format, MetaKind: KindXSec, MetaGas: "H2O", MetaShape: "4,3,257",
		MetaSchemaVersion: "1", opacity.MetaDemoNote: opacity.DemoNote, MetaUnitsWavenumber: "m^-1", MetaUnitsSigma: "m^2 molecule^-1",
	}
	for k, v := range checks {
		if got.Meta[k] != v {
			t.Errorf("meta %q = %q, want %q", k, got.Meta[k], v)
		}
	}
	if !opacity.IsDemo(got.Meta) {
		t.Error("demo flag lost")
	}
	// Writing what was read gives the same data checksum.
	path2 := filepath.Join(dir, "again.parquet")
	if err := WriteXSec(path2, got, false); err != nil {
		t.Fatal(err)
	}
	got2, err := ReadXSec(path2)
	if err != nil {
		t.Fatal(err)
	}
	if got2.Meta[MetaContentSHA256] != got.Meta[MetaContentSHA256] {
		t.Error("content checksum changed on a second round trip")
	}
}

func TestCIAFileRoundTrip(t *testing.T) {
	dir := t.TempDir()
	want := testCIA("H2", "He", 7, 1001, 2)
	path := filepath.Join(dir, "H2-He.parquet")
	if err := WriteCIA(path, want, false); err != nil {
		t.Fatal(err)
	}
	got, err := ReadCIA(path)
	if err != nil {
		t.Fatal(err)
	}
	if got.Pair != want.Pair {
		t.Errorf("pair %v, want %v", got.Pair, want.Pair)
	}
	opacitytest.EqualF64(t, "T", got.T, want.T)
	opacitytest.EqualF64(t, "wavenumber", got.Wavenumber, want.Wavenumber)
	opacitytest.EqualF64(t, "k", got.K, want.K)
	if got.Meta[opacity.MetaDemo] != "false" || opacity.IsDemo(got.Meta) {
		t.Errorf("demo = %q, want \"false\"", got.Meta[opacity.MetaDemo])
	}
	if _, ok := got.Meta[opacity.MetaDemoNote]; ok {
		t.Error("science table carries a demo note")
	}
	if _, err := ReadXSec(path); err == nil || !strings.Contains(err.Error(), "holds a cia table") {
		t.Errorf("reading a CIA file as cross-sections: err = %v", err)
	}
}

func TestWriteRefusesOverwrite(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "CO.parquet")
	first := testXSec("CO", 2, 2, 10, 3)
	if err := WriteXSec(path, first, false); err != nil {
		t.Fatal(err)
	}
	second := testXSec("CO", 2, 2, 10, 4)
	err := WriteXSec(path, second, false)
	if err == nil || !strings.Contains(err.Error(), "refusing to overwrite") || !strings.Contains(err.Error(), path) {
		t.Fatalf("second write: err = %v, want a refusal naming the file", err)
	}
	got, err := ReadXSec(path)
	if err != nil {
		t.Fatal(err)
	}
	equalXSec(t, got, first)
	if err := WriteXSec(path, second, true); err != nil {
		t.Fatal(err)
	}
	if got, err = ReadXSec(path); err != nil {
		t.Fatal(err)
	}
	equalXSec(t, got, second)
	entries, _ := os.ReadDir(dir)
	if len(entries) != 1 {
		t.Errorf("directory holds %d entries after the writes, want 1 (temporary files left?)", len(entries))
	}
}

func TestWriteChecks(t *testing.T) {
	dir := t.TempDir()
	x := testXSec("CH4", 2, 2, 5, 5)
	delete(x.Meta, opacity.MetaProgramVersion)
	if err := WriteXSec(filepath.Join(dir, "a.parquet"), x, false); err == nil || !strings.Contains(err.Error(), opacity.MetaProgramVersion) {
		t.Errorf("no program version: err = %v", err)
	}
	x = testXSec("CH4", 2, 2, 5, 5)
	x.T[1] = x.T[0]
	if err := WriteXSec(filepath.Join(dir, "b.parquet"), x, false); err == nil || !strings.Contains(err.Error(), "ascending") {
		t.Errorf("unsorted temperature axis: err = %v", err)
	}
	x = testXSec("CH4", 2, 2, 5, 5)
	x.Meta[opacity.MetaDemo] = "yes"
	if err := WriteXSec(filepath.Join(dir, "c.parquet"), x, false); err == nil || !strings.Contains(err.Error(), opacity.MetaDemo) {
		t.Errorf("bad demo flag: err = %v", err)
	}
	c := testCIA("H2", "H2", 2, 3, 6)
	c.K[2] = -1
	if err := WriteCIA(filepath.Join(dir, "d.parquet"), c, false); err == nil || !strings.Contains(err.Error(), "non-negative") {
		t.Errorf("negative CIA value: err = %v", err)
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 0 {
		t.Errorf("failed writes left %d files", len(entries))
	}
}

// TestCorruptFiles checks that damaged table files give an error naming the
// file, never a panic or wrong data: truncations at many lengths, and a
// flipped byte at every position of a small file (each read either fails or,
// where the byte does not matter, e.g. statistics, gives the exact table).
func TestCorruptFiles(t *testing.T) {
	dir := t.TempDir()
	want := testXSec("NH3", 2, 3, 40, 7)
	good := filepath.Join(dir, "good.parquet")
	if err := WriteXSec(good, want, false); err != nil {
		t.Fatal(err)
	}
	data, err := os.ReadFile(good)
	if err != nil {
		t.Fatal(err)
	}
	bad := filepath.Join(dir, "bad.parquet")
	expectErr := func(what string, b []byte) {
		t.Helper()
		if err := os.WriteFile(bad, b, 0o644); err != nil {
			t.Fatal(err)
		}
		_, err := ReadXSec(bad)
		if err == nil || !strings.Contains(err.Error(), bad) {
			t.Fatalf("%s: err = %v, want an error naming %s", what, err, bad)
		}
	}
	expectErr("empty file", nil)
	expectErr("text file", []byte("wavenumber sigma\n1 2\n"))
	for n := 1; n < len(data); n += 1 + n/8 {
		expectErr("truncated", data[:n])
	}
	flips := 0
	for i := range data {
		b := append([]byte(nil), data...)
		b[i] ^= 0x5a
		if err := os.WriteFile(bad, b, 0o644); err != nil {
			t.Fatal(err)
		}
		got, err := ReadXSec(bad)
		if err != nil {
			if !strings.Contains(err.Error(), bad) {
				t.Fatalf("flip at %d: error %q does not name the file", i, err)
			}
			flips++
			continue
		}
		equalXSec(t, got, want)
	}
	t.Logf("%d of %d single-byte flips detected; the others left the table intact", flips, len(data))
}

func TestLoadDir(t *testing.T) {
	dir := t.TempDir()
	h2o := testXSec("H2O", 2, 2, 8, 8)
	co := testXSec("CO", 2, 2, 8, 9)
	co.Meta[opacity.MetaDemo] = "true"
	cia := testCIA("H2", "He", 2, 8, 10)
	for name, err := range map[string]error{
		"H2O.parquet":   WriteXSec(filepath.Join(dir, "H2O.parquet"), h2o, false),
		"CO.parquet":    WriteXSec(filepath.Join(dir, "CO.parquet"), co, false),
		"H2-He.parquet": WriteCIA(filepath.Join(dir, "H2-He.parquet"), cia, false),
	} {
		if err != nil {
			t.Fatal(name, err)
		}
	}
	if err := os.WriteFile(filepath.Join(dir, "notes.txt"), []byte("not a table"), 0o644); err != nil {
		t.Fatal(err)
	}
	s, err := LoadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	if len(s.XSec) != 2 || s.XSec["H2O"] == nil || s.XSec["CO"] == nil || len(s.CIA) != 1 {
		t.Fatalf("set holds gases %v and %d CIA tables", keys(s.XSec), len(s.CIA))
	}
	if !s.Demo {
		t.Error("set with a demo table is not marked demo")
	}
	if len(s.Files) != 3 {
		t.Errorf("Files = %v", s.Files)
	}
	equalXSec(t, s.XSec["H2O"], h2o)

	// The same pair in the other order is a duplicate.
	rev := testCIA("He", "H2", 2, 8, 11)
	if err := WriteCIA(filepath.Join(dir, "He-H2.parquet"), rev, false); err != nil {
		t.Fatal(err)
	}
	_, err = LoadDir(dir)
	if err == nil || !strings.Contains(err.Error(), "H2-He.parquet") || !strings.Contains(err.Error(), "He-H2.parquet") {
		t.Errorf("duplicate CIA pair: err = %v, want both files named", err)
	}
	os.Remove(filepath.Join(dir, "He-H2.parquet"))

	if err := WriteXSec(filepath.Join(dir, "water.parquet"), h2o, false); err != nil {
		t.Fatal(err)
	}
	_, err = LoadDir(dir)
	if err == nil || !strings.Contains(err.Error(), "H2O.parquet") || !strings.Contains(err.Error(), "water.parquet") {
		t.Errorf("duplicate gas: err = %v, want both files named", err)
	}
	os.Remove(filepath.Join(dir, "water.parquet"))

	broken := filepath.Join(dir, "broken.parquet")
	if err := os.WriteFile(broken, []byte("PAR1 nonsense PAR1"), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err = LoadDir(dir); err == nil || !strings.Contains(err.Error(), broken) {
		t.Errorf("broken file: err = %v, want it named", err)
	}
	if _, err := LoadDir(t.TempDir()); err == nil || !strings.Contains(err.Error(), "no *.parquet") {
		t.Errorf("empty directory: err = %v", err)
	}
}

func keys[V any](m map[string]V) []string {
	var k []string
	for s := range m {
		k = append(k, s)
	}
	return k
}
