package sampler

import (
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"hash/crc32"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/mat"
)

// State is everything needed to continue a chain bit for bit: positions, log
// densities, extras, step count, move state (the exact move description and
// each walker's accepted-proposal count), the last convergence-check tau and
// the PCG generator's state. MarshalBinary / UnmarshalBinary encode it with a
// CRC-32C checksum; a corrupt encoding is an error.
//
// A State is made by InitBall, InitPrior or InitPositions, advanced by Run,
// and restored by UnmarshalBinary.
type State struct {
	Walkers, Dim, NumExtra int
	Step                   int       // completed steps; 0 for the initial ensemble
	Pos                    []float64 // Walkers*Dim, walker-major
	LogP                   []float64 // Walkers
	Extra                  []float64 // Walkers*NumExtra
	Accepted               []uint64  // Walkers: accepted proposals since step 0
	// Moves is the String of the move the chain was run with ("" before the
	// first Run). Run refuses to continue a chain with a different move.
	Moves string
	// Tau is the integrated autocorrelation time per parameter from the last
	// convergence check (nil if none), made at step TauStep. A resumed run
	// compares its next estimate with it.
	Tau     []float64
	TauStep int

	pcg *rand.PCG
}

// InitSettings configures the initial ensemble.
type InitSettings struct {
	Walkers int    // ensemble size: even and at least 2(Dim+1)
	Seed    uint64 // seed of the PCG generator that drives the whole chain
	Workers int    // goroutines evaluating the initial ensemble; 0 (or less) means GOMAXPROCS
}

// seedStream is the fixed second PCG seed word; the user's seed is the first.
const seedStream = 0x5851f42d4c957f2d

// InitBall starts walker k at center + scale ⊙ N(0, I), each coordinate an
// independent normal draw, and evaluates the ensemble. scale must be
// positive in every coordinate.
func InitBall(ctx context.Context, t Target, center, scale []float64, s InitSettings) (*State, error) {
	d := t.Dim()
	if len(center) != d || len(scale) != d {
		return nil, fmt.Errorf("sampler: ball of %d centre and %d scale values for a %d-parameter target", len(center), len(scale), d)
	}
	for i := range d {
		if math.IsNaN(center[i]) || math.IsInf(center[i], 0) {
			return nil, fmt.Errorf("sampler: ball centre of parameter %d is %v", i, center[i])
		}
		if !(scale[i] > 0) || math.IsInf(scale[i], 0) {
			return nil, fmt.Errorf("sampler: ball scale of parameter %d is %v, want a finite value > 0", i, scale[i])
		}
	}
	return InitPrior(ctx, t, func(dst []float64, rng *rand.Rand) error {
		for i := range dst {
			dst[i] = center[i] + scale[i]*rng.NormFloat64()
		}
		return nil
	}, s)
}

// InitPrior starts every walker at a point from draw (typically a draw from
// the prior), walker 0 first, using the chain's own generator, and evaluates
// the ensemble.
func InitPrior(ctx context.Context, t Target, draw func(dst []float64, rng *rand.Rand) error, s InitSettings) (*State, error) {
	d := t.Dim()
	if err := checkShape(s.Walkers, d, t.NumExtra()); err != nil {
		return nil, err
	}
	pcg := rand.NewPCG(s.Seed, seedStream)
	rng := rand.New(pcg)
	pos := make([]float64, s.Walkers*d)
	for k := range s.Walkers {
		if err := draw(pos[k*d:(k+1)*d], rng); err != nil {
			return nil, fmt.Errorf("sampler: initial draw of walker %d: %w", k, err)
		}
	}
	return newState(ctx, t, pos, pcg, s)
}

// InitPositions starts the ensemble at the given positions (Walkers*Dim,
// walker-major), which are copied, and evaluates it.
func InitPositions(ctx context.Context, t Target, pos []float64, s InitSettings) (*State, error) {
	d := t.Dim()
	if err := checkShape(s.Walkers, d, t.NumExtra()); err != nil {
		return nil, err
	}
	if len(pos) != s.Walkers*d {
		return nil, fmt.Errorf("sampler: %d initial coordinates for %d walkers in %d dimensions", len(pos), s.Walkers, d)
	}
	return newState(ctx, t, append([]float64(nil), pos...), rand.NewPCG(s.Seed, seedStream), s)
}

