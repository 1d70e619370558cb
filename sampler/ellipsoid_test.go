package sampler

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// TestCholesky compares the factor with gonum v0.17.0 mat.Cholesky on a
// random 7 x 7 covariance (rounding-level agreement, 1e-12 relative).
func TestCholesky(t *testing.T) {
	const d = 7
	rng := rand.New(rand.NewPCG(1, 1))
	a := mat.NewDense(d, d, nil)
	for i := range d {
		for j := range d {
			a.Set(i, j, rng.NormFloat64())
		}
	}
	var c mat.SymDense
	c.SymOuterK(1, a)
	raw := make([]float64, d*d)
	for i := range d {
		for j := range d {
			raw[i*d+j] = c.At(i, j)
		}
	}
	if !cholesky(raw, d) {
		t.Fatal("not positive definite")
	}
	var ch mat.Cholesky
	ch.Factorize(&c)
	var l mat.TriDense
	ch.LTo(&l)
	for i := range d {
		for j := range d {
			if got, want := raw[i*d+j], l.At(i, j); math.Abs(got-want) > 1e-12*math.Abs(want)+1e-14 {
				t.Errorf("L[%d][%d] = %v, gonum %v", i, j, got, want)
			}
		}
	}
	if cholesky([]float64{1, 2, 2, 1}, 2) {
		t.Error("indefinite matrix factorised")
	}
}

// inBall fills u (n points in d dimensions) uniformly in the ball of
// radius r about c, cut to the unit cube by choice of c and r.
func inBall(u []float64, d int, c, r float64, rng *rand.Rand) {
	z := make([]float64, d)
	for k := 0; k < len(u)/d; k++ {
		ballPoint(z, rng)
		for i := range d {
			u[k*d+i] = c + r*z[i]
		}
	}
}

// TestLeaveOneOutCoverage: the reason for the leave-one-out scaling. For
// n points uniform in a convex region, a new point from the region falls
// outside the ellipsoid of the n points with probability about 1/(n+1) if
// the scale is exchangeable between the new point and the old ones (the
// new point is the one the others' ellipsoid fits worst no more often
// than any other). In 10 dimensions with 60 points: over 3000 trials the
// miss rate must be below 3/(n+1) (the in-sample maximum misses far more
// often: 16 % in the same trials).
func TestLeaveOneOutCoverage(t *testing.T) {
	const d, n, trials = 10, 60, 3000
	rng := rand.New(rand.NewPCG(2, 2))
	f := newBoundFitter(d, n, minCluster(d), 1)
	e := newEllipsoid(d)
	u := make([]float64, n*d)
	x := make([]float64, d)
	y := make([]float64, d)
	misses := 0
	for range trials {
		inBall(u, d, 0.5, 0.4, rng)
		inBall(x, d, 0.5, 0.4, rng)
		f.u, f.lnX = u, math.Inf(-1)
		for i := range f.idx {
			f.idx[i] = i
		}
		f.fit(&e, 0, n)
		if e.dist2(y, x) > 1 {
			misses++
		}
	}
	rate := float64(misses) / trials
	t.Logf("miss rate %.4f, 1/(n+1) = %.4f", rate, 1.0/(n+1))
	if rate > 3.0/(n+1) {
		t.Errorf("a new point falls outside the fitted ellipsoid in %.1f %% of trials, want about %.1f %%", 100*rate, 100.0/(n+1))
	}
}

// TestRidge: points on a line (a rank-deficient covariance) and identical
// points still get an ellipsoid that holds them, of finite volume.
func TestRidge(t *testing.T) {
	const d, n = 3, 10
	u := make([]float64, n*d)
	for k := range n {
		s := 0.1 + 0.08*float64(k)
		u[k*d], u[k*d+1], u[k*d+2] = s, 0.5, 1-s
	}
	same := make([]float64, n*d)
	for i := range same {
		same[i] = 0.3
	}
	for name, pts := range map[string][]float64{"line": u, "identical": same} {
		f := newBoundFitter(d, n, minCluster(d), 1)
		b := newBound(d, maxEllipsoids(n, minCluster(d)))
		f.partition(&b, pts, -5)
		y := make([]float64, d)
		for k := range n {
			inside := false
			for j := range b.n {
				inside = inside || b.ells[j].dist2(y, pts[k*d:(k+1)*d]) <= 1+1e-9
			}
			if !inside {
				t.Errorf("%s: point %d outside the bound", name, k)
			}
		}
		if v := b.logVol; math.IsNaN(v) || math.IsInf(v, 0) {
			t.Errorf("%s: log volume %v", name, v)
		}
	}
}

