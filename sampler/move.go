package sampler

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
)

// Move proposes a new position for one walker from the complementary half of
// the ensemble. Moves are called on one goroutine only, in a fixed order, and
// must draw every random number from rng; that is what makes a chain
// independent of the worker count and resumable bit for bit.
type Move interface {
	// Propose writes the proposal for the walker at x into dst (both of
	// length Dim) and returns the log of the factor that multiplies the
	// density ratio in the acceptance probability (the log Jacobian or
	// proposal-ratio term; 0 for a symmetric proposal).
	Propose(dst, x []float64, c *Complement, rng *rand.Rand) float64
	// Check reports whether the move can run in dim dimensions with a
	// complementary half of nComp walkers.
	Check(dim, nComp int) error
	// String describes the move and all its parameters exactly; it is
	// stored in checkpoints so that a resumed run uses the same moves.
	String() string
}

// Complement is the half-ensemble a move proposes from. It is owned by Run;
// moves read it during Propose only.
type Complement struct {
	pos  []float64 // n*dim
	n    int
	dim  int
	perm []int     // scratch for Choose
	work []float64 // scratch of length max(n, dim)
}

func newComplement(n, dim int) *Complement {
	return &Complement{n: n, dim: dim, perm: make([]int, n), work: make([]float64, max(n, dim))}
}

// Len returns the number of walkers in the complementary half.
func (c *Complement) Len() int { return c.n }

// Walker returns the position of walker j of the complementary half. The
// slice must not be modified.
func (c *Complement) Walker(j int) []float64 { return c.pos[j*c.dim : (j+1)*c.dim] }

// Choose returns k distinct walker indices drawn uniformly without
// replacement, in random order (a partial Fisher-Yates shuffle). The slice is
// valid until the next call. The shuffle starts from the identity every
// time, so the result depends on rng alone (no hidden state to checkpoint).
func (c *Complement) Choose(k int, rng *rand.Rand) []int {
	for i := range c.perm {
		c.perm[i] = i
	}
	for i := range k {
		j := i + rng.IntN(c.n-i)
		c.perm[i], c.perm[j] = c.perm[j], c.perm[i]
	}
	return c.perm[:k]
}