// initBatchPerWorker is the number of walkers per worker evaluated
// between two checks of the context when an ensemble starts.
const initBatchPerWorker = 4

func newState(ctx context.Context, t Target, pos []float64, pcg *rand.PCG, s InitSettings) (*State, error) {
	d, ne := t.Dim(), t.NumExtra()
	st := &State{
		Walkers: s.Walkers, Dim: d, NumExtra: ne,
		Pos:      pos,
		LogP:     make([]float64, s.Walkers),
		Extra:    make([]float64, s.Walkers*ne),
		Accepted: make([]uint64, s.Walkers),
		pcg:      pcg,
	}
	workers := workerCount(s.Workers, s.Walkers)
	p := newPool(t, workers)
	defer p.close()
	// In batches, ctx checked before each: a large ensemble stops within
	// a few evaluations per worker of a cancellation.
	batch := initBatchPerWorker * workers
	for k := 0; k < s.Walkers; k += batch {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		n := min(batch, s.Walkers-k)
		p.evaluate(st.LogP[k:k+n], st.Extra[k*ne:(k+n)*ne], st.Pos[k*d:(k+n)*d], n)
	}
	if err := st.check(); err != nil {
		return nil, err
	}
	return st, nil
}

func checkShape(walkers, dim, numExtra int) error {
	switch {
	case dim < 1:
		return fmt.Errorf("sampler: target has %d parameters, want at least 1", dim)
	case numExtra < 0:
		return fmt.Errorf("sampler: target has %d extra values, want at least 0", numExtra)
	case walkers%2 != 0 || walkers < 2*(dim+1):
		return fmt.Errorf("sampler: %d walkers for %d parameters: want an even number of at least %d, so that each half-ensemble can span the parameter space", walkers, dim, 2*(dim+1))
	}
	return nil
}

// check validates a state before it is run: shapes, finite log densities
// and finite positions, and an ensemble that spans R^Dim.
func (st *State) check() error {
	if err := checkShape(st.Walkers, st.Dim, st.NumExtra); err != nil {
		return err
	}
	w, d := st.Walkers, st.Dim
	if len(st.Pos) != w*d || len(st.LogP) != w || len(st.Extra) != w*st.NumExtra || len(st.Accepted) != w || st.pcg == nil {
		return errors.New("sampler: state is not initialised (make it with InitBall, InitPrior, InitPositions or UnmarshalBinary)")
	}
	if st.Step < 0 {
		return fmt.Errorf("sampler: state step %d is negative", st.Step)
	}
	for k := range w {
		x := st.Pos[k*d : (k+1)*d]
		for i, v := range x {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return fmt.Errorf("sampler: walker %d has parameter %d = %v", k, i, v)
			}
		}
		if lp := st.LogP[k]; math.IsNaN(lp) || math.IsInf(lp, 0) {
			return fmt.Errorf("sampler: walker %d starts where the log density is %v (at %v); every walker must start where the density is positive and finite", k, lp, x)
		}
	}
	return checkRank(st.Pos, w, d)
}

// rankTol is the smallest singular value, relative to the largest, of the
// column-standardised walker matrix for which the ensemble counts as
// spanning R^d. Rounding in float64 puts a genuinely degenerate ensemble near
// 1e-16; 1e-10 leaves a wide margin on both sides.
const rankTol = 1e-10

