package build_test

import (
	"context"
	"path/filepath"
	"runtime"
	"runtime/debug"
	"slices"
	"sync"
	"testing"
	"unsafe"

	"chord/forward/opacity"
	"chord/forward/opacity/build"
	"chord/forward/opacity/exomol"
	"chord/forward/opacity/lbl"
	"chord/internal/synthlines"
	"chord/internal/testenv"
)

// TestStreamedBuildEqualsInMemory: a synthetic list of 1e6 lines written
// as 12 gzip chunk files is built into a k-table by streaming, holding at
// most about 1e5 lines at once; the table equals, bit for bit, the one
// built from the same lines read whole by the ExoMol reader, and the
// heap grows by less than the bound BuildKFrom states (window lines x
// their size, the margins of the wing cut-off, the open files' batches,
// the workers' fine grids), well below the list's own size in memory.
func TestStreamedBuildEqualsInMemory(t *testing.T) {
	if testing.Short() {
		t.Skip("builds a 1e6-line list twice (about 10 s); skipped with -short")
	}
	dir := t.TempDir()
	def, err := synthlines.Write(synthlines.Spec{Dir: dir, Name: "1H2-16O__Synth", Lines: 1_000_000, NuMin: 2000, NuMax: 2600, Chunk: 50, Compress: "gz", States: 20000, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	lo, hi := opacity.AnchoredBins(1e4/2590, 1e4/2010, 100)
	s := lbl.KSettings{
		Log10P: []float64{2, 4}, T: []float64{500, 1000}, Lo: lo, Hi: hi, Resolution: 3e5,
		Lines:       lbl.LineSettings{WeakCut: 1e-3, WingWidths: 500},
		Workers:     2,
		WindowLines: 100_000,
	}
	list, err := build.Open(&build.Source{Files: []string{def}}, lbl.Observer{})
	if err != nil {
		t.Fatal(err)
	}
	// A low GC target makes the heap in use follow the live data.
	defer debug.SetGCPercent(debug.SetGCPercent(10))
	runtime.GC()
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	base := ms.HeapInuse
	stop := make(chan struct{})
	peak := testenv.PeakHeap(stop)
	streamed, err := list.KTable(context.Background(), s)
	close(stop)
	if err != nil {
		t.Fatal(err)
	}
	lineSize := uint64(unsafe.Sizeof(lbl.Line{}))
	margin := uint64(2*lbl.DefaultWingCutoff) * 1e6 / 600 // lines within the cut-off either side of a window
	bound := lineSize*(uint64(s.WindowLines)+margin)*2 + 6*(4*4096*lineSize) + 2*(40<<20)
	grew := peak.Load() - base
	t.Logf("streamed build: heap grew by %.1f MB at most (bound %.1f MB; the list whole is %.1f MB)", float64(grew)/1e6, float64(bound)/1e6, float64(1e6*lineSize)/1e6)
	if grew > bound {
		t.Errorf("heap grew by %d bytes, more than the bound %d", grew, bound)
	}

	whole, err := exomol.Read(def, exomol.Options{Mol: 1, Iso: 1})
	if err != nil {
		t.Fatal(err)
	}
	iso := lbl.IsoData{{Mol: 1, Iso: 1}: whole.Isotopologue()}
	s.Gas = "H2O"
	mem, err := lbl.BuildK(whole.Lines, iso, &s)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(streamed.K, mem.K) {
		n := 0
		for i := range mem.K {
			if streamed.K[i] != mem.K[i] {
				n++
			}
		}
		t.Errorf("%d of %d k values differ between the streamed and the in-memory build", n, len(mem.K))
	}
	if streamed.Meta[opacity.MetaBuildSettings] == "" {
		t.Error("no build settings recorded")
	}
}

// TestStreamResume: a build stopped after its first windows (cancelled
// from the progress report) keeps them in its checkpoint file; the same
// build run again reads them back instead of computing them and gives
// the same table as a build never stopped.
func TestStreamResume(t *testing.T) {
	dir := t.TempDir()
	def, err := synthlines.Write(synthlines.Spec{Dir: dir, Name: "1H2-16O__Synth", Lines: 20000, NuMin: 2000, NuMax: 2600, Chunk: 100, Compress: "bz2", States: 2000, Seed: 2})
	if err != nil {
		t.Fatal(err)
	}
	lo, hi := opacity.AnchoredBins(1e4/2590, 1e4/2010, 200)
	list, err := build.Open(&build.Source{Files: []string{def}}, lbl.Observer{})
	if err != nil {
		t.Fatal(err)
	}
	s := lbl.KSettings{Log10P: []float64{3}, T: []float64{800}, Lo: lo, Hi: hi, Resolution: 2e5, WindowLines: 3000, Workers: 2}
	full, err := list.KTable(context.Background(), s)
	if err != nil {
		t.Fatal(err)
	}
	cpPath := filepath.Join(dir, "cp")
	fp := s
	fp.Gas = list.Gas
	ctx, cancel := context.WithCancel(context.Background())
	var once sync.Once
	stopped := s
	stopped.Observer.Progress = func(done, total int) { once.Do(cancel) }
	cp, err := build.OpenCheckpoint(cpPath, build.Fingerprint(&fp))
	if err != nil {
		t.Fatal(err)
	}
	stopped.Checkpoint = cp
	if _, err := list.KTable(ctx, stopped); err != lbl.ErrStopped {
		t.Fatalf("stopped build: %v, want ErrStopped", err)
	}
	cp.Close()
	cp, err = build.OpenCheckpoint(cpPath, build.Fingerprint(&fp))
	if err != nil {
		t.Fatal(err)
	}
	if cp.Resumed != 1 {
		t.Errorf("%d windows in the checkpoint, want 1", cp.Resumed)
	}
	resumed := s
	resumed.Checkpoint = cp
	got, err := list.KTable(context.Background(), resumed)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(got.K, full.K) {
		t.Error("resumed build differs from the build never stopped")
	}
	// Other settings start the checkpoint anew.
	fp.Log10P = []float64{4}
	cp2, err := build.OpenCheckpoint(cpPath, build.Fingerprint(&fp))
	if err != nil {
		t.Fatal(err)
	}
	if cp2.Resumed != 0 {
		t.Errorf("checkpoint of other settings resumed %d windows", cp2.Resumed)
	}
	cp2.Remove()
}
