package sampler

import (
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"hash/crc32"
	"math"
	"math/rand/v2"
)

// NestedState is everything needed to continue a nested-sampling run bit
// for bit: the live points (unit-cube coordinates, parameters,
// log-likelihoods, extras), the counters, the evidence and information
// accumulated so far, the queue of evaluated candidates not yet used, the
// bounding ellipsoids, the choice between rejection and slice sampling, and
// the PCG generator's state. MarshalBinary / UnmarshalBinary encode it with
// a CRC-32C checksum.
//
// A NestedState is made by InitNested, advanced by RunNested and restored by
// UnmarshalBinary.
type NestedState struct {
	Live, Dim, NumExtra int
	// Iter counts the points recorded so far: the dead points, and once
	// the run is Finished the final live points too.
	Iter int
	// Evals counts the likelihood evaluations so far, the initial live
	// points included.
	Evals int
	U     []float64 // Live*Dim: the live points in the unit cube
	X     []float64 // Live*Dim: their parameters
	LogL  []float64 // Live: their log-likelihoods (-Inf where rejected)
	Extra []float64 // Live*NumExtra
	// LogZ and H are the log evidence and the information of the points
	// recorded so far (LogZ = -Inf before the first point of positive
	// likelihood). NestedState.Evidence adds the live points' share.
	LogZ, H  float64
	Finished bool // the final live points have been recorded
	// Method is the exact description of the settings the run was made
	// with ("" before the first RunNested).
	Method string

	queue     nestedQueue
	bound     bound
	useSlice  bool // the current batch method is slice sampling
	sliceLeft int  // iterations of slice sampling left before rejection is tried again
	rejEvals  int  // bound draws evaluated since the last decision
	rejUsed   int  // of them, used as replacements
	// overshoot is ln(V/X) after the last search for clusters: the log
	// ratio of the bound's volume to the expected volume.
	overshoot float64
	pcg       *rand.PCG
}

// nestedQueue holds evaluated candidates in the order they were drawn; the
// ones from next on are still unused.
type nestedQueue struct {
	u, xe, logl []float64 // capacity Batch: Dim, Dim+NumExtra and 1 per candidate
	n, next     int
	slice       bool // the candidates are slice-sampling end points
}

// reserve makes room for k candidates, keeping the current ones.
func (q *nestedQueue) reserve(k, d, ne int) {
	if len(q.logl) >= k {
		return
	}
	u, xe, logl := make([]float64, k*d), make([]float64, k*ne), make([]float64, k)
	copy(u, q.u[:q.n*d])
	copy(xe, q.xe[:q.n*ne])
	copy(logl, q.logl[:q.n])
	q.u, q.xe, q.logl = u, xe, logl
}

// NestedInit configures the initial live points.
type NestedInit struct {
	Live    int    // number of live points: at least 2(Dim+1)
	Seed    uint64 // seed of the PCG generator that drives the whole run
	Workers int    // goroutines evaluating the initial points; 0 (or less) means GOMAXPROCS
}

