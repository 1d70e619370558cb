package sampler

import (
	"math"
	"math/rand/v2"
)

// ellipsoid is the set {u : |L^-1 (u - c)|^2 <= 1} for a lower-triangular L
// (row-major, Dim x Dim, positive diagonal). Its volume is V_d det L, with V_d
// the volume of the unit d-ball; u = c + L z maps the unit ball onto it.
type ellipsoid struct {
	c, l   []float64
	logVol float64
}

func newEllipsoid(d int) ellipsoid {
	return ellipsoid{c: make([]float64, d), l: make([]float64, d*d)}
}

func (e *ellipsoid) copyFrom(o *ellipsoid) {
	copy(e.c, o.c)
	copy(e.l, o.l)
	e.logVol = o.logVol
}

// dist2 returns |L^-1 (u - c)|^2 (1 on the surface) and leaves L^-1 (u - c)
// in y, by forward substitution.
func (e *ellipsoid) dist2(y, u []float64) float64 {
	d := len(e.c)
	var r2 float64
	for i := range d {
		s := u[i] - e.c[i]
		for j, v := range e.l[i*d : i*d+i] {
			s -= v * y[j]
		}
		s /= e.l[i*d+i]
		y[i] = s
		r2 += s * s
	}
	return r2
}

// point sets dst = c + L z.
func (e *ellipsoid) point(dst, z []float64) {
	e.apply(dst, z)
	for i, c := range e.c {
		dst[i] += c
	}
}

// apply sets dst = L z.
func (e *ellipsoid) apply(dst, z []float64) {
	d := len(e.c)
	for i := range d {
		var s float64
		for j, v := range e.l[i*d : i*d+i+1] {
			s += v * z[j]
		}
		dst[i] = s
	}
}

// grow multiplies the ellipsoid's linear size by f.
func (e *ellipsoid) grow(f float64) {
	for i := range e.l {
		e.l[i] *= f
	}
	e.logVol += float64(len(e.c)) * math.Log(f)
}

// setLogVol recomputes logVol from L.
func (e *ellipsoid) setLogVol() {
	d := len(e.c)
	v := logUnitBall(d)
	for i := range d {
		v += math.Log(e.l[i*d+i])
	}
	e.logVol = v
}

// logUnitBall is the log volume of the unit ball in d dimensions,
// pi^(d/2) / Gamma(d/2 + 1).
func logUnitBall(d int) float64 {
	lg, _ := math.Lgamma(float64(d)/2 + 1)
	return float64(d)/2*math.Log(math.Pi) - lg
}

// cholesky overwrites the lower triangle of the symmetric d x d matrix a
// (row-major; the upper triangle is not read) with its Cholesky factor and
// zeroes the upper triangle. It reports false if a is not numerically
// positive definite.
func cholesky(a []float64, d int) bool {
	for j := range d {
		s := a[j*d+j]
		for k := range j {
			s -= a[j*d+k] * a[j*d+k]
		}
		if !(s > 0) || math.IsInf(s, 0) {
			return false
		}
		ljj := math.Sqrt(s)
		a[j*d+j] = ljj
		for i := j + 1; i < d; i++ {
			s := a[i*d+j]
			for k := range j {
				s -= a[i*d+k] * a[j*d+k]
			}
			a[i*d+j] = s / ljj
		}
		for k := j + 1; k < d; k++ {
			a[j*d+k] = 0
		}
	}
	return true
}

// openUniform returns a uniform draw from the open interval (0, 1), the
// midpoint of one of 2^53 equal cells, so that quantile functions are never
// asked for 0 or 1.
func openUniform(rng *rand.Rand) float64 {
	return (float64(rng.Uint64()>>11) + 0.5) * 0x1p-53
}

// ballPoint fills z with a uniform draw from the unit ball: a normal vector
// scaled to radius U^(1/d).
func ballPoint(z []float64, rng *rand.Rand) {
	var r2 float64
	for i := range z {
		v := rng.NormFloat64()
		z[i] = v
		r2 += v * v
	}
	f := math.Pow(rng.Float64(), 1/float64(len(z))) / math.Sqrt(r2)
	for i := range z {
		z[i] *= f
	}
}

func inCube(u []float64) bool {
	for _, v := range u {
		if !(v > 0 && v < 1) {
			return false
		}
	}
	return true
}

