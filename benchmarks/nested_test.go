package benchmarks

import (
	"context"
	"fmt"
	"math"
	"testing"

	"chord/sampler"
	"chord/sampler/targets"

	"gonum.org/v1/gonum/stat/distuv"
)

// box returns the uniform prior [-a, a]^d as quantile functions (gonum's
// distuv.Uniform).
func box(d int, a float64) []sampler.Quantiler {
	p := make([]sampler.Quantiler, d)
	for i := range p {
		p[i] = distuv.Uniform{Min: -a, Max: a}
	}
	return p
}

// nestedDiscard is a dead-point recorder that keeps nothing.
type nestedDiscard struct{}

func (nestedDiscard) RecordDead(*sampler.DeadPoint) error { return nil }

// BenchmarkNestedOverhead measures the nested sampler's own cost per
// likelihood evaluation in 12 dimensions, 400 live points, one worker,
// with the cheapest useful likelihood (the standard normal, -|x|^2/2, a
// dozen flops) under the uniform prior [-10, 10]^12: drawing from the
// bounding ellipsoid, refitting it every 40 iterations, choosing the worst
// point, the evidence update and recording. One op is one iteration (one
// dead point); runs are restarted when they finish, so set-up rounds to 0
// allocs/op and TestNestedAllocs in sampler checks that iterations
// allocate nothing. Goal: under 2 us per evaluation.
func BenchmarkNestedOverhead(b *testing.B) {
	const d, live = 12, 400
	tg, prior := targets.StdNormal{D: d}, box(d, 10)
	ctx := context.Background()
	b.ReportAllocs()
	var evals, done int
	var seed uint64
	for done < b.N {
		seed++
		st, err := sampler.InitNested(ctx, tg, prior, sampler.NestedInit{Live: live, Seed: seed, Workers: 1})
		if err != nil {
			b.Fatal(err)
		}
		_, res, err := sampler.RunNested(ctx, tg, prior, st, sampler.NestedSettings{Workers: 1, MaxIterations: b.N - done}, nestedDiscard{})
		if err != nil {
			b.Fatal(err)
		}
		done += res.Iterations
		evals += res.Evaluations + live
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(evals), "ns/eval")
	b.ReportMetric(float64(evals)/float64(done), "evals/iter")
}

// BenchmarkNestedGaussian10 runs nested sampling to the default evidence
// tolerance (0.1) on the 10-d standard normal likelihood under the uniform
// prior [-10, 10]^10 with 400 live points: there H is about 16 nats, so
// the reported error sqrt(H/400) is about 0.2. One op is one whole run;
// it reports the likelihood evaluations a run needs and the error reached.
func BenchmarkNestedGaussian10(b *testing.B) {
	const d, live = 10, 400
	tg, prior := targets.StdNormal{D: d}, box(d, 10)
	ctx := context.Background()
	// ln Z = d ln(sqrt(2 pi) / 20) for the unnormalised -|x|^2/2 (the
	// mass outside the box, erfc(10/sqrt 2), is negligible).
	truth := float64(d) * math.Log(math.Sqrt(2*math.Pi)/20)
	b.ReportAllocs()
	var evals, sumErr, sumDev float64
	var seed uint64
	for b.Loop() {
		seed++
		st, err := sampler.InitNested(ctx, tg, prior, sampler.NestedInit{Live: live, Seed: seed, Workers: 1})
		if err != nil {
			b.Fatal(err)
		}
		_, res, err := sampler.RunNested(ctx, tg, prior, st, sampler.NestedSettings{Workers: 1}, nil)
		if err != nil {
			b.Fatal(err)
		}
		evals += float64(res.Evaluations + live)
		sumErr += res.LogZErr
		sumDev += math.Abs(res.LogZ - truth)
	}
	n := float64(b.N)
	b.ReportMetric(evals/n, "evals/run")
	b.ReportMetric(sumErr/n, "lnZ-err")
	b.ReportMetric(sumDev/n, "|lnZ-truth|")
}

// BenchmarkNestedParallel measures nested sampling on 1 and 2 workers with
// the ~1 ms CPU-bound likelihood of BenchmarkEnsembleParallel in 12
// dimensions (100 live points, batches of 16). One op is one iteration.
func BenchmarkNestedParallel(b *testing.B) {
	tg := costly{iter: costlyIter()}
	prior := box(12, 10)
	for _, workers := range []int{1, 2} {
		b.Run(fmt.Sprintf("workers=%d", workers), func(b *testing.B) {
			ctx := context.Background()
			st, err := sampler.InitNested(ctx, tg, prior, sampler.NestedInit{Live: 100, Seed: 1, Workers: workers})
			if err != nil {
				b.Fatal(err)
			}
			b.ReportAllocs()
			b.ResetTimer()
			_, res, err := sampler.RunNested(ctx, tg, prior, st, sampler.NestedSettings{Workers: workers, MaxIterations: b.N}, nil)
			if err != nil {
				b.Fatal(err)
			}
			b.ReportMetric(float64(res.Evaluations)/b.Elapsed().Seconds(), "evals/s")
		})
	}
}