// InitNested draws the Live initial points uniformly from the unit cube
// (point 0 first, coordinate 0 first, from the run's own generator), maps
// them through prior and evaluates the log-likelihood there. It is an
// error if every point has a log-likelihood of NaN or ±Inf.
func InitNested(ctx context.Context, t Target, prior []Quantiler, s NestedInit) (*NestedState, error) {
	d, nx := t.Dim(), t.NumExtra()
	if err := checkNestedShape(s.Live, d, nx); err != nil {
		return nil, err
	}
	if err := checkPrior(prior, d); err != nil {
		return nil, err
	}
	pcg := rand.NewPCG(s.Seed, seedStream)
	rng := rand.New(pcg)
	st := &NestedState{
		Live: s.Live, Dim: d, NumExtra: nx,
		U: make([]float64, s.Live*d), X: make([]float64, s.Live*d),
		LogL: make([]float64, s.Live), Extra: make([]float64, s.Live*nx),
		LogZ: math.Inf(-1), pcg: pcg,
	}
	for i := range st.U {
		st.U[i] = openUniform(rng)
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	xe := make([]float64, s.Live*(d+nx))
	p := newPool(nestedTarget{t, prior}, workerCount(s.Workers, s.Live))
	p.evaluate(st.LogL, xe, st.U, s.Live)
	p.close()
	for k := range s.Live {
		copy(st.X[k*d:(k+1)*d], xe[k*(d+nx):k*(d+nx)+d])
		copy(st.Extra[k*nx:(k+1)*nx], xe[k*(d+nx)+d:(k+1)*(d+nx)])
	}
	st.Evals = s.Live
	if _, _, lmax := st.extremes(); math.IsInf(lmax, -1) {
		return nil, fmt.Errorf("sampler: the log-likelihood is NaN or infinite at all %d initial prior draws; nested sampling needs some prior volume where it is finite", s.Live)
	}
	return st, nil
}

func checkNestedShape(live, dim, numExtra int) error {
	switch {
	case dim < 1:
		return fmt.Errorf("sampler: target has %d parameters, want at least 1", dim)
	case numExtra < 0:
		return fmt.Errorf("sampler: target has %d extra values, want at least 0", numExtra)
	case live < 2*(dim+1):
		return fmt.Errorf("sampler: %d live points for %d parameters: want at least %d, so that bounding ellipsoids can be fitted", live, dim, 2*(dim+1))
	}
	return nil
}

// check validates a state before it is run.
func (st *NestedState) check() error {
	if err := checkNestedShape(st.Live, st.Dim, st.NumExtra); err != nil {
		return err
	}
	n, d := st.Live, st.Dim
	if len(st.U) != n*d || len(st.X) != n*d || len(st.LogL) != n || len(st.Extra) != n*st.NumExtra || st.pcg == nil {
		return errors.New("sampler: nested state is not initialised (make it with InitNested or UnmarshalBinary)")
	}
	if st.Iter < 0 || st.Evals < 0 {
		return fmt.Errorf("sampler: nested state has %d iterations and %d evaluations", st.Iter, st.Evals)
	}
	for k := range n {
		if !inCube(st.U[k*d : (k+1)*d]) {
			return fmt.Errorf("sampler: live point %d lies outside the open unit cube (%v)", k, st.U[k*d:(k+1)*d])
		}
		if l := st.LogL[k]; math.IsNaN(l) || math.IsInf(l, 1) {
			return fmt.Errorf("sampler: live point %d has log-likelihood %v", k, l)
		}
	}
	if _, _, lmax := st.extremes(); math.IsInf(lmax, -1) {
		return errors.New("sampler: every live point has log-likelihood -Inf")
	}
	return nil
}

// extremes returns the index of the live point of lowest log-likelihood
// (the first, on ties) with that value, and the highest value.
func (st *NestedState) extremes() (worst int, lmin, lmax float64) {
	lmin, lmax = math.Inf(1), math.Inf(-1)
	for k, l := range st.LogL {
		if l < lmin {
			worst, lmin = k, l
		}
		if l > lmax {
			lmax = l
		}
	}
	return worst, lmin, lmax
}

// logX is the log of the prior volume expected to remain inside the
// current threshold, -Iter/Live.
func (st *NestedState) logX() float64 { return -float64(st.Iter) / float64(st.Live) }

// logWidth is the log prior mass of the next dead point, X_i - X_{i+1} =
// X_i (1 - exp(-1/Live)).
func (st *NestedState) logWidth() float64 {
	return st.logX() + math.Log(-math.Expm1(-1/float64(st.Live)))
}

// remaining is ln(Z + L_max X) - ln Z, the most the live points can add
// to ln Z.
func (st *NestedState) remaining(lmax float64) float64 {
	if math.IsInf(st.LogZ, -1) {
		return math.Inf(1)
	}
	return math.Log1p(math.Exp(st.logX() + lmax - st.LogZ))
}

// Evidence returns the log evidence ln Z, its statistical error
// sqrt(H/Live) and the information H (nats). Before the run is finished,
// the live points are counted as the final points would be (prior mass
// X/Live each), without changing the state.
func (st *NestedState) Evidence() (logZ, logZErr, h float64) {
	logZ, h = st.LogZ, st.H
	if !st.Finished {
		lnw := st.logX() - math.Log(float64(st.Live))
		for _, k := range st.liveOrder() {
			logZ, h = addEvidence(logZ, h, lnw, st.LogL[k])
		}
	}
	return logZ, math.Sqrt(max(h, 0) / float64(st.Live)), h
}

// Clone returns a deep copy of the state, generator included.
func (st *NestedState) Clone() *NestedState {
	c := *st
	c.U = append([]float64(nil), st.U...)
	c.X = append([]float64(nil), st.X...)
	c.LogL = append([]float64(nil), st.LogL...)
	c.Extra = append([]float64(nil), st.Extra...)
	c.queue.u = append([]float64(nil), st.queue.u...)
	c.queue.xe = append([]float64(nil), st.queue.xe...)
	c.queue.logl = append([]float64(nil), st.queue.logl...)
	c.bound.ells = make([]ellipsoid, len(st.bound.ells))
	for i := range c.bound.ells {
		c.bound.ells[i] = newEllipsoid(st.Dim)
		c.bound.ells[i].copyFrom(&st.bound.ells[i])
	}
	c.bound.cum = append([]float64(nil), st.bound.cum...)
	if st.pcg != nil {
		p := *st.pcg
		c.pcg = &p
	}
	return &c
}

// Checkpoint encoding of a NestedState, little-endian:
//
//	magic "chordnst" | version u32 | live u32 | dim u32 | extra u32 |
//	iter u64 | evals u64 | flags u32 (1 finished, 2 slice mode, 4 queue
//	from slice sampling) | slice iterations left u64 | bound draws evaluated
//	u64 | of them used u64 | queue length u32 | queue next u32 |
//	ellipsoids u32 | ln Z f64 | H f64 | bound overshoot ln(V/X) f64 |
//	len u32 + method string |
//	len u32 + PCG state | U, X, LogL, Extra f64... | queue: u, x+extra,
//	logL f64... | ellipsoids: centre, Cholesky factor (row-major), log
//	volume f64... | CRC-32C (Castagnoli) of everything before it, u32
const (
	nestedMagic   = "chordnst"
	nestedVersion = 1
)

// MarshalBinary encodes the state with a checksum.
func (st *NestedState) MarshalBinary() ([]byte, error) {
	if st.pcg == nil {
		return nil, errors.New("sampler: cannot encode a nested state without a generator")
	}
	rs, err := st.pcg.MarshalBinary()
	if err != nil {
		return nil, err
	}
	d, ne := st.Dim, st.Dim+st.NumExtra
	q, b := &st.queue, &st.bound
	var flags uint32
	if st.Finished {
		flags |= 1
	}
	if st.useSlice {
		flags |= 2
	}
	if q.slice {
		flags |= 4
	}
	out := make([]byte, 0, 256+len(st.Method)+len(rs)+8*(len(st.U)+len(st.X)+len(st.LogL)+len(st.Extra)+q.n*(d+ne+1)+b.n*(d+d*d+1)))
	out = append(out, nestedMagic...)
	for _, v := range []int{nestedVersion, st.Live, st.Dim, st.NumExtra} {
		out = binary.LittleEndian.AppendUint32(out, uint32(v))
	}
	for _, v := range []int{st.Iter, st.Evals} {
		out = binary.LittleEndian.AppendUint64(out, uint64(v))
	}
	out = binary.LittleEndian.AppendUint32(out, flags)
	for _, v := range []int{st.sliceLeft, st.rejEvals, st.rejUsed} {
		out = binary.LittleEndian.AppendUint64(out, uint64(v))
	}
	for _, v := range []int{q.n, q.next, b.n} {
		out = binary.LittleEndian.AppendUint32(out, uint32(v))
	}
	for _, v := range []float64{st.LogZ, st.H, st.overshoot} {
		out = binary.LittleEndian.AppendUint64(out, math.Float64bits(v))
	}
	out = binary.LittleEndian.AppendUint32(out, uint32(len(st.Method)))
	out = append(out, st.Method...)
	out = binary.LittleEndian.AppendUint32(out, uint32(len(rs)))
	out = append(out, rs...)
	put := func(s []float64) {
		for _, v := range s {
			out = binary.LittleEndian.AppendUint64(out, math.Float64bits(v))
		}
	}
	put(st.U)
	put(st.X)
	put(st.LogL)
	put(st.Extra)
	put(q.u[:q.n*d])
	put(q.xe[:q.n*ne])
	put(q.logl[:q.n])
	for k := range b.n {
		e := &b.ells[k]
		put(e.c)
		put(e.l)
		put([]float64{e.logVol})
	}
	return binary.LittleEndian.AppendUint32(out, crc32.Checksum(out, crcTable)), nil
}

// UnmarshalBinary decodes a state written by MarshalBinary. A wrong
// checksum, magic, version or length is an error wrapping ErrCorruptState;
// st is unchanged then.
func (st *NestedState) UnmarshalBinary(data []byte) error {
	r, err := openFrame(data, nestedMagic, nestedVersion, "nested-sampling state")
	if err != nil {
		return err
	}
	live, d, nx := r.u32(), r.u32(), r.u32()
	iter, evals := r.u64(), r.u64()
	flags := r.u32()
	sliceLeft, rejEvals, rejUsed := int64(r.u64()), r.u64(), r.u64()
	qn, qnext, bn := r.u32(), r.u32(), r.u32()
	if live > maxStateDim || d > maxStateDim || nx > maxStateDim || iter > math.MaxInt64/2 || evals > math.MaxInt64/2 ||
		flags > 7 || rejEvals > evals || qnext > qn || qn > live || bn > live || sliceLeft > int64(live) {
		return fmt.Errorf("%w: implausible header (live %d, dim %d, extra %d, iterations %d, evaluations %d, queue %d/%d, ellipsoids %d)", ErrCorruptState, live, d, nx, iter, evals, qnext, qn, bn)
	}
	lnZ, h, overshoot := math.Float64frombits(r.u64()), math.Float64frombits(r.u64()), math.Float64frombits(r.u64())
	method := string(r.take(r.u32()))
	rs := r.take(r.u32())
	u, x, logl, extra := r.floats(live*d), r.floats(live*d), r.floats(live), r.floats(live*nx)
	q := nestedQueue{u: r.floats(qn * d), xe: r.floats(qn * (d + nx)), logl: r.floats(qn), n: int(qn), next: int(qnext), slice: flags&4 != 0}
	b := newBound(int(d), int(bn))
	b.n = int(bn)
	for k := range b.n {
		e := &b.ells[k]
		copy(e.c, r.floats(d))
		copy(e.l, r.floats(d*d))
		e.logVol = math.Float64frombits(r.u64())
	}
	if r.err || len(r.b) != 0 {
		return fmt.Errorf("%w: length does not match its header", ErrCorruptState)
	}
	b.update()
	pcg := new(rand.PCG)
	if err := pcg.UnmarshalBinary(rs); err != nil {
		return fmt.Errorf("%w: generator state: %v", ErrCorruptState, err)
	}
	*st = NestedState{
		Live: int(live), Dim: int(d), NumExtra: int(nx), Iter: int(iter), Evals: int(evals),
		U: u, X: x, LogL: logl, Extra: extra, LogZ: lnZ, H: h,
		Finished: flags&1 != 0, Method: method,
		queue: q, bound: b, useSlice: flags&2 != 0,
		sliceLeft: int(sliceLeft), rejEvals: int(rejEvals), rejUsed: int(rejUsed), overshoot: overshoot, pcg: pcg,
	}
	return nil
}