// bound is a union of ellipsoids in the unit cube enclosing the live points,
// from which constrained prior draws are made. When the ellipsoids' total
// volume reaches the cube's, draws come from the whole cube instead.
type bound struct {
	ells   []ellipsoid // capacity; the first n are in use
	n      int
	cube   bool      // draw from the whole unit cube
	cum    []float64 // cumulative probabilities of choosing each ellipsoid
	logVol float64   // log of the ellipsoids' total volume
}

func newBound(d, capacity int) bound {
	b := bound{ells: make([]ellipsoid, capacity), cum: make([]float64, capacity)}
	for i := range b.ells {
		b.ells[i] = newEllipsoid(d)
	}
	return b
}

// update derives the cube flag and the selection probabilities from the
// ellipsoids' volumes.
func (b *bound) update() {
	lv := math.Inf(-1)
	for k := range b.n {
		lv = logAddExp(lv, b.ells[k].logVol)
	}
	b.logVol = lv
	b.cube = b.n == 0 || lv >= 0
	var c float64
	for k := range b.n {
		c += math.Exp(b.ells[k].logVol - lv)
		b.cum[k] = c
	}
}

// maxBoundTries is the number of draws from the ellipsoids that may land
// outside the unit cube (or be thinned by the overlap correction) before one
// draw is taken from the whole cube instead, which is always a valid (if
// inefficient) bound; it keeps a bound that lies almost entirely outside the
// cube from stalling the run.
const maxBoundTries = 100000

// draw fills dst with a uniform draw from the union of the ellipsoids within
// the unit cube (Feroz & Hobson 2008, MNRAS 384, 449, sect. 5.2: choose an
// ellipsoid with probability proportional to its volume, draw uniformly
// inside it, and accept with probability 1/q, q the number of ellipsoids
// containing the point). z and y are scratch of length Dim.
func (b *bound) draw(dst, z, y []float64, rng *rand.Rand) {
	if !b.cube {
		for range maxBoundTries {
			k := 0
			if b.n > 1 {
				v := rng.Float64()
				for k < b.n-1 && v >= b.cum[k] {
					k++
				}
			}
			ballPoint(z, rng)
			b.ells[k].point(dst, z)
			if !inCube(dst) {
				continue
			}
			if b.n > 1 {
				q := 1
				for j := range b.n {
					if j != k && b.ells[j].dist2(y, dst) <= 1 {
						q++
					}
				}
				if q > 1 && rng.Float64()*float64(q) >= 1 {
					continue
				}
			}
			return
		}
	}
	for i := range dst {
		dst[i] = openUniform(rng)
	}
}

// nearest returns the index of the ellipsoid in whose scaled metric u lies
// closest to the centre (the first containing it, in practice).
func (b *bound) nearest(u, y []float64) int {
	best, bd := 0, math.Inf(1)
	for k := range b.n {
		if r2 := b.ells[k].dist2(y, u); r2 < bd {
			best, bd = k, r2
		}
	}
	return best
}

func logAddExp(a, b float64) float64 {
	if a < b {
		a, b = b, a
	}
	if math.IsInf(b, -1) {
		return a
	}
	return a + math.Log1p(math.Exp(b-a))
}

// boundFitter fits a bound to the live points: one ellipsoid from their mean
// and covariance, scaled so that each point lies inside the ellipsoid
// fitted to the others (leave-one-out), then split recursively in two by
// 2-means clustering while splitting at least halves the volume (Mukherjee,
// Parkinson & Liddle 2006, ApJ 638, L51, for the single ellipsoid; Feroz &
// Hobson 2008, MNRAS 384, 449, for the recursive split). No ellipsoid is
// smaller than the prior volume its share of the live points is expected
// to occupy, exp(-i/N) n_k/N after i iterations (Feroz & Hobson 2008, from
// memory); the final ellipsoids are enlarged by a volume factor.
// Everything is allocated once.
type boundFitter struct {
	d, live, minCluster int
	enlarge             float64 // volume factor

	u       []float64 // the live points (Live*Dim), not owned
	idx     []int     // permutation of live indices; clusters are ranges
	y       []float64 // scratch for whitened coordinates, by live index
	lab     []bool    // 2-means labels, by position in idx
	cluster []int     // refit: ellipsoid of each live point
	start   []int     // refit: first position in idx of each ellipsoid's points
	mean    []float64
	cen     [2][]float64
	scratch []ellipsoid
	top     int
	lnX     float64
	out     *bound
}

