package priors

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
)

// maxRejections bounds the rejection loops of the composition priors'
// draws; constructors make sure the acceptance probability is far above
// 1/maxRejections for any sensible definition.
const maxRejections = 1 << 20

// ErrRejection is returned by a composition prior's Rand when no valid
// composition was drawn in maxRejections tries.
var ErrRejection = errors.New("priors: no valid composition drawn in 2^20 tries; the prior bounds leave almost no room")

// FillGas is the composition prior of an atmosphere with a known dominant
// gas (the fill gas, e.g. H2+He for a giant planet): each trace gas has its
// own prior on its log10 volume mixing ratio (usually Uniform, that is
// log-uniform in the mixing ratio), the priors are independent, and the fill
// gas takes what is left, 1 - sum_i 10^x_i. A composition whose trace gases
// sum above 1 is invalid (LogProb -Inf), never clamped.
//
// LogProb is the sum of the gases' log priors on the valid region. It is
// not renormalised by the probability of that region (a constant, near 1
// for the usual bounds), so it is a density up to a constant factor.
type FillGas struct {
	Gases []string // trace gases, in parameter order
	Fill  string   // name of the fill gas, for messages and reports
	Log10 []Prior  // prior of each trace gas's log10 volume mixing ratio
}

// NewFillGas returns the fill-gas composition prior. Every gas needs a
// prior, names must be distinct, and the priors must allow a valid
// composition: the lower ends of the supports must sum below 1.
func NewFillGas(fill string, gases []string, log10 []Prior) (*FillGas, error) {
	if len(gases) != len(log10) {
		return nil, fmt.Errorf("priors: fill-gas composition: %d gases but %d priors", len(gases), len(log10))
	}
	seen := map[string]bool{fill: true}
	sumLow := 0.0
	for i, g := range gases {
		if seen[g] {
			return nil, fmt.Errorf("priors: fill-gas composition: gas %q is listed twice or is the fill gas", g)
		}
		seen[g] = true
		if log10[i] == nil {
			return nil, fmt.Errorf("priors: fill-gas composition: gas %q has no prior", g)
		}
		if lo := log10[i].Quantile(0); lo > 0 {
			return nil, paramError(g, "log10 mixing ratio prior starts at %g > 0: a mixing ratio above 1", lo)
		}
		sumLow += math.Pow(10, log10[i].Quantile(0))
	}
	if !(sumLow < 1) {
		return nil, fmt.Errorf("priors: fill-gas composition: the lowest mixing ratios the priors allow already sum to %g >= 1", sumLow)
	}
	return &FillGas{Gases: gases, Fill: fill, Log10: log10}, nil
}

// Dim is the number of parameters, one per trace gas.
func (c *FillGas) Dim() int { return len(c.Gases) }

// LogProb returns the log prior of the log10 mixing ratios x (len Dim).
func (c *FillGas) LogProb(x []float64) float64 {
	if len(x) != len(c.Gases) {
		panic("priors: FillGas.LogProb: wrong length")
	}
	lp := 0.0
	for i, p := range c.Log10 {
		lp += p.LogProb(x[i])
	}
	if math.IsInf(lp, -1) || math.IsNaN(lp) {
		return math.Inf(-1)
	}
	if !(c.FillFraction(x) >= 0) {
		return math.Inf(-1)
	}
	return lp
}

// FillFraction returns 1 - sum_i 10^x_i, the fill gas's mixing ratio
// (negative for an invalid composition).
func (c *FillGas) FillFraction(x []float64) float64 {
	s := 0.0
	for _, v := range x {
		s += math.Pow(10, v)
	}
	return 1 - s
}

// Rand fills dst (len Dim) with a draw from the prior: the gases are drawn
// independently and the draw is rejected and repeated while the trace gases
// sum above 1.
func (c *FillGas) Rand(dst []float64, rng *rand.Rand) error {
	if len(dst) != len(c.Gases) {
		panic("priors: FillGas.Rand: wrong length")
	}
	for range maxRejections {
		for i, p := range c.Log10 {
			dst[i] = p.Rand(rng)
		}
		if c.FillFraction(dst) >= 0 {
			return nil
		}
	}
	return ErrRejection
}

