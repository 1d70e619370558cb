package opacity

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"sort"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/integrate/quad"
)

// KTable is the k-distribution of one gas (correlated-k; Goody et al. 1989,
// JQSRT 42, 539; Lacis & Oinas 1991, J. Geophys. Res. 96, 9027): within each
// spectral bin, the cross-sections of the fine spectrum sorted into a
// non-decreasing function k(g) of the cumulative fraction g of the bin, and
// sampled at the nodes of a quadrature in g. The transmission of a
// homogeneous path of column u through the bin is then
//
//	T(u) = int_0^1 exp(-u k(g)) dg ~ sum_i W[i] exp(-u k(G[i])),
//
// and along an inhomogeneous path the same g is taken in every layer (the
// correlated-k assumption).
//
// A bin's fraction g is measured in wavelength (a box-car of the bin in
// wavelength, the instrument profile the forward model's binning uses).
// K is laid out with g fastest, then bin, then temperature, then pressure:
//
//	K[((iP*len(T)+iT)*Bins()+b)*len(G)+i]
//
// and is interpolated bilinearly in (log10 P, T) at fixed g.
type KTable struct {
	Gas    string    // gas name as used in configurations, e.g. "H2O"
	Log10P []float64 // log10 of pressure in Pa, strictly ascending
	T      []float64 // temperature in K, strictly ascending
	// Lo and Hi are the bins' edges as wavelengths in m: bin b is
	// [Lo[b], Hi[b]]. Tables built from line lists have adjacent or
	// separate bins in ascending order; tables made for a model by Rebin
	// follow the model's bins, which may overlap.
	Lo, Hi []float64
	// G and W are the quadrature nodes (strictly ascending in (0, 1)) and
	// weights (positive, summing to 1).
	G, W []float64
	K    []float32 // m^2 per molecule
	Meta map[string]string
}

// Bins returns the number of spectral bins.
func (t *KTable) Bins() int { return len(t.Lo) }

// Row returns k of every bin and node at grid point (iP, iT), aliasing K.
func (t *KTable) Row(iP, iT int) []float32 {
	n := t.Bins() * len(t.G)
	o := (iP*len(t.T) + iT) * n
	return t.K[o : o+n : o+n]
}

// Validate reports whether the table's axes are sorted and finite, its
// quadrature is proper, its data has the right length, and every bin's
// k(g) is finite, non-negative and non-decreasing.
func (t *KTable) Validate() error {
	if t.Gas == "" {
		return fmt.Errorf("opacity: k-table has no gas name")
	}
	fail := func(format string, a ...any) error {
		return fmt.Errorf("opacity: k-table %s: %s", t.Gas, fmt.Sprintf(format, a...))
	}
	for _, ax := range []struct {
		x    []float64
		name string
	}{{t.Log10P, "log10 pressure"}, {t.T, "temperature"}, {t.G, "quadrature node"}} {
		if err := CheckAxis(ax.x, ax.name); err != nil {
			return fail("%v", err)
		}
	}
	if t.T[0] <= 0 {
		return fail("temperature axis starts at %g K, must be positive", t.T[0])
	}
	if len(t.Lo) == 0 || len(t.Lo) != len(t.Hi) {
		return fail("%d bin lower edges and %d upper edges; need the same number, at least one", len(t.Lo), len(t.Hi))
	}
	for b := range t.Lo {
		if !(t.Lo[b] > 0) || !(t.Hi[b] > t.Lo[b]) || math.IsInf(t.Hi[b], 0) {
			return fail("bin %d is %g-%g m: need 0 < low < high, finite", b+1, t.Lo[b], t.Hi[b])
		}
	}
	if err := (Quadrature{G: t.G, W: t.W}).Validate(); err != nil {
		return fail("%v", err)
	}
	ng := len(t.G)
	if want := len(t.Log10P) * len(t.T) * t.Bins() * ng; len(t.K) != want {
		return fail("%d values, want %d (P x T x bins x g = %d x %d x %d x %d)",
			len(t.K), want, len(t.Log10P), len(t.T), t.Bins(), ng)
	}
	for o := 0; o < len(t.K); o += ng {
		prev := float32(0)
		for i, v := range t.K[o : o+ng] {
			if !(v >= prev) || math.IsInf(float64(v), 0) {
				row := o / ng
				return fail("k at log10 P %g, T %g K, bin %d, node %d is %g: values must be finite, non-negative and non-decreasing in g",
					t.Log10P[row/t.Bins()/len(t.T)], t.T[row/t.Bins()%len(t.T)], row%t.Bins()+1, i+1, v)
			}
			prev = v
		}
	}
	return nil
}