func ftoa(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

// Stretch is the stretch move of Goodman & Weare (2010, CAMCoS 5, 65):
// for walker x and a walker y drawn uniformly from the complementary half,
//
//	x' = y + z (x - y),  z ~ g(z) ∝ 1/sqrt(z) on [1/a, a],
//
// accepted with probability min(1, z^(d-1) p(x')/p(x)).
type Stretch struct {
	A float64 // scale parameter a > 1; 0 means the default 2
}

func (m Stretch) scale() float64 {
	if m.A == 0 {
		return 2
	}
	return m.A
}

// Propose implements Move.
func (m Stretch) Propose(dst, x []float64, c *Complement, rng *rand.Rand) float64 {
	a := m.scale()
	y := c.Walker(rng.IntN(c.n))
	// Inverse CDF of g: z = ((a-1)u + 1)^2 / a.
	u := (a-1)*rng.Float64() + 1
	z := u * u / a
	for i, xi := range x {
		dst[i] = y[i] + z*(xi-y[i])
	}
	return float64(len(x)-1) * math.Log(z)
}

// Check implements Move.
func (m Stretch) Check(dim, nComp int) error {
	if a := m.scale(); !(a > 1) || math.IsInf(a, 0) {
		return fmt.Errorf("sampler: stretch move: scale a = %v, want a finite value > 1", m.A)
	}
	if nComp < 1 {
		return fmt.Errorf("sampler: stretch move needs at least 1 walker in each half, have %d", nComp)
	}
	return nil
}

func (m Stretch) String() string { return "stretch(a=" + ftoa(m.scale()) + ")" }

// Walk is the walk move of Goodman & Weare (2010, CAMCoS 5, 65): a subset S
// of the complementary half is drawn without replacement and
//
//	x' = x + sum_{j in S} Z_j (x_j - mean_S),  Z_j ~ N(0, 1),
//
// a symmetric proposal. Its covariance is sum_j (x_j - mean_S)(x_j -
// mean_S)^T, that is (|S| - 1) times the sample covariance of S, so steps
// grow with |S| and small subsets work best: on the 10-d test Gaussian,
// |S| = 3 accepts about 18 % with tau about 60 steps, |S| = 11 accepts
// under 1 %.
type Walk struct {
	Subset int // size of S, 2 up to the half-ensemble size; 0 means 3
}

func (m Walk) size() int {
	if m.Subset == 0 {
		return 3
	}
	return m.Subset
}

// Propose implements Move.
func (m Walk) Propose(dst, x []float64, c *Complement, rng *rand.Rand) float64 {
	k := m.size()
	idx := c.Choose(k, rng)
	// sum_j Z_j (x_j - mean) = sum_j Z_j x_j - (sum_j Z_j / k) sum_j x_j.
	sumPos := c.work[:len(x)]
	copy(dst, x)
	clear(sumPos)
	var sumZ float64
	for _, j := range idx {
		z := rng.NormFloat64()
		sumZ += z
		y := c.Walker(j)
		for i, yi := range y {
			dst[i] += z * yi
			sumPos[i] += yi
		}
	}
	f := sumZ / float64(k)
	for i := range dst {
		dst[i] -= f * sumPos[i]
	}
	return 0
}

// Check implements Move.
func (m Walk) Check(dim, nComp int) error {
	if k := m.size(); k < 2 || k > nComp {
		return fmt.Errorf("sampler: walk move: subset of %d walkers, want 2..%d (the half-ensemble size)", k, nComp)
	}
	return nil
}

func (m Walk) String() string { return "walk(subset=" + strconv.Itoa(m.size()) + ")" }

// DiffEvolution is the differential-evolution move of ter Braak (2006, Stat.
// Comput. 16, 239): two distinct walkers y1, y2 are drawn from the
// complementary half and
//
//	x' = x + g (y1 - y2),  g = gamma (1 + jitter N(0, 1)),
//
// a symmetric proposal. ter Braak adds a small absolute noise e to x'; we
// randomise the step length instead, which keeps the move affine invariant.
// With probability JumpProb the step is g = 1 (ter Braak's jump between
// modes).
type DiffEvolution struct {
	Gamma    float64 // step scale; 0 means 2.38/sqrt(2 d) (ter Braak 2006)
	Jitter   float64 // relative spread of the step scale; 0 means 1e-4
	JumpProb float64 // probability of a g = 1 step, in [0, 1]; 0 means none
}

func (m DiffEvolution) params(dim int) (gamma, jitter float64) {
	gamma, jitter = m.Gamma, m.Jitter
	if gamma == 0 {
		gamma = 2.38 / math.Sqrt(2*float64(dim))
	}
	if jitter == 0 {
		jitter = 1e-4
	}
	return gamma, jitter
}

// Propose implements Move.
func (m DiffEvolution) Propose(dst, x []float64, c *Complement, rng *rand.Rand) float64 {
	gamma, jitter := m.params(len(x))
	idx := c.Choose(2, rng)
	y1, y2 := c.Walker(idx[0]), c.Walker(idx[1])
	g := 1.0
	if m.JumpProb == 0 || rng.Float64() >= m.JumpProb {
		g = gamma * (1 + jitter*rng.NormFloat64())
	}
	for i, xi := range x {
		dst[i] = xi + g*(y1[i]-y2[i])
	}
	return 0
}

// Check implements Move.
func (m DiffEvolution) Check(dim, nComp int) error {
	gamma, jitter := m.params(dim)
	switch {
	case !(gamma > 0) || math.IsInf(gamma, 0):
		return fmt.Errorf("sampler: differential-evolution move: gamma = %v, want a finite value > 0", m.Gamma)
	case !(jitter >= 0) || math.IsInf(jitter, 0):
		return fmt.Errorf("sampler: differential-evolution move: jitter = %v, want a finite value >= 0", m.Jitter)
	case !(m.JumpProb >= 0 && m.JumpProb <= 1):
		return fmt.Errorf("sampler: differential-evolution move: jump probability = %v, want 0..1", m.JumpProb)
	case nComp < 2:
		return fmt.Errorf("sampler: differential-evolution move needs at least 2 walkers in each half, have %d", nComp)
	}
	return nil
}

func (m DiffEvolution) String() string {
	return "de(gamma=" + ftoa(m.Gamma) + ",jitter=" + ftoa(m.Jitter) + ",jump=" + ftoa(m.JumpProb) + ")"
}

// Mixture picks, for every proposal, move i with probability
// Weights[i] / sum(Weights). Each component satisfies detailed balance on
// its own and the choice does not depend on the state, so the mixture does
// too.
type Mixture struct {
	Moves   []Move
	Weights []float64 // positive, same length as Moves
}

// Propose implements Move.
func (m Mixture) Propose(dst, x []float64, c *Complement, rng *rand.Rand) float64 {
	var total float64
	for _, w := range m.Weights {
		total += w
	}
	u := rng.Float64() * total
	i := 0
	for ; i < len(m.Weights)-1; i++ {
		if u < m.Weights[i] {
			break
		}
		u -= m.Weights[i]
	}
	return m.Moves[i].Propose(dst, x, c, rng)
}

// Check implements Move.
func (m Mixture) Check(dim, nComp int) error {
	if len(m.Moves) == 0 || len(m.Moves) != len(m.Weights) {
		return fmt.Errorf("sampler: mixture of moves: %d moves and %d weights, want equal non-zero counts", len(m.Moves), len(m.Weights))
	}
	for i, w := range m.Weights {
		if !(w > 0) || math.IsInf(w, 0) {
			return fmt.Errorf("sampler: mixture of moves: weight %d = %v, want a finite value > 0", i, w)
		}
		if m.Moves[i] == nil {
			return fmt.Errorf("sampler: mixture of moves: move %d is nil", i)
		}
		if err := m.Moves[i].Check(dim, nComp); err != nil {
			return err
		}
	}
	return nil
}

func (m Mixture) String() string {
	var b strings.Builder
	b.WriteString("mixture(")
	for i, mv := range m.Moves {
		if i > 0 {
			b.WriteByte(',')
		}
		if i < len(m.Weights) {
			b.WriteString(ftoa(m.Weights[i]))
		}
		b.WriteByte('*')
		if mv != nil {
			b.WriteString(mv.String())
		}
	}
	b.WriteByte(')')
	return b.String()
}

var (
	_ Move = Stretch{}
	_ Move = Walk{}
	_ Move = DiffEvolution{}
	_ Move = Mixture{}
)
