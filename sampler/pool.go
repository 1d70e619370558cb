package sampler

import (
	"runtime"
	"sync/atomic"
)

// pool evaluates batches of points on a fixed set of goroutines, each with
// its own Evaluator. The calling goroutine is worker 0. Points are handed out
// by an atomic counter, so the assignment of points to workers varies from
// run to run; the results do not, because each point's value goes to its own
// slot and every random number is drawn outside the pool.
type pool struct {
	evals   []Evaluator
	dim, ne int

	// The current batch; written by the caller before the start signal.
	logp, extra, pos []float64
	n                int
	next             atomic.Int64

	start []chan struct{} // one per extra worker
	done  chan struct{}
}

func workerCount(workers, batch int) int {
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	return max(1, min(workers, batch))
}

func newPool(t Target, workers int) *pool {
	p := &pool{dim: t.Dim(), ne: t.NumExtra(), done: make(chan struct{}, workers)}
	p.evals = make([]Evaluator, workers)
	for i := range p.evals {
		p.evals[i] = t.NewEvaluator()
	}
	p.start = make([]chan struct{}, workers-1)
	for i := range p.start {
		ch := make(chan struct{})
		p.start[i] = ch
		e := p.evals[i+1]
		go func() {
			for range ch {
				p.work(e)
				p.done <- struct{}{}
			}
		}()
	}
	return p
}

// evaluate sets logp[i] and extra[i*ne:(i+1)*ne] from pos[i*dim:(i+1)*dim]
// for i < n.
func (p *pool) evaluate(logp, extra, pos []float64, n int) {
	p.logp, p.extra, p.pos, p.n = logp, extra, pos, n
	p.next.Store(0)
	for _, ch := range p.start {
		ch <- struct{}{}
	}
	p.work(p.evals[0])
	for range p.start {
		<-p.done
	}
}

func (p *pool) work(e Evaluator) {
	d, ne := p.dim, p.ne
	for {
		i := int(p.next.Add(1) - 1)
		if i >= p.n {
			return
		}
		p.logp[i] = e.LogProb(p.pos[i*d:(i+1)*d], p.extra[i*ne:(i+1)*ne])
	}
}

func (p *pool) close() {
	for _, ch := range p.start {
		close(ch)
	}
}