func newBoundFitter(d, live, minCluster int, enlarge float64) *boundFitter {
	maxEll := maxEllipsoids(live, minCluster)
	f := &boundFitter{
		d: d, live: live, minCluster: minCluster, enlarge: enlarge,
		idx: make([]int, live), y: make([]float64, live*d), lab: make([]bool, live),
		cluster: make([]int, live), start: make([]int, maxEll+1),
		mean: make([]float64, d), cen: [2][]float64{make([]float64, d), make([]float64, d)},
		scratch: make([]ellipsoid, 2*maxEll+1),
	}
	for i := range f.scratch {
		f.scratch[i] = newEllipsoid(d)
	}
	return f
}

func maxEllipsoids(live, minCluster int) int { return live/minCluster + 1 }

// partition fits b to the live points u at log prior volume lnX, searching
// for the partition of the points into clusters anew.
func (f *boundFitter) partition(b *bound, u []float64, lnX float64) {
	f.u, f.lnX, f.out, f.top = u, lnX, b, 1
	for i := range f.idx {
		f.idx[i] = i
	}
	b.n = 0
	root := &f.scratch[0]
	f.fit(root, 0, f.live)
	f.split(root, 0, f.live)
	f.finish(b)
}

// refit fits b to the live points u at log prior volume lnX keeping its
// clusters: each point joins the ellipsoid in whose metric it lies
// nearest, and each ellipsoid is refitted to its points. This costs one
// fit per point instead of partition's search; it reports false, leaving
// b for partition, if an ellipsoid would get fewer than minCluster points
// (a mode has died out, or the clusters have drifted).
func (f *boundFitter) refit(b *bound, u []float64, lnX float64) bool {
	d := f.d
	if b.n == 0 {
		return false
	}
	f.u, f.lnX = u, lnX
	start := f.start[:b.n+1]
	clear(start)
	for k := range f.live {
		j := 0
		if b.n > 1 {
			j = b.nearest(u[k*d:(k+1)*d], f.y[k*d:(k+1)*d])
		}
		f.cluster[k] = j
		start[j+1]++
	}
	for j := range b.n {
		if start[j+1] < f.minCluster {
			return false
		}
		start[j+1] += start[j]
	}
	for k, j := range f.cluster {
		f.idx[start[j]] = k
		start[j]++
	}
	for j := b.n; j > 0; j-- {
		start[j] = start[j-1]
	}
	start[0] = 0
	for j := range b.n {
		f.fit(&b.ells[j], start[j], start[j+1])
	}
	f.finish(b)
	return true
}

// finish enlarges the fitted ellipsoids and updates b's draw tables.
func (f *boundFitter) finish(b *bound) {
	g := math.Pow(f.enlarge, 1/float64(f.d))
	for k := range b.n {
		b.ells[k].grow(g)
	}
	b.update()
}

// split emits e (fitted to idx[lo:hi]), or the ellipsoids chosen for the
// two halves of its 2-means split if their total volume is less than half
// of e's, and returns the log of the total volume emitted. The halves are
// split in turn before the comparison, so a clumpy set whose first split
// alone gains little (a grid of modes cut in two) still ends in one
// ellipsoid per clump. No split can gain unless e is more than twice its
// expected volume, since the halves' expected volumes add up to e's.
//
// A half with fewer than minCluster points (a mode holding only a few live
// points) cannot be fitted; it gets a copy of the nearest ellipsoid of the
// other half (see place) and is not split further.
func (f *boundFitter) split(e *ellipsoid, lo, hi int) float64 {
	n0 := f.out.n
	if hi-lo > f.minCluster && f.top+2 <= len(f.scratch) && e.logVol > f.expected(lo, hi)+math.Ln2 {
		mid := f.twoMeans(lo, hi, e.c)
		if mid > lo && mid < hi && (mid-lo >= f.minCluster || hi-mid >= f.minCluster) {
			e1, e2 := &f.scratch[f.top], &f.scratch[f.top+1]
			f.top += 2
			var v float64
			switch {
			case mid-lo < f.minCluster:
				f.fit(e2, mid, hi)
				v = f.split(e2, mid, hi)
				v = logAddExp(v, f.place(e1, lo, mid, n0))
			case hi-mid < f.minCluster:
				f.fit(e1, lo, mid)
				v = f.split(e1, lo, mid)
				v = logAddExp(v, f.place(e2, mid, hi, n0))
			default:
				f.fit(e1, lo, mid)
				f.fit(e2, mid, hi)
				v = logAddExp(f.split(e1, lo, mid), f.split(e2, mid, hi))
			}
			f.top -= 2
			if v < e.logVol-math.Ln2 {
				return v
			}
			f.out.n = n0
		}
	}
	return f.emit(e)
}

