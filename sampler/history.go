package sampler

import (
	"fmt"
	"math"
)

// History is a bounded, thinned in-memory copy of the chain's positions,
// from which the convergence rule estimates autocorrelation times. It holds
// at most capacity samples per walker: when full, every second sample is
// dropped and the stride s between kept steps doubles, so its memory stays
// flat (capacity x walkers x dim float64s) however long the chain runs.
//
// Tau estimated from a thinned history is tau_thin * s. While s is well
// below tau (tau/41 to tau/20 when the chain is 50 tau long with the
// default capacity) this is the tau of the full chain. For larger strides it
// overestimates: for an AR(1)-like chain tau_thin * s = s coth(s/tau) >= tau,
// so thinning delays rather than hastens a convergence stop.
//
// A History is a Recorder. To continue toward convergence after a resume
// in a new process, make a new History and replay the stored chain into it
// step by step from step 1 (it then holds exactly what an uninterrupted run
// would hold), or replay any suffix of it, or pass an empty one, which then
// judges convergence on the steps after the resume only (conservative).
type History struct {
	walkers, dim int
	cap          int // samples kept per walker, even

	first, last int // Index of the first and last step recorded; 0 if none
	stride      int // steps between kept samples
	n           int // samples held
	buf         []float64

	ac     *Autocorr
	series [][]float64
}

// DefaultHistoryCap is the history size used when none is given: 2048
// samples per walker, 12.6 MB for 64 walkers in 12 dimensions.
const DefaultHistoryCap = 2048

// NewHistory returns an empty history; capacity 0 means DefaultHistoryCap.
func NewHistory(walkers, dim, capacity int) (*History, error) {
	if capacity == 0 {
		capacity = DefaultHistoryCap
	}
	if walkers < 1 || dim < 1 || capacity < 16 || capacity%2 != 0 {
		return nil, fmt.Errorf("sampler: history of %d walkers, %d parameters, capacity %d: want positive sizes and an even capacity of at least 16", walkers, dim, capacity)
	}
	return &History{walkers: walkers, dim: dim, cap: capacity, stride: 1}, nil
}

// Record appends a step; steps must arrive in order without gaps.
func (h *History) Record(s *Step) error {
	if s.Walkers != h.walkers || s.Dim != h.dim {
		return fmt.Errorf("sampler: history of %d walkers x %d parameters given a step of %d x %d", h.walkers, h.dim, s.Walkers, s.Dim)
	}
	if h.last != 0 && s.Index != h.last+1 {
		return fmt.Errorf("sampler: history holds steps up to %d, given step %d", h.last, s.Index)
	}
	if h.last == 0 {
		h.first = s.Index
	}
	h.last = s.Index
	if (s.Index-h.first)%h.stride != 0 {
		return nil
	}
	if h.buf == nil {
		h.buf = make([]float64, h.cap*h.walkers*h.dim)
	}
	row := h.walkers * h.dim
	if h.n == h.cap {
		for j := 1; j < h.cap/2; j++ {
			copy(h.buf[j*row:(j+1)*row], h.buf[2*j*row:(2*j+1)*row])
		}
		h.n = h.cap / 2
		h.stride *= 2
	}
	copy(h.buf[h.n*row:(h.n+1)*row], s.Pos)
	h.n++
	return nil
}

// Span returns the number of steps the history covers.
func (h *History) Span() int {
	if h.last == 0 {
		return 0
	}
	return h.last - h.first + 1
}

// Last returns the Index of the last step recorded, 0 if none.
func (h *History) Last() int { return h.last }