// TestBoundDrawUnion: draws from two overlapping discs are uniform on
// their union: the fraction landing in the lens where they overlap is the
// lens area over the union area, lens = 2 r^2 acos(c/2r) - (c/2)
// sqrt(4r^2 - c^2) for discs of radius r whose centres are c apart
// (circle-circle intersection, fact of the trade). 1e5 draws give a
// binomial standard error of 0.0015 on a fraction of about 0.3; the
// tolerance is 4 of them.
func TestBoundDrawUnion(t *testing.T) {
	const r, c, draws = 0.2, 0.15, 100000
	b := newBound(2, 2)
	b.n = 2
	for k, cx := range []float64{0.5 - c/2, 0.5 + c/2} {
		e := &b.ells[k]
		e.c[0], e.c[1] = cx, 0.5
		e.l[0], e.l[3] = r, r
		e.setLogVol()
	}
	b.update()
	rng := rand.New(rand.NewPCG(3, 3))
	u, z, y := make([]float64, 2), make([]float64, 2), make([]float64, 2)
	both := 0
	for range draws {
		b.draw(u, z, y, rng)
		if b.ells[0].dist2(y, u) <= 1 && b.ells[1].dist2(y, u) <= 1 {
			both++
		}
	}
	lens := 2*r*r*math.Acos(c/(2*r)) - c/2*math.Sqrt(4*r*r-c*c)
	want := lens / (2*math.Pi*r*r - lens)
	got := float64(both) / draws
	se := math.Sqrt(want * (1 - want) / draws)
	if math.Abs(got-want) > 4*se {
		t.Errorf("fraction of draws in the overlap %.4f, want %.4f +- %.4f", got, want, se)
	}
}

// TestPartition: the cluster search separates the clumps (no ellipsoid
// holds the centres of two, and every centre is in one), for two clumps,
// for a 3 x 3 grid of clumps (whose first split in two gains little), and
// for a grid where one clump holds only 2 points (placed, not fitted); a
// single Gaussian blob stays one ellipsoid. Every point lies in the bound.
func TestPartition(t *testing.T) {
	const d = 2
	rng := rand.New(rand.NewPCG(4, 4))
	clumps := func(centres [][2]float64, sizes []int, w float64) []float64 {
		var u []float64
		for k, c := range centres {
			for range sizes[k] {
				u = append(u, c[0]+w*rng.NormFloat64(), c[1]+w*rng.NormFloat64())
			}
		}
		return u
	}
	var grid [][2]float64
	for i := range 3 {
		for j := range 3 {
			grid = append(grid, [2]float64{0.2 + 0.3*float64(i), 0.2 + 0.3*float64(j)})
		}
	}
	sizes := func(n, k int) []int {
		s := make([]int, k)
		for i := range s {
			s[i] = n
		}
		return s
	}
	uneven := sizes(30, 9)
	uneven[4] = 2
	two := [][2]float64{{0.25, 0.5}, {0.75, 0.5}}
	blob := [][2]float64{{0.5, 0.5}}
	cases := []struct {
		name    string
		centres [][2]float64
		u       []float64
	}{
		{"two clumps", two, clumps(two, []int{100, 60}, 0.02)},
		{"grid", grid, clumps(grid, sizes(30, 9), 0.02)},
		{"grid with a 2-point clump", grid, clumps(grid, uneven, 0.02)},
		{"one blob", blob, clumps(blob, []int{200}, 0.1)},
	}
	for _, c := range cases {
		n := len(c.u) / d
		f := newBoundFitter(d, n, minCluster(d), 1)
		b := newBound(d, maxEllipsoids(n, minCluster(d)))
		f.partition(&b, c.u, math.Log(0.01))
		y := make([]float64, d)
		if len(c.centres) == 1 && b.n != 1 {
			t.Errorf("%s: %d ellipsoids, want 1", c.name, b.n)
		}
		for k, ck := range c.centres {
			in := false
			for j := range b.n {
				if b.ells[j].dist2(y, ck[:]) > 1 {
					continue
				}
				in = true
				for l, cl := range c.centres {
					if l != k && b.ells[j].dist2(y, cl[:]) <= 1 {
						t.Errorf("%s: ellipsoid %d holds the centres of clumps %d and %d", c.name, j, k, l)
					}
				}
			}
			if !in {
				t.Errorf("%s: centre of clump %d outside the bound", c.name, k)
			}
		}
		for k := range n {
			inside := false
			for j := range b.n {
				inside = inside || b.ells[j].dist2(y, c.u[k*d:(k+1)*d]) <= 1+1e-9
			}
			if !inside {
				t.Errorf("%s: point %d outside the bound", c.name, k)
			}
		}
	}
}