// emit appends e to the bound and returns its log volume.
func (f *boundFitter) emit(e *ellipsoid) float64 {
	f.out.ells[f.out.n].copyFrom(e)
	f.out.n++
	return e.logVol
}

// place emits, for the points idx[lo:hi] (too few to fit an ellipsoid of
// their own), the nearest of the ellipsoids emitted since position from,
// moved to the points' mean and doubled in size (and grown to their
// expected volume if smaller); it returns its log volume. A mode holding
// fewer live points than its neighbour occupies less prior volume, so the
// neighbour's ellipsoid E is a generous guess at its extent; if the mode
// lies within a copy of E, its centre lies within E's unit distance of
// the points' mean, and the doubled copy covers it.
func (f *boundFitter) place(e *ellipsoid, lo, hi, from int) float64 {
	d := f.d
	clear(e.c)
	for _, k := range f.idx[lo:hi] {
		for i, v := range f.u[k*d : (k+1)*d] {
			e.c[i] += v
		}
	}
	for i := range e.c {
		e.c[i] /= float64(hi - lo)
	}
	like, best := from, math.Inf(1)
	for j := from; j < f.out.n; j++ {
		if r2 := f.out.ells[j].dist2(f.mean, e.c); r2 < best {
			like, best = j, r2
		}
	}
	copy(e.l, f.out.ells[like].l)
	e.logVol = f.out.ells[like].logVol
	e.grow(2)
	if lv := f.expected(lo, hi); e.logVol < lv {
		e.grow(math.Exp((lv - e.logVol) / float64(d)))
	}
	return f.emit(e)
}

// expected returns the log of the prior volume that the points idx[lo:hi]
// are expected to occupy, exp(lnX) n/Live.
func (f *boundFitter) expected(lo, hi int) float64 {
	return f.lnX + math.Log(float64(hi-lo)/float64(f.live))
}

// fit sets e to the ellipsoid of the points idx[lo:hi]: centred on their
// mean, shaped by their covariance, scaled so that the farthest point lies
// on its surface, and no smaller than the expected volume exp(lnX) n/Live.
func (f *boundFitter) fit(e *ellipsoid, lo, hi int) {
	d := f.d
	n := float64(hi - lo)
	m := f.mean
	clear(m)
	for _, k := range f.idx[lo:hi] {
		for i, v := range f.u[k*d : (k+1)*d] {
			m[i] += v
		}
	}
	for i := range m {
		m[i] /= n
	}
	c := e.l
	clear(c)
	maxDiag := 0.0
	for _, k := range f.idx[lo:hi] {
		p := f.u[k*d : (k+1)*d]
		for i := range d {
			di := p[i] - m[i]
			row := c[i*d : i*d+i+1]
			for j := range row {
				row[j] += di * (p[j] - m[j])
			}
		}
	}
	for i := range d {
		for j := 0; j <= i; j++ {
			c[i*d+j] /= n
		}
		maxDiag = max(maxDiag, c[i*d+i])
	}
	copy(e.c, m)
	if !cholesky(c, d) {
		// Points in a lower-dimensional subspace (or rounding at extreme
		// compression): recompute the covariance with a growing ridge.
		f.ridge(e, lo, hi, maxDiag)
	}
	// Scale so that every point lies inside the ellipsoid fitted to the
	// others: the leave-one-out Mahalanobis distance of point i is
	// n delta_i / (n - 1 - delta_i), delta_i its distance under the fit to
	// all n (a Sherman-Morrison downdate of the covariance). The in-sample
	// maximum would be biased low, increasingly so in more dimensions.
	var s float64
	for _, k := range f.idx[lo:hi] {
		delta := e.dist2(f.y[k*d:(k+1)*d], f.u[k*d:(k+1)*d])
		s = max(s, n*delta/max(n-1-delta, (n-1)/looCap))
	}
	if !(s > 0) || math.IsInf(s, 0) {
		s = 1
	}
	e.setLogVol()
	e.grow(math.Sqrt(s))
	if lv := f.expected(lo, hi); e.logVol < lv {
		e.grow(math.Exp((lv - e.logVol) / float64(d)))
	}
}

