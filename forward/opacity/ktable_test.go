package opacity

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

// TestGaussLegendre: an n-point Gauss-Legendre rule integrates polynomials
// of degree up to 2n-1 exactly (fact of the trade; Abramowitz & Stegun
// 1964, 25.4.29), also in parts; weights sum to 1 on [0, 1].
func TestGaussLegendre(t *testing.T) {
	for _, c := range []struct {
		n     []int
		split []float64
	}{{[]int{16}, nil}, {[]int{12, 4}, []float64{0.95}}, {[]int{6, 6, 4}, []float64{0.5, 0.9}}} {
		q, err := GaussLegendre(c.n, c.split...)
		if err != nil {
			t.Fatal(err)
		}
		deg := 2*min(c.n[0], c.n[len(c.n)-1]) - 1
		for p := 0; p <= deg; p++ {
			s := 0.0
			for i, g := range q.G {
				s += q.W[i] * math.Pow(g, float64(p))
			}
			if want := 1 / float64(p+1); !scalar.EqualWithinAbsOrRel(s, want, 1e-13, 1e-13) {
				t.Errorf("%v split %v: integral of g^%d = %.15g, want %.15g", c.n, c.split, p, s, want)
			}
		}
	}
	for _, bad := range []struct {
		n     []int
		split []float64
		msg   string
	}{{[]int{8, 8}, nil, "split points"}, {[]int{0}, nil, "at least 1 node"}, {[]int{8, 8}, []float64{1.2}, "ascending interval"}} {
		if _, err := GaussLegendre(bad.n, bad.split...); err == nil || !strings.Contains(err.Error(), bad.msg) {
			t.Errorf("GaussLegendre(%v, %v): error %v, want one saying %q", bad.n, bad.split, err, bad.msg)
		}
	}
}

// TestKDistributionUniform: samples of a uniform distribution of values on
// [0, 1] have k(g) = g (the quantile function; fact of probability).
func TestKDistributionUniform(t *testing.T) {
	q := DefaultQuadrature()
	n := 100000
	s := make([]Sample, n)
	for i := range s {
		s[i] = Sample{V: (float64((i*7919)%n) + 0.5) / float64(n), W: 1}
	}
	dst := make([]float64, len(q.G))
	KDistribution(dst, s, q)
	for i, g := range q.G {
		if math.Abs(dst[i]-g) > 1e-9 {
			t.Errorf("node %d (g = %g): k = %.12g, want g", i, g, dst[i])
		}
	}
}

// TestKTableValidate: malformed tables are errors that say what is wrong.
func TestKTableValidate(t *testing.T) {
	q := DefaultQuadrature()
	good := func() *KTable {
		t := &KTable{Gas: "CO", Log10P: []float64{0, 1}, T: []float64{300}, Lo: []float64{1e-6}, Hi: []float64{1.1e-6}, G: q.G, W: q.W}
		t.K = make([]float32, 2*len(q.G))
		for i := range t.K {
			t.K[i] = float32(i % len(q.G))
		}
		return t
	}
	if err := good().Validate(); err != nil {
		t.Fatalf("a good table: %v", err)
	}
	for _, c := range []struct {
		name   string
		break_ func(*KTable)
		msg    string
	}{
		{"no gas", func(k *KTable) { k.Gas = "" }, "no gas name"},
		{"descending g", func(k *KTable) { k.K[3], k.K[4] = 9, 1 }, "non-decreasing in g"},
		{"negative", func(k *KTable) { k.K[0] = -1 }, "non-negative"},
		{"short", func(k *KTable) { k.K = k.K[:5] }, "values, want"},
		{"bad bin", func(k *KTable) { k.Hi[0] = k.Lo[0] }, "bin 1"},
		{"weights", func(k *KTable) { k.W = append([]float64(nil), k.W...); k.W[0] *= 2 }, "sum to 1"},
	} {
		k := good()
		c.break_(k)
		if err := k.Validate(); err == nil || !strings.Contains(err.Error(), c.msg) {
			t.Errorf("%s: error %v, want one saying %q", c.name, err, c.msg)
		}
	}
}

// TestRebin: merging bins whose distributions are identical gives the same
// distribution back (the union of equal distributions is that
// distribution; fact of probability), bins equal to the table's return the
// table itself, and a bin that is not a union of table bins is refused with
// the size of the mismatch.
func TestRebin(t *testing.T) {
	q := DefaultQuadrature()
	lo := []float64{1e-6, 1.1e-6, 1.2e-6, 1.3e-6}
	hi := []float64{1.1e-6, 1.2e-6, 1.3e-6, 1.4e-6}
	k := &KTable{Gas: "CO", Log10P: []float64{0}, T: []float64{300}, Lo: lo, Hi: hi, G: q.G, W: q.W}
	for range lo {
		for _, g := range q.G {
			k.K = append(k.K, float32(1e-26*math.Exp(10*g)))
		}
	}
	if r, err := k.Rebin(lo, hi, 1e-6); err != nil || r != k {
		t.Errorf("Rebin onto the table's own bins: %v, %v; want the table itself", r == k, err)
	}
	r, err := k.Rebin([]float64{1e-6, 1.2e-6}, []float64{1.2e-6, 1.4e-6}, 1e-6)
	if err != nil {
		t.Fatal(err)
	}
	for b := range 2 {
		for i := range q.G {
			got, want := float64(r.K[b*len(q.G)+i]), float64(k.K[i])
			if !scalar.EqualWithinRel(got, want, 1e-5) {
				t.Errorf("merged bin %d node %d: %g, want %g", b, i, got, want)
			}
		}
	}
	if _, err := k.Rebin([]float64{1.05e-6}, []float64{1.3e-6}, 1e-6); err == nil || !strings.Contains(err.Error(), "not a union of the table's bins") {
		t.Errorf("misaligned bin: error %v", err)
	}
}