// Quadrature is a rule for integrals over g in [0, 1]: nodes G (strictly
// ascending in (0, 1)) and weights W (positive, summing to 1).
type Quadrature struct {
	G, W []float64
}

// Validate reports whether q is a proper quadrature on [0, 1].
func (q Quadrature) Validate() error {
	if len(q.G) == 0 || len(q.G) != len(q.W) {
		return fmt.Errorf("quadrature has %d nodes and %d weights; need the same number, at least one", len(q.G), len(q.W))
	}
	sum := 0.0
	for i, g := range q.G {
		if !(g > 0 && g < 1) || (i > 0 && !(g > q.G[i-1])) {
			return fmt.Errorf("quadrature node %d is %g: nodes must be strictly ascending inside (0, 1)", i+1, g)
		}
		if !(q.W[i] > 0) || math.IsInf(q.W[i], 0) {
			return fmt.Errorf("quadrature weight %d is %g, must be positive", i+1, q.W[i])
		}
		sum += q.W[i]
	}
	if math.Abs(sum-1) > 1e-9 {
		return fmt.Errorf("quadrature weights sum to %.12g, must sum to 1", sum)
	}
	return nil
}

// GaussLegendre returns the composite Gauss-Legendre rule with n[i] nodes on
// the interval [split[i-1], split[i]] of g (split[-1] = 0, split[len] = 1);
// len(n) must be len(split)+1. GaussLegendre([]int{16}) is the plain
// 16-point rule.
func GaussLegendre(n []int, split ...float64) (Quadrature, error) {
	if len(n) != len(split)+1 {
		return Quadrature{}, fmt.Errorf("opacity: Gauss-Legendre rule with %d parts needs %d split points, got %d", len(n), len(n)-1, len(split))
	}
	edges := append(append([]float64{0}, split...), 1)
	var q Quadrature
	for i, k := range n {
		a, b := edges[i], edges[i+1]
		if k < 1 || !(b > a) {
			return Quadrature{}, fmt.Errorf("opacity: Gauss-Legendre part %d: %d nodes on [%g, %g]; need at least 1 node on an ascending interval in [0, 1]", i+1, k, a, b)
		}
		x, w := make([]float64, k), make([]float64, k)
		quad.Legendre{}.FixedLocations(x, w, a, b)
		ord := make([]int, k)
		for j := range ord {
			ord[j] = j
		}
		slices.SortFunc(ord, func(p, r int) int { return cmp.Compare(x[p], x[r]) })
		for _, j := range ord {
			q.G = append(q.G, x[j])
			q.W = append(q.W, w[j])
		}
	}
	sum := 0.0
	for _, w := range q.W {
		sum += w
	}
	for i := range q.W {
		q.W[i] /= sum // exact to rounding; makes the sum 1 to the last bit
	}
	return q, q.Validate()
}

// DefaultQuadrature is chord's default g rule: 16 Gauss-Legendre nodes,
// 12 on [0, 0.95] and 4 on [0.95, 1], so that the steep top of k(g) (the
// cores of the strongest lines) gets nodes of its own. Measured against
// line-by-line transmission spectra of CO, CH4 and CO2 bands (README,
// "Accuracy of the k-distribution"), it was at or below 4 ppm at R = 100
// and 13 ppm at R = 1000, against 6 and 17 ppm for the plain 16-point rule.
func DefaultQuadrature() Quadrature {
	q, err := GaussLegendre([]int{12, 4}, 0.95)
	if err != nil {
		panic(err) // constant arguments
	}
	return q
}

