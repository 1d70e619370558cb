package benchmarks

import (
	"bufio"
	"compress/bzip2"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"runtime/debug"
	"strconv"
	"syscall"
	"testing"
	"time"

	"chord/forward/opacity"
	"chord/forward/opacity/build"
	"chord/forward/opacity/lbl"
	"chord/internal/compressed"
	"chord/internal/synthlines"
	"chord/internal/testenv"
)

// Benchmarks of line lists of any size (issue 18).
//
// BenchmarkBzip2 decodes the ExoMol CO transitions of shared data
// (12C-16O__Li2015.trans.bz2, 1.4 MB compressed) with the standard
// library's compress/bzip2 and with the decoder chord uses
// (github.com/cosnicolaou/pbzip2, one goroutine and two); MB/s is of
// decompressed data.
//
// BenchmarkStreamLines builds a k-table from a synthetic list (package
// internal/synthlines) of 2e5 lines over 2000-2400 cm^-1 in bzip2 chunks,
// with 1 and 2 workers: decompression, parsing, line intensities, the
// weak-line test and the profiles; lines/s counts each line once.
//
// BenchmarkKTableLines is the build of issue 18's workload: 0.6-5.5 um,
// R = 100 bins (227), 16 g-points, 20 pressures (1e-7 to 100 bar) x 10
// temperatures (300 to 3000 K), the default weak-line cut, from a
// synthetic list of N lines over the range in 100 cm^-1 bzip2 chunks,
// for N = 1e5 and 1e6, and for larger N given by CHORD_BENCH_LINES
// (e.g. 1e7,1e8); the lists are kept in CHORD_BENCH_DIR when it is set
// (writing 1e8 lines takes about ten minutes), else in a temporary
// directory. It reports the peak heap in use (MB) sampled during the
// build, and lines/s.
//
// BenchmarkKTableDensity is a few bins of that table at the line density
// of a long list (below).

func BenchmarkBzip2(b *testing.B) {
	path := filepath.Join(testenv.SharedData(b, "exomol"), "12C-16O__Li2015.trans.bz2")
	for _, c := range []struct {
		name string
		open func() (io.ReadCloser, error)
	}{
		{"stdlib", func() (io.ReadCloser, error) {
			f, err := os.Open(path)
			if err != nil {
				return nil, err
			}
			return struct {
				io.Reader
				io.Closer
			}{bzip2.NewReader(bufio.NewReaderSize(f, 1<<20)), f}, nil
		}},
		{"pbzip2-1", func() (io.ReadCloser, error) { return compressed.Open(path, 1) }},
		{"pbzip2-2", func() (io.ReadCloser, error) { return compressed.Open(path, 2) }},
	} {
		b.Run(c.name, func(b *testing.B) {
			var n int64
			for b.Loop() {
				r, err := c.open()
				if err != nil {
					b.Fatal(err)
				}
				if n, err = io.Copy(io.Discard, r); err != nil {
					b.Fatal(err)
				}
				r.Close()
			}
			b.SetBytes(n)
		})
	}
}

// synthList writes (or finds) a synthetic list of n lines over
// [nuLo, nuHi] cm^-1 and returns its .def file.
func synthList(b *testing.B, n int64, nuLo, nuHi, chunk float64) string {
	dir := os.Getenv("CHORD_BENCH_DIR")
	if dir == "" {
		dir = b.TempDir()
	}
	dir = filepath.Join(dir, fmt.Sprintf("synth-%d-%g-%g", n, nuLo, nuHi))
	def := filepath.Join(dir, "1H2-16O__Synth.def")
	if _, err := os.Stat(filepath.Join(dir, "done")); err == nil {
		return def
	}
	start := time.Now()
	def, err := synthlines.Write(synthlines.Spec{Dir: dir, Name: "1H2-16O__Synth", Lines: n, NuMin: nuLo, NuMax: nuHi, Chunk: chunk, Compress: "bz2", States: 100000, Seed: 1})
	if err != nil {
		b.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "done"), nil, 0o644); err != nil {
		b.Fatal(err)
	}
	b.Logf("wrote %d synthetic lines to %s in %s", n, dir, time.Since(start).Round(time.Second))
	return def
}

var kSink *opacity.KTable

func buildK(b *testing.B, def string, s lbl.KSettings, n int64) {
	list, err := build.Open(&build.Source{Files: []string{def}}, lbl.Observer{})
	if err != nil {
		b.Fatal(err)
	}
	runtime.GC()
	stop := make(chan struct{})
	peak := testenv.PeakHeap(stop)
	start := time.Now()
	cpu0 := cpuSeconds()
	for b.Loop() {
		if kSink, err = list.KTable(context.Background(), s); err != nil {
			b.Fatal(err)
		}
	}
	close(stop)
	// The machine is shared: CPU time is the steadier measure.
	cpu := (cpuSeconds() - cpu0) / float64(b.N)
	b.ReportMetric(cpu, "cpu-s/op")
	b.ReportMetric(float64(n)/cpu, "lines/cpu-s")
	b.ReportMetric(float64(n)*float64(b.N)/time.Since(start).Seconds(), "lines/s")
	b.ReportMetric(float64(peak.Load())/1e6, "peak-heap-MB")
	var bs struct {
		P int64 `json:"line_evaluations_profiled"`
		B int64 `json:"line_evaluations_binned"`
	}
	if err := json.Unmarshal([]byte(kSink.Meta[opacity.MetaBuildSettings]), &bs); err != nil {
		b.Fatal(err)
	}
	b.ReportMetric(100*float64(bs.P)/float64(bs.P+bs.B), "%profiled")
}