// looCap bounds the leave-one-out inflation of a squared distance at about
// looCap: reached only by a point of (almost) full leverage, one that the
// other points' ellipsoid cannot locate at all.
const looCap = 100

// ridge refactorises the covariance of idx[lo:hi] plus eps*I, raising eps
// from 1e-12 of the largest variance by factors of 100 until it is positive
// definite; a set of identical points gets the identity.
func (f *boundFitter) ridge(e *ellipsoid, lo, hi int, maxDiag float64) {
	d := f.d
	n := float64(hi - lo)
	eps := 1e-12 * maxDiag
	for eps > 0 && !math.IsInf(eps, 0) {
		c := e.l
		clear(c)
		for _, k := range f.idx[lo:hi] {
			p := f.u[k*d : (k+1)*d]
			for i := range d {
				di := p[i] - e.c[i]
				for j := 0; j <= i; j++ {
					c[i*d+j] += di * (p[j] - e.c[j]) / n
				}
			}
		}
		for i := range d {
			c[i*d+i] += eps
		}
		if cholesky(c, d) {
			return
		}
		eps *= 100
	}
	clear(e.l)
	for i := range d {
		e.l[i*d+i] = 1
	}
}

// maxLloyd bounds the iterations of 2-means; a split that has not settled
// by then is used as it is (it is only a proposal, judged by its volume).
const maxLloyd = 20

// twoMeans splits idx[lo:hi] into two clusters by Lloyd's 2-means in the
// unit cube, started from the point farthest from the centre and the point
// farthest from that one. (In the coordinates whitened by the cluster's own
// covariance, the separation of two clumps is scaled down to the size of
// their width, and Lloyd's iteration often settles on a split across both.)
// It reorders idx[lo:hi] so that the first cluster comes first and returns
// where the second starts (lo or hi if a cluster came out empty).
func (f *boundFitter) twoMeans(lo, hi int, c []float64) int {
	d := f.d
	pt := func(pos int) []float64 { k := f.idx[pos]; return f.u[k*d : (k+1)*d] }
	dist := func(a, b []float64) float64 {
		var s float64
		for i := range a {
			t := a[i] - b[i]
			s += t * t
		}
		return s
	}
	a, da := lo, -1.0
	for p := lo; p < hi; p++ {
		if r2 := dist(pt(p), c); r2 > da {
			a, da = p, r2
		}
	}
	b, db := lo, -1.0
	for p := lo; p < hi; p++ {
		if r2 := dist(pt(p), pt(a)); r2 > db {
			b, db = p, r2
		}
	}
	copy(f.cen[0], pt(a))
	copy(f.cen[1], pt(b))
	lab := f.lab[lo:hi]
	for p := range lab {
		lab[p] = p+lo == b
	}
	for iter := 0; iter < maxLloyd; iter++ {
		changed := iter == 0
		for p := range lab {
			y := pt(p + lo)
			l := dist(y, f.cen[1]) < dist(y, f.cen[0])
			if l != lab[p] {
				lab[p] = l
				changed = true
			}
		}
		if !changed {
			break
		}
		var cnt [2]int
		clear(f.cen[0])
		clear(f.cen[1])
		for p, l := range lab {
			c := 0
			if l {
				c = 1
			}
			cnt[c]++
			for i, v := range pt(p + lo) {
				f.cen[c][i] += v
			}
		}
		if cnt[0] == 0 || cnt[1] == 0 {
			return lo
		}
		for c := range 2 {
			for i := range f.cen[c] {
				f.cen[c][i] /= float64(cnt[c])
			}
		}
	}
	// Partition: label false first.
	i, j := lo, hi-1
	for i <= j {
		if !f.lab[i] {
			i++
			continue
		}
		f.idx[i], f.idx[j] = f.idx[j], f.idx[i]
		f.lab[i], f.lab[j] = f.lab[j], f.lab[i]
		j--
	}
	return i
}