// String describes q for table metadata, e.g. "Gauss-Legendre 16 nodes".
func (q Quadrature) String() string {
	var b strings.Builder
	fmt.Fprintf(&b, "%d nodes g:", len(q.G))
	for _, g := range q.G {
		b.WriteString(" " + strconv.FormatFloat(g, 'g', 8, 64))
	}
	return b.String()
}

// Sample is one value of a weighted sample, for KDistribution.
type Sample struct{ V, W float64 }

// KDistribution sorts the weighted samples s (values V >= 0, weights W > 0)
// and fills dst (length len(q.G)) with the values of their distribution at
// the nodes of q: the sorted samples are taken as a step function of g, each
// sample filling a width of g equal to its share of the total weight, and
// dst[i] is that function at g = q.G[i], interpolated linearly between the
// centres of neighbouring steps (so that a few coarse samples, as when bins
// are merged, still give a continuous k(g)). s is reordered.
func KDistribution(dst []float64, s []Sample, q Quadrature) {
	if len(dst) != len(q.G) || len(s) == 0 {
		panic("opacity: KDistribution: dst length differs from the quadrature, or no samples")
	}
	slices.SortFunc(s, func(a, b Sample) int { return cmp.Compare(a.V, b.V) })
	tot := 0.0
	for _, p := range s {
		tot += p.W
	}
	// mid is the g at the centre of step j; c the g where step j begins.
	j, c := 0, 0.0
	mid := c + s[0].W/tot/2
	for i, g := range q.G {
		for j < len(s)-1 {
			next := c + s[j].W/tot + s[j+1].W/tot/2
			if next > g {
				break
			}
			c += s[j].W / tot
			j++
			mid = next
		}
		switch {
		case g <= mid || j == len(s)-1:
			dst[i] = s[j].V
		default:
			next := c + s[j].W/tot + s[j+1].W/tot/2
			t := (g - mid) / (next - mid)
			dst[i] = s[j].V + t*(s[j+1].V-s[j].V)
		}
	}
}

// Rebin returns the table on the bins [lo[b], hi[b]] (m), each the union of
// consecutive bins of t: the k-distributions of the member bins are merged,
// each weighted by its width in wavelength, without going back to the lines
// (Leconte 2021, A&A 645, A20). t's bins must be ascending and must not
// overlap. A requested bin whose edges lie more than tol times its width
// from the edges of t's bins, or that would take in a gap between t's bins,
// is an error that states the mismatch. Bins equal to those of t return t.
func (t *KTable) Rebin(lo, hi []float64, tol float64) (*KTable, error) {
	if len(lo) != len(hi) || len(lo) == 0 {
		return nil, fmt.Errorf("opacity: k-table %s: %d bin lower edges and %d upper edges", t.Gas, len(lo), len(hi))
	}
	for b := 1; b < t.Bins(); b++ {
		if t.Lo[b] < t.Hi[b-1] {
			return nil, fmt.Errorf("opacity: k-table %s: bins %d and %d overlap or are not ascending; cannot merge them", t.Gas, b, b+1)
		}
	}
	first := make([]int, len(lo))
	last := make([]int, len(lo))
	same := len(lo) == t.Bins()
	for b := range lo {
		w := hi[b] - lo[b]
		if !(w > 0) {
			return nil, fmt.Errorf("opacity: k-table %s: requested bin %d (%g-%g um) is empty", t.Gas, b+1, lo[b]*1e6, hi[b]*1e6)
		}
		i0, d0 := nearestEdge(t.Lo, lo[b])
		i1, d1 := nearestEdge(t.Hi, hi[b])
		gap := false
		for m := i0 + 1; m <= i1 && m < t.Bins(); m++ {
			gap = gap || t.Lo[m] > t.Hi[m-1]*(1+1e-12)
		}
		if d0 > tol*w || d1 > tol*w || i1 < i0 || gap {
			return nil, fmt.Errorf("opacity: k-table %s: bin %d (%.7g-%.7g um) is not a union of the table's bins (%d bins, %.7g-%.7g um): "+
				"its edges lie %.3g and %.3g of its width from the nearest table edges (tolerance %g)%s",
				t.Gas, b+1, lo[b]*1e6, hi[b]*1e6, t.Bins(), t.Lo[0]*1e6, t.Hi[t.Bins()-1]*1e6, d0/w, d1/w, tol,
				map[bool]string{true: ", and it spans a gap between table bins", false: ""}[gap])
		}
		first[b], last[b] = i0, i1
		same = same && i0 == b && i1 == b
	}
	if same {
		return t, nil
	}
	ng := len(t.G)
	out := &KTable{
		Gas: t.Gas, Log10P: slices.Clone(t.Log10P), T: slices.Clone(t.T),
		Lo: slices.Clone(lo), Hi: slices.Clone(hi),
		G: slices.Clone(t.G), W: slices.Clone(t.W), Meta: copyMeta(t.Meta),
	}
	nb := len(lo)
	out.K = make([]float32, len(t.Log10P)*len(t.T)*nb*ng)
	var mg merger
	for ip := range t.Log10P {
		for it := range t.T {
			src, row := t.Row(ip, it), out.Row(ip, it)
			for b := range nb {
				if first[b] == last[b] {
					copy(row[b*ng:(b+1)*ng], src[first[b]*ng:(first[b]+1)*ng])
					continue
				}
				mg.reset(t.G)
				for m := first[b]; m <= last[b]; m++ {
					mg.add(src[m*ng:(m+1)*ng], t.Hi[m]-t.Lo[m])
				}
				mg.merge(row[b*ng : (b+1)*ng])
			}
		}
	}
	merged := 0
	for b := range nb {
		if last[b] > first[b] {
			merged++
		}
	}
	if merged > 0 {
		if out.Meta == nil {
			out.Meta = map[string]string{}
		}
		out.Meta[MetaRebinned] = fmt.Sprintf("%d of %d bins merged from finer table bins (Leconte 2021, A&A 645, A20)", merged, nb)
	}
	return out, nil
}

