package sampler

import "math"

// sliceChain is one slice-sampling chain of a batch (Neal 2003, Ann.
// Statist. 31, 705, sect. 4: stepping out without a limit, then
// shrinkage), sampling the prior in the unit cube restricted to L > L*. Each
// update moves along a direction drawn uniformly on the unit sphere and
// mapped through the Cholesky factor of the bounding ellipsoid nearest the
// chain's start, so the initial interval is one ellipsoid radius wide. Points
// outside the cube are outside the slice and cost no evaluation. The chain
// is a state machine: advance runs it until it needs an evaluation, receive
// takes the result.
type sliceChain struct {
	u, dir []float64 // current point in the unit cube, direction (Dim)
	xe     []float64 // current parameters and extras (Dim+NumExtra)
	logl   float64
	ell    int     // ellipsoid giving the directions
	lo, hi float64 // interval along dir, in units of dir
	t      float64 // offset of the pending shrinkage proposal
	phase  int
	steps  int // completed updates
	shrink int // shrinkage proposals in the current update
}

const (
	sliceBegin  = iota // next: draw a direction and place the interval
	sliceLeft          // stepping out to the left
	sliceRight         // stepping out to the right
	sliceShrink        // drawing from the interval, shrinking it on failure
	sliceDone
)

// maxShrinks bounds the shrinkage proposals of one update. The current
// point is inside the slice, so the interval closes in on it and a
// proposal is accepted long before: reaching the bound (2^-64 of the
// interval left, for halving) means the start lies on the edge of the slice
// (a tie with the threshold); the update then leaves the point where it is.
const maxShrinks = 64

// sliceBatch replaces the queue with the end points of Batch chains,
// started from live points drawn uniformly among those above lstar.
func (r *nestedRun) sliceBatch(lstar float64) {
	st := r.st
	d, ne, nx := st.Dim, st.Dim+st.NumExtra, st.NumExtra
	r.lstar = lstar
	for i := range r.chains {
		c := &r.chains[i]
		j := r.rng.IntN(st.Live)
		for !(st.LogL[j] > lstar) {
			j = r.rng.IntN(st.Live)
		}
		copy(c.u, st.U[j*d:(j+1)*d])
		copy(c.xe[:d], st.X[j*d:(j+1)*d])
		copy(c.xe[d:], st.Extra[j*nx:(j+1)*nx])
		c.logl = st.LogL[j]
		c.ell = st.bound.nearest(c.u, r.y)
		c.phase, c.steps = sliceBegin, 0
	}
	for {
		m := 0
		for i := range r.chains {
			if r.advance(&r.chains[i], r.pu[m*d:(m+1)*d]) {
				r.owner[m] = i
				m++
			}
		}
		if m == 0 {
			break
		}
		r.pool.evaluate(r.plogl, r.pxe, r.pu, m)
		st.Evals += m
		r.res.Evaluations += m
		r.res.SliceEvaluations += m
		for s := range m {
			r.receive(&r.chains[r.owner[s]], s)
		}
	}
	q := &st.queue
	for i := range r.chains {
		c := &r.chains[i]
		copy(q.u[i*d:(i+1)*d], c.u)
		copy(q.xe[i*ne:(i+1)*ne], c.xe)
		q.logl[i] = c.logl
	}
	q.n, q.next, q.slice = len(r.chains), 0, true
}

// advance runs chain c, drawing its random numbers, until it needs the
// likelihood at a point, which it writes to dst (and returns true), or has
// made all its updates (false).
func (r *nestedRun) advance(c *sliceChain, dst []float64) bool {
	for {
		switch c.phase {
		case sliceBegin:
			if c.steps == r.cfg.sliceSteps {
				c.phase = sliceDone
				return false
			}
			var n2 float64
			for i := range r.z {
				v := r.rng.NormFloat64()
				r.z[i] = v
				n2 += v * v
			}
			inv := 1 / math.Sqrt(n2)
			for i := range r.z {
				r.z[i] *= inv
			}
			r.st.bound.ells[c.ell].apply(c.dir, r.z)
			v := r.rng.Float64()
			c.lo, c.hi, c.shrink, c.phase = -v, 1-v, 0, sliceLeft
		case sliceLeft:
			if c.along(dst, c.lo) {
				return true
			}
			c.phase = sliceRight
		case sliceRight:
			if c.along(dst, c.hi) {
				return true
			}
			c.phase = sliceShrink
		case sliceShrink:
			c.t = c.lo + r.rng.Float64()*(c.hi-c.lo)
			if c.along(dst, c.t) {
				return true
			}
			c.narrow()
		default:
			return false
		}
	}
}

// receive gives chain c the log-likelihood of its pending point, batch
// slot s.
func (r *nestedRun) receive(c *sliceChain, s int) {
	d, ne := r.st.Dim, r.st.Dim+r.st.NumExtra
	in := r.plogl[s] > r.lstar
	switch c.phase {
	case sliceLeft:
		if in {
			c.lo--
		} else {
			c.phase = sliceRight
		}
	case sliceRight:
		if in {
			c.hi++
		} else {
			c.phase = sliceShrink
		}
	case sliceShrink:
		if in {
			copy(c.u, r.pu[s*d:(s+1)*d])
			copy(c.xe, r.pxe[s*ne:(s+1)*ne])
			c.logl = r.plogl[s]
			c.steps++
			c.phase = sliceBegin
			return
		}
		c.narrow()
	}
}

// along sets dst = u + t dir and reports whether it lies in the cube.
func (c *sliceChain) along(dst []float64, t float64) bool {
	for i, v := range c.u {
		dst[i] = v + t*c.dir[i]
	}
	return inCube(dst)
}

// narrow shrinks the interval to the rejected offset t, keeping the
// current point (offset 0) inside.
func (c *sliceChain) narrow() {
	if c.t < 0 {
		c.lo = c.t
	} else {
		c.hi = c.t
	}
	c.shrink++
	if c.shrink == maxShrinks {
		c.steps++
		c.phase = sliceBegin
	}
}
