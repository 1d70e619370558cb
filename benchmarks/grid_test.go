package benchmarks

import (
	"path/filepath"
	"strconv"
	"testing"

	"chord/campaign"
)

// BenchmarkGridExpand12 expands the example 3 x 4 grid (testdata/grid/
// noise-clouds.toml): twelve points, each simulating its observation of
// Marrow d and writing its fit configuration, plus the index in CSV and
// Parquet. This is the work chord grid does on the submitting host before
// any fit runs.
func BenchmarkGridExpand12(b *testing.B) {
	b.ReportAllocs()
	dir := b.TempDir()
	spec := "../testdata/grid/noise-clouds.toml"
	n := 0
	for b.Loop() {
		n++
		if _, err := campaign.CreateGrid(spec, filepath.Join(dir, strconv.Itoa(n)), campaign.GridOptions{}); err != nil {
			b.Fatal(err)
		}
	}
}