// MetaRebinned is the Meta key Rebin sets when it merged table bins.
const MetaRebinned = "rebinned"

// nearestEdge returns the index of the value of the ascending edges nearest
// x, and its distance from x.
func nearestEdge(edges []float64, x float64) (int, float64) {
	i, _ := slices.BinarySearch(edges, x)
	best, d := -1, math.Inf(1)
	for _, k := range []int{i - 1, i} {
		if k >= 0 && k < len(edges) && math.Abs(edges[k]-x) < d {
			best, d = k, math.Abs(edges[k]-x)
		}
	}
	return best, d
}

// DefaultKLog10P returns the default pressure axis of k-tables: log10(P/Pa)
// from -2 to 7 (1e-7 to 100 bar, the default atmosphere) at 6 points per
// decade, 55 points. k(g) is interpolated linearly in log10 P; measured on
// the CO band in the hot hydrogen atmosphere of the README's accuracy
// table, 6 points per decade add about 2 ppm at R = 100 (4 per decade add
// 5 to 9 ppm, 2 per decade 20 to 25 ppm).
func DefaultKLog10P() []float64 {
	const perDecade, lo, hi = 6, -2.0, 7.0
	n := int((hi-lo)*perDecade) + 1
	out := make([]float64, n)
	for i := range out {
		out[i] = lo + float64(i)/perDecade
	}
	out[n-1] = hi
	return out
}

// DefaultKT returns the default temperature axis of k-tables (K): 100 to
// 3000 K, 19 points, spaced about 20 % apart below 1000 K and 200-400 K
// above. Builders clip it to the temperatures every isotopologue's
// partition function covers.
func DefaultKT() []float64 {
	return []float64{100, 150, 200, 250, 300, 400, 500, 600, 700, 800, 1000, 1200, 1400, 1600, 1800, 2000, 2300, 2600, 3000}
}