// CLR is the centred-log-ratio composition prior of Benneke & Seager (2012,
// ApJ 753, 100, sect. 3.2) for an atmosphere of n gases none of which is
// known to dominate (rocky planets). The composition X (n mixing ratios
// summing to 1) is written in centred-log-ratio coordinates
//
//	xi_i = ln(X_i / g(X)),  g(X) = (prod_j X_j)^(1/n),  sum_i xi_i = 0,
//
// the first n-1 of which are the free parameters; xi_n = -sum of the others
// and X_i = exp(xi_i) / sum_j exp(xi_j). The prior is uniform in
// (xi_1..xi_{n-1}) over the region where every X_i >= MinVMR, so no gas is
// favoured: the prior treats all gases alike, whichever is dropped as
// xi_n.
//
// The region lies inside the box [XiLow, XiHigh]^(n-1) with
//
//	XiHigh = -(n-1)/n ln MinVMR               (X_i = 1, all others MinVMR)
//	XiLow  = (n-1)/n (ln MinVMR - ln((1-MinVMR)/(n-1)))   (X_i = MinVMR, the rest equal)
//
// LogProb returns -(n-1) ln(XiHigh-XiLow) inside the region, the box's
// density: the prior up to the constant factor 1/P(region | box).
type CLR struct {
	Gases         []string
	MinVMR        float64
	XiLow, XiHigh float64
	logBoxDensity float64
}

// NewCLR returns the centred-log-ratio prior over the named gases (at least
// two) with lowest mixing ratio minVMR, 0 < minVMR < 1/n.
func NewCLR(gases []string, minVMR float64) (*CLR, error) {
	n := len(gases)
	if n < 2 {
		return nil, fmt.Errorf("priors: centred-log-ratio prior needs at least two gases, got %d", n)
	}
	seen := map[string]bool{}
	for _, g := range gases {
		if seen[g] {
			return nil, fmt.Errorf("priors: centred-log-ratio prior: gas %q is listed twice", g)
		}
		seen[g] = true
	}
	if !(minVMR > 0 && minVMR < 1/float64(n)) || math.IsInf(minVMR, 0) {
		return nil, fmt.Errorf("priors: centred-log-ratio prior: lowest mixing ratio %g must lie in (0, 1/%d)", minVMR, n)
	}
	fn := float64(n)
	c := &CLR{Gases: gases, MinVMR: minVMR}
	c.XiHigh = -(fn - 1) / fn * math.Log(minVMR)
	c.XiLow = (fn - 1) / fn * (math.Log(minVMR) - math.Log((1-minVMR)/(fn-1)))
	c.logBoxDensity = -(fn - 1) * math.Log(c.XiHigh-c.XiLow)
	return c, nil
}

// Dim is the number of free parameters, n-1.
func (c *CLR) Dim() int { return len(c.Gases) - 1 }

// VMR fills dst (len n) with the mixing ratios of the clr coordinates xi
// (len n-1) and reports whether every one is at least MinVMR.
func (c *CLR) VMR(dst, xi []float64) bool {
	n := len(c.Gases)
	if len(xi) != n-1 || len(dst) != n {
		panic("priors: CLR.VMR: wrong length")
	}
	last := 0.0
	mx := math.Inf(-1)
	for _, v := range xi {
		if math.IsNaN(v) {
			return false
		}
		last -= v
		mx = math.Max(mx, v)
	}
	mx = math.Max(mx, last)
	s := 0.0
	for i, v := range xi {
		dst[i] = math.Exp(v - mx)
		s += dst[i]
	}
	dst[n-1] = math.Exp(last - mx)
	s += dst[n-1]
	ok := true
	for i := range dst {
		dst[i] /= s
		if !(dst[i] >= c.MinVMR) {
			ok = false
		}
	}
	return ok
}

// LogProb returns the log prior of the clr coordinates xi (len n-1); vmr is
// scratch of length n (filled with the mixing ratios).
func (c *CLR) LogProb(xi, vmr []float64) float64 {
	for _, v := range xi {
		if !(v >= c.XiLow && v <= c.XiHigh) {
			return math.Inf(-1)
		}
	}
	if !c.VMR(vmr, xi) {
		return math.Inf(-1)
	}
	return c.logBoxDensity
}

// Rand fills xi (len n-1) with a draw from the prior by rejection from the
// box; vmr is scratch of length n.
func (c *CLR) Rand(xi, vmr []float64, rng *rand.Rand) error {
	for range maxRejections {
		for i := range xi {
			xi[i] = c.XiLow + (c.XiHigh-c.XiLow)*rng.Float64()
		}
		if c.VMR(vmr, xi) {
			return nil
		}
	}
	return ErrRejection
}

// CLRCoords fills xi (len n-1) with the clr coordinates of the mixing ratios
// x (len n, positive, summing to 1).
func CLRCoords(xi, x []float64) {
	if len(xi) != len(x)-1 {
		panic("priors: CLRCoords: wrong length")
	}
	m := 0.0
	for _, v := range x {
		m += math.Log(v)
	}
	m /= float64(len(x))
	for i := range xi {
		xi[i] = math.Log(x[i]) - m
	}
}

// paramError is the error of an invalid composition-prior definition; it
// names the gas's parameter.
func paramError(name, format string, args ...any) error {
	return fmt.Errorf("prior of parameter %q: %s", name, fmt.Sprintf(format, args...))
}