// Tau fills dst (len Dim, allocated if nil) with the integrated
// autocorrelation time of each parameter in steps, with Sokal's window
// constant c; ok is false if any estimate lacks a window (see
// Autocorr.Time) or the history holds fewer than 16 samples.
func (h *History) Tau(dst []float64, c float64) (tau []float64, ok bool) {
	if dst == nil {
		dst = make([]float64, h.dim)
	}
	if h.n < 16 {
		for i := range dst {
			dst[i] = math.NaN()
		}
		return dst, false
	}
	if h.ac == nil || h.ac.n != h.n {
		h.ac = NewAutocorr(h.n)
		h.series = make([][]float64, h.walkers)
		for k := range h.series {
			h.series[k] = make([]float64, h.n)
		}
	}
	ok = true
	row := h.walkers * h.dim
	for p := range h.dim {
		for k, s := range h.series {
			for j := range s {
				s[j] = h.buf[j*row+k*h.dim+p]
			}
		}
		t, good := h.ac.Time(h.series, c)
		dst[p] = t * float64(h.stride)
		ok = ok && good
	}
	return dst, ok
}

// Convergence is the stopping rule "the chain is longer than Factor times
// the integrated autocorrelation time of every parameter, and each tau
// changed by less than RelChange since the previous check" (common practice
// for ensemble samplers). Checks happen at steps that are multiples of
// Every, so a resumed run checks at the same steps as an uninterrupted one.
type Convergence struct {
	Every     int      // check interval in steps; 0 means DefaultCheckEvery
	Factor    float64  // required chain length in units of tau; 0 means DefaultConvergedTaus
	RelChange float64  // required relative stability of tau; 0 means DefaultTauRelChange
	Window    float64  // Sokal's window constant c; 0 means DefaultSokalWindow
	History   *History // positions the rule looks at; nil means a new one covering this call only
}

// Defaults of the convergence rule: a chain longer than 50 integrated
// autocorrelation times with tau stable to 1% (common practice for
// ensemble samplers), tau estimated with Sokal's window c = 5 (Goodman &
// Weare 2010). Reports and progress messages use the same constants.
const (
	DefaultCheckEvery    = 100
	DefaultConvergedTaus = 50.0
	DefaultTauRelChange  = 0.01
	DefaultSokalWindow   = 5.0
)

type convergence struct {
	every               int
	factor, rel, window float64
	h                   *History
	tau                 []float64
}

func (c *Convergence) resolve(st *State) (convergence, error) {
	r := convergence{every: c.Every, factor: c.Factor, rel: c.RelChange, window: c.Window, h: c.History}
	if r.every == 0 {
		r.every = DefaultCheckEvery
	}
	if r.factor == 0 {
		r.factor = DefaultConvergedTaus
	}
	if r.rel == 0 {
		r.rel = DefaultTauRelChange
	}
	if r.window == 0 {
		r.window = DefaultSokalWindow
	}
	if r.every < 1 || !(r.factor > 0) || !(r.rel > 0) || !(r.window > 0) || math.IsInf(r.factor+r.rel+r.window, 0) {
		return r, fmt.Errorf("sampler: convergence rule: every %d, factor %v, relative change %v, window %v; want positive finite values", c.Every, c.Factor, c.RelChange, c.Window)
	}
	if r.h == nil {
		var err error
		if r.h, err = NewHistory(st.Walkers, st.Dim, 0); err != nil {
			return r, err
		}
	}
	if r.h.walkers != st.Walkers || r.h.dim != st.Dim {
		return r, fmt.Errorf("sampler: convergence history of %d walkers x %d parameters for a state of %d x %d", r.h.walkers, r.h.dim, st.Walkers, st.Dim)
	}
	if r.h.last != 0 && r.h.last != st.Step {
		return r, fmt.Errorf("sampler: convergence history ends at step %d but the state is at step %d", r.h.last, st.Step)
	}
	r.tau = make([]float64, st.Dim)
	return r, nil
}

// check estimates tau, compares it with the previous estimate in st.Tau,
// stores the new one there and reports convergence.
func (c *convergence) check(st *State) bool {
	tau, ok := c.h.Tau(c.tau, c.window)
	span := float64(c.h.Span())
	prev := st.Tau
	converged := ok && len(prev) == len(tau)
	for p, t := range tau {
		if !(span > c.factor*t) {
			converged = false
		}
		if converged && !(math.Abs(t-prev[p]) < c.rel*t) {
			converged = false
		}
	}
	st.Tau = append(st.Tau[:0], tau...)
	st.TauStep = st.Step
	return converged
}