// merger merges the k-distributions of several bins into the distribution
// of their union. Each member's k(g) is taken as piecewise linear in ln k
// between its nodes (k(g) of a bin of lines rises roughly exponentially)
// and constant beyond the first and last node, so its fraction g_m(k) of
// values at or below k is known for every k; the union's fraction is
// F(k) = sum_m W_m g_m(k) / sum_m W_m (W_m the members' widths), and the
// merged k at node g solves F(k) = g, found by sweeping the members' node
// values in ascending order.
type merger struct {
	g   []float64   // nodes
	k   [][]float64 // per member: k at the nodes
	wt  []float64   // per member: width
	pts []float64   // all members' node values, ascending
	f   []float64   // F at each of pts
}

func (mg *merger) reset(g []float64) {
	mg.g = g
	mg.k = mg.k[:0]
	mg.wt = mg.wt[:0]
}

func (mg *merger) add(k []float32, width float64) {
	i := len(mg.k)
	if i < cap(mg.k) {
		mg.k = mg.k[:i+1]
	} else {
		mg.k = append(mg.k, nil)
	}
	mg.k[i] = mg.k[i][:0]
	for _, v := range k {
		mg.k[i] = append(mg.k[i], float64(v))
	}
	mg.wt = append(mg.wt, width)
}

// frac returns member m's fraction of values at or below k.
func (mg *merger) frac(m int, k float64) float64 {
	km, g := mg.k[m], mg.g
	n := len(km)
	if k < km[0] {
		return 0
	}
	if k >= km[n-1] {
		return 1
	}
	j := sort.Search(n, func(i int) bool { return km[i] > k }) - 1 // km[j] <= k < km[j+1]
	if km[j] > 0 {
		return g[j] + (g[j+1]-g[j])*math.Log(k/km[j])/math.Log(km[j+1]/km[j])
	}
	return g[j] + (g[j+1]-g[j])*(k-km[j])/(km[j+1]-km[j])
}

func (mg *merger) cdf(k float64) float64 {
	s, tot := 0.0, 0.0
	for m, w := range mg.wt {
		s += w * mg.frac(m, k)
		tot += w
	}
	return s / tot
}

// merge fills dst with the merged distribution at the nodes.
func (mg *merger) merge(dst []float32) {
	mg.pts = mg.pts[:0]
	for _, km := range mg.k {
		mg.pts = append(mg.pts, km...)
	}
	slices.Sort(mg.pts)
	mg.f = mg.f[:0]
	for _, k := range mg.pts {
		mg.f = append(mg.f, mg.cdf(k))
	}
	j := 0
	for i, g := range mg.g {
		for j < len(mg.pts)-1 && mg.f[j] < g {
			j++
		}
		// F(pts[j]) >= g: the answer lies in (pts[j-1], pts[j]], where F
		// rises from F(pts[j-1]) to its value just below pts[j], then
		// jumps (a member's constant end) or not.
		if j == 0 || mg.f[j] < g {
			dst[i] = float32(mg.pts[j])
			continue
		}
		a, b := mg.pts[j-1], mg.pts[j]
		fa, fb := mg.f[j-1], mg.cdf(b-(b-a)*1e-12)
		switch {
		case b == a || fb <= fa || g >= fb:
			dst[i] = float32(b)
		case a > 0:
			dst[i] = float32(a * math.Pow(b/a, (g-fa)/(fb-fa)))
		default:
			dst[i] = float32(a + (b-a)*(g-fa)/(fb-fa))
		}
	}
}

// AnchoredBins returns the bins of resolving power r on the anchored grid
// lambda_k = exp(k/r) um whose edges lie within [loUm, hiUm] um, as
// wavelengths in m, ascending. On this grid the bins of r are unions of
// the bins of any multiple of r (R = 100 bins of ten R = 1000 bins), so
// one table set serves every instrument (Rebin).
func AnchoredBins(loUm, hiUm, r float64) (lo, hi []float64) {
	k0, k1 := int(math.Ceil(r*math.Log(loUm)-1e-9)), int(math.Floor(r*math.Log(hiUm)+1e-9))
	for k := k0; k < k1; k++ {
		lo = append(lo, math.Exp(float64(k)/r)*1e-6)
		hi = append(hi, math.Exp(float64(k+1)/r)*1e-6)
	}
	return lo, hi
}