func BenchmarkStreamLines(b *testing.B) {
	const n = 200_000
	def := synthList(b, n, 2000, 2400, 100)
	lo, hi := opacity.AnchoredBins(1e4/2400, 1e4/2000, 100)
	for _, workers := range []int{1, 2} {
		b.Run(fmt.Sprintf("workers=%d", workers), func(b *testing.B) {
			s := lbl.KSettings{Log10P: []float64{0, 2, 4, 6}, T: []float64{500, 1500}, Lo: lo, Hi: hi, Workers: workers,
				Lines: lbl.LineSettings{WeakCut: lbl.DefaultWeakCut}}
			buildK(b, def, s, n)
		})
	}
}

func BenchmarkKTableLines(b *testing.B) {
	sizes := []int64{100_000, 1_000_000}
	if v := os.Getenv("CHORD_BENCH_LINES"); v != "" {
		sizes = nil
		for _, f := range splitComma(v) {
			x, err := strconv.ParseFloat(f, 64)
			if err != nil {
				b.Fatalf("CHORD_BENCH_LINES %q: %v", v, err)
			}
			sizes = append(sizes, int64(x))
		}
	}
	nuLo, nuHi := 1e4/5.5, 1e4/0.6
	lo, hi := opacity.AnchoredBins(0.6, 5.5, 100)
	// Peak memory is what the build holds live: a low GC target keeps the
	// heap in use near it.
	defer debug.SetGCPercent(debug.SetGCPercent(25))
	for _, n := range sizes {
		b.Run(fmt.Sprintf("lines=%.0e", float64(n)), func(b *testing.B) {
			def := synthList(b, n, nuLo, nuHi, 100)
			buildK(b, def, ktableSettings(lo, hi), n)
		})
	}
}

// BenchmarkKTableDensity builds a few bins of BenchmarkKTableLines'
// table (2.44-2.56 um, R = 100, 4 bins, on the same 20 x 10 grid with the
// same settings) from a synthetic list at the line density of a full list
// of CHORD_BENCH_DENSITY lines over 0.6-5.5 um (default 1e8), written over
// the bins and the wing cut-off either side (3850-4150 cm^-1; 2e6 lines
// for the default). It does about a seventieth of the full build's work
// (the full 1e7-line build took 71 times the CPU time of this one at the
// 1e7 density), so the cost of a dense list is measured in a minute.
func BenchmarkKTableDensity(b *testing.B) {
	full := 1e8
	if v := os.Getenv("CHORD_BENCH_DENSITY"); v != "" {
		var err error
		if full, err = strconv.ParseFloat(v, 64); err != nil || !(full > 0) {
			b.Fatalf("CHORD_BENCH_DENSITY %q: want a positive number of lines", v)
		}
	}
	const nuLo, nuHi = 3850.0, 4150.0
	n := int64(full / (1e4/0.6 - 1e4/5.5) * (nuHi - nuLo))
	def := synthList(b, n, nuLo, nuHi, 100)
	lo, hi := opacity.AnchoredBins(1e4/4100, 1e4/3900, 100)
	defer debug.SetGCPercent(debug.SetGCPercent(25))
	buildK(b, def, ktableSettings(lo, hi), n)
}

// ktableSettings is the table of issue 18's workload on bins lo, hi: 20
// pressures (1e-7 to 100 bar) x 10 temperatures (300 to 3000 K), 16 g,
// the default weak-line cut.
func ktableSettings(lo, hi []float64) lbl.KSettings {
	logP := make([]float64, 20)
	for i := range logP {
		logP[i] = -2 + 9*float64(i)/19
	}
	temps := []float64{300, 500, 700, 900, 1100, 1400, 1700, 2000, 2500, 3000}
	return lbl.KSettings{Log10P: logP, T: temps, Lo: lo, Hi: hi, Lines: lbl.LineSettings{WeakCut: lbl.DefaultWeakCut}}
}

// cpuSeconds returns the CPU time (user and system) of the process.
func cpuSeconds() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return float64(ru.Utime.Nano()+ru.Stime.Nano()) / 1e9
}

func splitComma(s string) []string {
	var out []string
	start := 0
	for i := 0; i <= len(s); i++ {
		if i == len(s) || s[i] == ',' {
			out = append(out, s[start:i])
			start = i + 1
		}
	}
	return out
}