// checkRank reports an error when the walkers lie in an affine subspace of
// lower dimension than d. Each coordinate is centred and scaled to unit
// spread first, so very different parameter scales do not matter.
func checkRank(pos []float64, w, d int) error {
	m := mat.NewDense(w, d, nil)
	for i := range d {
		var mean float64
		for k := range w {
			mean += pos[k*d+i]
		}
		mean /= float64(w)
		var ss float64
		for k := range w {
			v := pos[k*d+i] - mean
			ss += v * v
		}
		if ss == 0 {
			return fmt.Errorf("sampler: all %d walkers share the same value %v of parameter %d (rank-deficient ensemble); give every parameter a spread", w, mean, i)
		}
		sd := math.Sqrt(ss / float64(w))
		for k := range w {
			m.Set(k, i, (pos[k*d+i]-mean)/sd)
		}
	}
	var svd mat.SVD
	if !svd.Factorize(m, mat.SVDNone) {
		return errors.New("sampler: cannot factorise the initial ensemble to check its rank")
	}
	sv := svd.Values(nil)
	rank := 0
	for _, s := range sv {
		if s > rankTol*sv[0] {
			rank++
		}
	}
	if rank < d {
		return fmt.Errorf("sampler: the %d walkers lie in a %d-dimensional subspace of the %d-dimensional parameter space (rank-deficient ensemble); the moves could never leave it, so start from a ball or prior draws with spread in every direction", w, rank, d)
	}
	return nil
}

// Clone returns a deep copy of the state, generator included.
func (st *State) Clone() *State {
	c := *st
	c.Pos = append([]float64(nil), st.Pos...)
	c.LogP = append([]float64(nil), st.LogP...)
	c.Extra = append([]float64(nil), st.Extra...)
	c.Accepted = append([]uint64(nil), st.Accepted...)
	c.Tau = append([]float64(nil), st.Tau...)
	if st.Tau == nil {
		c.Tau = nil
	}
	if st.pcg != nil {
		p := *st.pcg
		c.pcg = &p
	}
	return &c
}

// Checkpoint encoding, little-endian:
//
//	magic "chordsmp" | version u32 | walkers u32 | dim u32 | extra u32 |
//	step u64 | tauStep u64 | len u32 + move string | len u32 + PCG state |
//	len u32 + tau f64... | pos f64... | logp f64... | extra f64... |
//	accepted u64... | CRC-32C (Castagnoli) of everything before it, u32
const (
	stateMagic   = "chordsmp"
	stateVersion = 1
	maxStateDim  = 1 << 24 // sanity bound on decoded sizes
)

var crcTable = crc32.MakeTable(crc32.Castagnoli)

// MarshalBinary encodes the state with a checksum.
func (st *State) MarshalBinary() ([]byte, error) {
	if st.pcg == nil {
		return nil, errors.New("sampler: cannot encode a state without a generator")
	}
	rs, err := st.pcg.MarshalBinary()
	if err != nil {
		return nil, err
	}
	n := len(stateMagic) + 4*4 + 8*2 + 4 + len(st.Moves) + 4 + len(rs) + 4 + 8*len(st.Tau) +
		8*(len(st.Pos)+len(st.LogP)+len(st.Extra)+len(st.Accepted)) + 4
	b := make([]byte, 0, n)
	b = append(b, stateMagic...)
	for _, v := range []int{stateVersion, st.Walkers, st.Dim, st.NumExtra} {
		b = binary.LittleEndian.AppendUint32(b, uint32(v))
	}
	b = binary.LittleEndian.AppendUint64(b, uint64(st.Step))
	b = binary.LittleEndian.AppendUint64(b, uint64(st.TauStep))
	b = binary.LittleEndian.AppendUint32(b, uint32(len(st.Moves)))
	b = append(b, st.Moves...)
	b = binary.LittleEndian.AppendUint32(b, uint32(len(rs)))
	b = append(b, rs...)
	b = binary.LittleEndian.AppendUint32(b, uint32(len(st.Tau)))
	for _, s := range [][]float64{st.Tau, st.Pos, st.LogP, st.Extra} {
		for _, v := range s {
			b = binary.LittleEndian.AppendUint64(b, math.Float64bits(v))
		}
	}
	for _, v := range st.Accepted {
		b = binary.LittleEndian.AppendUint64(b, v)
	}
	return binary.LittleEndian.AppendUint32(b, crc32.Checksum(b, crcTable)), nil
}

// ErrCorruptState is wrapped by UnmarshalBinary's errors for encodings that
// fail the checksum or are malformed.
var ErrCorruptState = errors.New("sampler: corrupt sampler state")

type reader struct {
	b   []byte
	err bool
}

