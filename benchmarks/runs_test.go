package benchmarks

import (
	"bufio"
	"context"
	"fmt"
	"os"
	"runtime"
	"strconv"
	"strings"
	"testing"

	"chord/chains"
	"chord/config"
	"chord/retrieve"
	"chord/sampler"
)

// Runs: the chain store's memory and the cost of sampling plus storing
// against the forward model.
//
//	go test -run '^$' -bench 'ChainStore|RunOverhead' -benchmem ./benchmarks/

const (
	runWalkers = 64
	runDim     = 12
	runExtra   = 4 // log_likelihood and three derived quantities
)

func runLayout() chains.Layout {
	l := chains.Layout{Walkers: runWalkers, Dim: runDim, NumExtra: runExtra}
	l.Columns = append(l.Columns, chains.Column{Name: "log_likelihood", Role: chains.RoleDerived, Source: 0})
	for j := range runDim {
		l.Columns = append(l.Columns, chains.Column{Name: fmt.Sprintf("p%02d", j), Role: chains.RoleParameter, Source: j, Prior: "uniform(0, 1)"})
	}
	for j := 1; j < runExtra; j++ {
		l.Columns = append(l.Columns, chains.Column{Name: fmt.Sprintf("d%d", j), Role: chains.RoleDerived, Source: j})
	}
	return l
}

// peakRSS returns the process's peak resident set size (VmHWM) in bytes,
// or 0 where /proc is not available.
func peakRSS() float64 {
	f, err := os.Open("/proc/self/status")
	if err != nil {
		return 0
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		if v, ok := strings.CutPrefix(sc.Text(), "VmHWM:"); ok {
			kb, _ := strconv.ParseFloat(strings.TrimSuffix(strings.TrimSpace(v), " kB"), 64)
			return kb * 1024
		}
	}
	return 0
}

// BenchmarkChainStore1e6 writes 10^6 chain rows (64 walkers x 15625 steps,
// 12 parameters, 4 extras; a part and checkpoint-sized commit every 1000
// steps) and reports the peak heap in use during the write (sampled every
// 500 steps, runtime.MemStats.HeapInuse), the process's peak RSS (VmHWM,
// including the test binary), and ns per row. Goal: peak under 200 MB.
func BenchmarkChainStore1e6(b *testing.B) {
	b.ReportAllocs()
	l := runLayout()
	const steps = 1_000_000 / runWalkers
	pos := make([]float64, runWalkers*runDim)
	logp := make([]float64, runWalkers)
	extra := make([]float64, runWalkers*runExtra)
	var peakHeap uint64
	for b.Loop() {
		dir := b.TempDir()
		w, err := chains.Create(dir, l)
		if err != nil {
			b.Fatal(err)
		}
		for s := 1; s <= steps; s++ {
			for i := range pos {
				pos[i] = float64(s) + float64(i)*1e-3
			}
			for i := range logp {
				logp[i] = -float64(s)
			}
			if err := w.WriteStep(s, pos, logp, extra); err != nil {
				b.Fatal(err)
			}
			if s%1000 == 0 {
				if _, err := w.Commit(); err != nil {
					b.Fatal(err)
				}
			}
			if s%500 == 0 {
				var ms runtime.MemStats
				runtime.ReadMemStats(&ms)
				peakHeap = max(peakHeap, ms.HeapInuse)
			}
		}
		if _, err := w.Commit(); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(peakHeap)/1e6, "peak-heap-MB")
	b.ReportMetric(peakRSS()/1e6, "peak-RSS-MB")
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/1e6, "ns/row")
}

// trivialTarget is a 12-D standard normal: the sampler and the store are
// the only cost.
type trivialTarget struct{}

func (trivialTarget) Dim() int                        { return runDim }
func (trivialTarget) NumExtra() int                   { return runExtra }
func (trivialTarget) NewEvaluator() sampler.Evaluator { return trivialTarget{} }
func (trivialTarget) LogProb(x, extra []float64) float64 {
	s := 0.0
	for _, v := range x {
		s += v * v
	}
	for i := range extra {
		extra[i] = s
	}
	return -s / 2
}

// BenchmarkRunOverhead is one ensemble step of 64 walkers in 12 dimensions
// with a trivial log density, recorded by the chain store (rows written,
// a part committed and the checkpoint written every 100 steps), run
// through retrieve.StartRun: the per-step cost of everything but the
// forward model. Divided by 64 it is the overhead per posterior
// evaluation, to compare with BenchmarkTransitW1 (goal: under 2%).
func BenchmarkRunOverhead(b *testing.B) {
	b.ReportAllocs()
	t := trivialTarget{}
	l := runLayout()
	spec := &retrieve.RunSpec{
		Target: t, Layout: l, Seed: 1, RunID: "bench", ConfigSHA256: "bench",
		Init: func(ctx context.Context, workers int) (*sampler.State, error) {
			c, s := make([]float64, runDim), make([]float64, runDim)
			for i := range s {
				s[i] = 1
			}
			return sampler.InitBall(ctx, t, c, s, sampler.InitSettings{Walkers: runWalkers, Seed: 1, Workers: workers})
		},
	}
	dir := b.TempDir()
	b.ResetTimer()
	out, err := retrieve.StartRun(context.Background(), dir, spec, retrieve.RunOptions{Stop: config.StopRule{Steps: max(b.N, 1)}, Workers: 1, CheckpointSteps: 100})
	if err != nil {
		b.Fatal(err)
	}
	b.StopTimer()
	if out.Step != max(b.N, 1) {
		b.Fatalf("ran %d steps", out.Step)
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/runWalkers, "ns/eval")
}