func (r *reader) take(n uint64) []byte {
	if r.err || n > uint64(len(r.b)) {
		r.err = true
		return nil
	}
	s := r.b[:n]
	r.b = r.b[n:]
	return s
}

func (r *reader) u32() uint64 {
	if s := r.take(4); s != nil {
		return uint64(binary.LittleEndian.Uint32(s))
	}
	return 0
}

func (r *reader) u64() uint64 {
	if s := r.take(8); s != nil {
		return binary.LittleEndian.Uint64(s)
	}
	return 0
}

func (r *reader) floats(n uint64) []float64 {
	s := r.take(8 * n)
	if s == nil {
		return nil
	}
	v := make([]float64, n)
	for i := range v {
		v[i] = math.Float64frombits(binary.LittleEndian.Uint64(s[8*i:]))
	}
	return v
}

// openFrame checks the frame of an encoded state (magic, version, CRC-32C
// of everything before the last 4 bytes) and returns a reader of what
// follows the version; kind names the state in errors.
func openFrame(data []byte, magic string, version uint64, kind string) (*reader, error) {
	if len(data) < len(magic)+4 {
		return nil, fmt.Errorf("%w: %d bytes is too short", ErrCorruptState, len(data))
	}
	body, sum := data[:len(data)-4], binary.LittleEndian.Uint32(data[len(data)-4:])
	if string(body[:len(magic)]) != magic {
		return nil, fmt.Errorf("%w: not a %s (bad magic)", ErrCorruptState, kind)
	}
	if crc32.Checksum(body, crcTable) != sum {
		return nil, fmt.Errorf("%w: checksum mismatch", ErrCorruptState)
	}
	r := &reader{b: body[len(magic):]}
	if v := r.u32(); v != version {
		return nil, fmt.Errorf("%w: %s version %d, this program reads version %d", ErrCorruptState, kind, v, version)
	}
	return r, nil
}

// UnmarshalBinary decodes a state written by MarshalBinary. A wrong
// checksum, magic, version or length is an error wrapping ErrCorruptState;
// st is unchanged then.
func (st *State) UnmarshalBinary(data []byte) error {
	r, err := openFrame(data, stateMagic, stateVersion, "sampler state")
	if err != nil {
		return err
	}
	w, d, ne := r.u32(), r.u32(), r.u32()
	step, tauStep := r.u64(), r.u64()
	if w > maxStateDim || d > maxStateDim || ne > maxStateDim || step > math.MaxInt64/2 || tauStep > step {
		return fmt.Errorf("%w: implausible sizes (walkers %d, dim %d, extra %d, step %d, tau step %d)", ErrCorruptState, w, d, ne, step, tauStep)
	}
	moves := string(r.take(r.u32()))
	rs := r.take(r.u32())
	nt := r.u32()
	if nt != 0 && nt != d {
		return fmt.Errorf("%w: %d tau values for %d parameters", ErrCorruptState, nt, d)
	}
	var tau []float64
	if nt > 0 {
		tau = r.floats(nt)
	}
	pos := r.floats(w * d)
	logp := r.floats(w)
	extra := r.floats(w * ne)
	accRaw := r.take(8 * w)
	if r.err || len(r.b) != 0 {
		return fmt.Errorf("%w: length does not match its header", ErrCorruptState)
	}
	pcg := new(rand.PCG)
	if err := pcg.UnmarshalBinary(rs); err != nil {
		return fmt.Errorf("%w: generator state: %v", ErrCorruptState, err)
	}
	acc := make([]uint64, w)
	for i := range acc {
		acc[i] = binary.LittleEndian.Uint64(accRaw[8*i:])
		if acc[i] > step {
			return fmt.Errorf("%w: walker %d accepted %d proposals in %d steps", ErrCorruptState, i, acc[i], step)
		}
	}
	*st = State{
		Walkers: int(w), Dim: int(d), NumExtra: int(ne),
		Step: int(step), Pos: pos, LogP: logp, Extra: extra, Accepted: acc,
		Moves: moves, Tau: tau, TauStep: int(tauStep), pcg: pcg,
	}
	return nil
}
