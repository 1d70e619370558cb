package retrieve

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"strings"
	"time"

	"github.com/parquet-go/parquet-go"

	"chord/sampler"
)

// Running a sampled chain into a run directory, and continuing it.
//
// StartRun draws the initial ensemble, writes a checkpoint at step 0 and
// samples; ContinueRun reads the checkpoint, checks and trims the chain
// store, and carries on. Both hand every step to the chain store, commit a
// part and write a checkpoint every RunOptions.CheckpointSteps steps and
// when the sampler stops (step count, budget, convergence or a cancelled
// context). A resumed run continues the very same chain: the sampler's
// state is restored bit for bit, and under the convergence rule the
// sampler's position history is rebuilt by replaying the stored chain, so
// that the rule stops at the same step as an uninterrupted run.

// Names inside a run directory.
const (
	RunFile        = "run.toml"
	ChainsDir      = "chains"
	CheckpointFile = "checkpoint"
)

// CheckpointInterval is the wall-clock time aimed at between checkpoints
// when RunOptions.CheckpointSteps is 0.
const CheckpointInterval = time.Minute

// RunSpec is a validated retrieval ready to sample.
type RunSpec struct {
	Target sampler.Target
	Layout ChainLayout  // must agree with Target (Dim, NumExtra)
	Move   sampler.Move // nil means the stretch move, a = 2
	Seed   uint64
	// Init draws the initial ensemble (step 0) from Seed.
	Init func(ctx context.Context, workers int) (*sampler.State, error)
	// RunID and ConfigSHA256 identify the run; a checkpoint whose digest
	// differs from ConfigSHA256 is refused on resume.
	RunID        string
	ConfigSHA256 string
}

// RunOptions are the settings of one session of a run.
type RunOptions struct {
	Workers int // goroutines evaluating the posterior; 0 means GOMAXPROCS
	// Stop is the stopping rule; for ContinueRun the zero value keeps the
	// run's rule.
	Stop StopRule
	// CheckpointSteps is the number of steps between checkpoints; 0 chooses
	// it so that checkpoints come about every CheckpointInterval.
	CheckpointSteps int
	// Progress receives progress reports (nil: none). With Terminal set one
	// status line is redrawn; otherwise a line is logged every LogInterval
	// (0 means 30 s).
	Progress    io.Writer
	Terminal    bool
	LogInterval time.Duration
}

// RunOutcome reports one session of a run.
type RunOutcome struct {
	Stop         sampler.StopReason
	Step         int           // steps in the chain now
	Steps        int           // steps taken in this session
	Elapsed      time.Duration // wall-clock time of this session's sampling
	TotalElapsed time.Duration // sampling time of all sessions
	Evaluations  int64         // posterior evaluations of all sessions
	Tau          []float64     // last autocorrelation-time estimate per parameter (steps), nil if none
	Removed      []string      // chain files removed on resume (rows after the checkpoint)
	// Recovered is set when the newest part was damaged and the run
	// resumed from the checkpoint's previous state, one part earlier.
	Recovered bool
}

// StartRun samples a new run into dir, whose chain store must be empty.
func StartRun(ctx context.Context, dir string, spec *RunSpec, opt RunOptions) (*RunOutcome, error) {
	if err := checkStop(opt.Stop); err != nil {
		return nil, err
	}
	if err := checkSpec(spec); err != nil {
		return nil, err
	}
	t0 := time.Now()
	st, err := spec.Init(ctx, opt.Workers)
	if err != nil {
		return nil, fmt.Errorf("initial walkers: %w", err)
	}
	stepTime := time.Since(t0)
	w, err := CreateChains(filepath.Join(dir, ChainsDir), spec.Layout)
	if err != nil {
		return nil, err
	}
	r := &runner{dir: dir, spec: spec, opt: opt, w: w, stop: opt.Stop}
	r.evals = int64(st.Walkers)
	if err := r.checkpoint(st); err != nil {
		return nil, err
	}
	if opt.CheckpointSteps == 0 {
		r.opt.CheckpointSteps = autoCheckpointSteps(stepTime)
	}
	return r.sample(ctx, st, &RunOutcome{})
}

// ContinueRun resumes the run in dir from its checkpoint.
func ContinueRun(ctx context.Context, dir string, spec *RunSpec, opt RunOptions) (*RunOutcome, error) {
	if err := checkSpec(spec); err != nil {
		return nil, err
	}
	ck, err := ReadCheckpoint(filepath.Join(dir, CheckpointFile))
	if err != nil {
		return nil, err
	}
	if ck.ConfigSHA256 != spec.ConfigSHA256 {
		return nil, fmt.Errorf("%s: the checkpoint belongs to a run with configuration digest %s, the run's configuration and inputs now give %s: they changed since the run started; start a new run with chord fit instead", dir, short(ck.ConfigSHA256), short(spec.ConfigSHA256))
	}
	if ck.Walkers != spec.Layout.Walkers || ck.Dim != spec.Layout.Dim {
		return nil, fmt.Errorf("%s: the checkpoint holds %d walkers x %d parameters, the configuration gives %d x %d", dir, ck.Walkers, ck.Dim, spec.Layout.Walkers, spec.Layout.Dim)
	}
	out := &RunOutcome{}
	chains := filepath.Join(dir, ChainsDir)
	parts, stateBytes := ck.Parts, ck.State
	if err := CheckParts(chains, parts); err != nil {
		var pe *PartError
		n := len(parts)
		if !errors.As(err, &pe) || pe.Index != n-1 || ck.Prev == nil || ck.PrevStep != parts[n-1].FirstStep-1 {
			return nil, fmt.Errorf("%s: %w; the rows of these steps cannot be recovered", dir, err)
		}
		// The newest part is damaged: resume from the state before it. The
		// checkpoint stays as it is until the next one: should this session
		// stop before that, the next resume recovers the same way.
		parts, stateBytes = parts[:n-1], ck.Prev
		out.Recovered = true
	}
	st := new(sampler.State)
	if err := st.UnmarshalBinary(stateBytes); err != nil {
		return nil, fmt.Errorf("%s: sampler state in the checkpoint: %w", dir, err)
	}
	last := 0
	if n := len(parts); n > 0 {
		last = parts[n-1].LastStep
	}
	if st.Step != last {
		return nil, fmt.Errorf("%s: the checkpoint's state is at step %d but its parts end at step %d", dir, st.Step, last)
	}
	removed, err := trimParts(osFS{}, chains, parts)
	out.Removed = removed
	if err != nil {
		return nil, err
	}
	w, err := newChainWriter(osFS{}, chains, spec.Layout, parts)
	if err != nil {
		return nil, err
	}
	stop := opt.Stop
	if stop == (StopRule{}) {
		stop = ck.Stop
	}
	if err := checkStop(stop); err != nil {
		return nil, err
	}
	r := &runner{dir: dir, spec: spec, opt: opt, w: w, stop: stop, evals: ck.Evaluations, base: secs(ck.Elapsed)}
	// The state resumed from is the previous state of the next checkpoint.
	r.last = &Checkpoint{CheckpointHeader: ck.CheckpointHeader, State: stateBytes}
	r.last.Step, r.last.Parts = st.Step, parts
	if opt.CheckpointSteps == 0 {
		per := CheckpointInterval / 100
		if ck.Step > 0 && ck.Elapsed > 0 {
			per = secs(ck.Elapsed / float64(ck.Step))
		}
		r.opt.CheckpointSteps = autoCheckpointSteps(per)
	}
	// Rebuild the histories (convergence rule, progress) from the stored chain.
	if err := r.newHistories(st); err != nil {
		return nil, err
	}
	if len(parts) > 0 {
		if err := replay(chains, parts, &spec.Layout, r.histories()...); err != nil {
			return nil, fmt.Errorf("%s: replaying the chain: %w", dir, err)
		}
	}
	return r.sample(ctx, st, out)
}

func checkSpec(spec *RunSpec) error {
	if err := spec.Layout.Validate(); err != nil {
		return err
	}
	if spec.Target.Dim() != spec.Layout.Dim || spec.Target.NumExtra() != spec.Layout.NumExtra {
		return fmt.Errorf("run: target of %d parameters and %d extras, chain layout of %d and %d", spec.Target.Dim(), spec.Target.NumExtra(), spec.Layout.Dim, spec.Layout.NumExtra)
	}
	return nil
}

func checkStop(s StopRule) error {
	n := 0
	if s.Steps > 0 {
		n++
	}
	if s.Budget > 0 {
		n++
	}
	if s.UntilConverged {
		n++
	}
	if n != 1 || s.Steps < 0 || s.Budget < 0 || math.IsNaN(s.Budget) {
		return fmt.Errorf("stopping rule: give exactly one of a step count, a budget or until-converged (got steps %d, budget %gs, until-converged %v)", s.Steps, s.Budget, s.UntilConverged)
	}
	return nil
}

func autoCheckpointSteps(stepTime time.Duration) int {
	if stepTime <= 0 {
		return 1000
	}
	n := int(CheckpointInterval / stepTime)
	return min(max(n, 10), 5000)
}

func secs(s float64) time.Duration { return time.Duration(s * float64(time.Second)) }

func short(h string) string {
	if len(h) > 12 {
		return h[:12]
	}
	return h
}

// runner is one session of a run: the sampler's recorder (chain store and
// histories) and checkpoint writer.
type runner struct {
	dir   string
	spec  *RunSpec
	opt   RunOptions
	stop  StopRule
	w     *ChainWriter
	last  *Checkpoint
	evals int64
	base  time.Duration // sampling time of earlier sessions
	begin time.Time

	conv     *sampler.History // the convergence rule's history (nil unless until-converged)
	progHist *sampler.History // the progress display's history
	prog     *progress
}

func (r *runner) newHistories(st *sampler.State) error {
	var err error
	if r.stop.UntilConverged {
		if r.conv, err = sampler.NewHistory(st.Walkers, st.Dim, 0); err != nil {
			return err
		}
	}
	if r.opt.Progress != nil {
		if r.progHist, err = sampler.NewHistory(st.Walkers, st.Dim, 256); err != nil {
			return err
		}
	}
	return nil
}

// histories lists the histories to replay a stored chain into.
func (r *runner) histories() []sampler.Recorder {
	var h []sampler.Recorder
	if r.conv != nil {
		h = append(h, r.conv)
	}
	if r.progHist != nil {
		h = append(h, r.progHist)
	}
	return h
}

// Record implements sampler.Recorder.
func (r *runner) Record(s *sampler.Step) error {
	if err := r.w.WriteStep(s.Index, s.Pos, s.LogP, s.Extra); err != nil {
		return err
	}
	r.evals += int64(s.Walkers)
	if r.progHist != nil {
		if err := r.progHist.Record(s); err != nil {
			return err
		}
		r.prog.step(s, r.progHist)
	}
	return nil
}

// Flush implements sampler.Flusher: it commits the open part.
func (r *runner) Flush() error { return r.w.Flush() }

// checkpoint is the sampler's checkpoint callback (after Flush).
func (r *runner) checkpoint(st *sampler.State) error {
	if r.last != nil && st.Step == r.last.Step {
		return nil
	}
	return r.writeCheckpoint(st)
}

func (r *runner) writeCheckpoint(st *sampler.State) error {
	parts := r.w.Committed()
	last := 0
	if n := len(parts); n > 0 {
		last = parts[n-1].LastStep
	}
	if last != st.Step {
		return fmt.Errorf("checkpoint at step %d but the committed chain parts end at step %d", st.Step, last)
	}
	data, err := st.MarshalBinary()
	if err != nil {
		return err
	}
	elapsed := r.base
	if !r.begin.IsZero() {
		elapsed += time.Since(r.begin)
	}
	ck := &Checkpoint{
		CheckpointHeader: CheckpointHeader{
			Version: Version, RunID: r.spec.RunID, ConfigSHA256: r.spec.ConfigSHA256, Seed: r.spec.Seed,
			Walkers: st.Walkers, Dim: st.Dim, Step: st.Step, Parts: append([]PartInfo(nil), parts...),
			Elapsed: elapsed.Seconds(), Evaluations: r.evals, Stop: r.stop,
		},
		State: data,
	}
	if r.last != nil {
		ck.PrevStep, ck.Prev = r.last.Step, r.last.State
	}
	if err := WriteCheckpoint(filepath.Join(r.dir, CheckpointFile), ck); err != nil {
		return err
	}
	r.last = ck
	return nil
}

// sample runs the sampler from st to the stopping rule.
func (r *runner) sample(ctx context.Context, st *sampler.State, out *RunOutcome) (*RunOutcome, error) {
	if r.conv == nil && r.progHist == nil {
		if err := r.newHistories(st); err != nil {
			return nil, err
		}
	}
	out.Step = st.Step
	out.TotalElapsed, out.Evaluations = r.base, r.evals
	set := sampler.Settings{
		Move: r.spec.Move, Workers: r.opt.Workers,
		CheckpointEvery: r.opt.CheckpointSteps, Checkpoint: r.checkpoint,
	}
	switch {
	case r.stop.Steps > 0:
		if st.Step >= r.stop.Steps {
			if st.Step > r.stop.Steps {
				return nil, fmt.Errorf("%s: the chain already holds %d steps, more than the %d asked for", r.dir, st.Step, r.stop.Steps)
			}
			out.Stop = sampler.StopMaxSteps
			return out, nil
		}
		set.MaxSteps = r.stop.Steps
	case r.stop.Budget > 0:
		left := secs(r.stop.Budget) - r.base
		if left <= 0 {
			out.Stop = sampler.StopBudget
			return out, nil
		}
		set.MaxDuration = left
	case r.stop.UntilConverged:
		set.Convergence = &sampler.Convergence{Factor: ConvergedTaus, Window: SokalWindow, History: r.conv}
	}
	if r.opt.Progress != nil {
		r.prog = newProgress(r.opt, r.stop, st, r.base, r.layoutLogLikelihood())
	}
	r.begin = time.Now()
	first := st.Step
	st, res, err := sampler.Run(ctx, r.spec.Target, st, set, r)
	r.prog.finish()
	out.Steps = st.Step - first
	out.Elapsed = res.Elapsed
	out.Tau = res.Tau
	if err != nil {
		r.w.Abort()
		safe := "no checkpoint was written"
		if r.last != nil {
			safe = fmt.Sprintf("the chain up to the last checkpoint (step %d) is intact; fix the cause and continue it with: chord resume %s", r.last.Step, r.dir)
		}
		return out, fmt.Errorf("%w; %s", err, safe)
	}
	if err := r.checkpoint(st); err != nil {
		return out, fmt.Errorf("%w; the chain up to step %d is intact: chord resume %s", err, r.last.Step, r.dir)
	}
	out.Stop = res.Stop
	out.Step = st.Step
	out.TotalElapsed = secs(r.last.Elapsed)
	out.Evaluations = r.evals
	if out.Tau == nil && r.progHist != nil {
		if tau, ok := r.progHist.Tau(nil, SokalWindow); ok {
			out.Tau = tau
		}
	}
	return out, nil
}

// layoutLogLikelihood is the extra index of the log_likelihood column, or -1.
func (r *runner) layoutLogLikelihood() int {
	for _, c := range r.spec.Layout.Columns {
		if c.Name == "log_likelihood" && c.Role == RoleDerived {
			return c.Source
		}
	}
	return -1
}

// replay streams the stored chain, step by step, into the recorders.
func replay(dir string, parts []PartInfo, l *ChainLayout, recs ...sampler.Recorder) error {
	if len(recs) == 0 {
		return nil
	}
	step := &sampler.Step{
		Walkers: l.Walkers, Dim: l.Dim, NumExtra: l.NumExtra,
		Pos: make([]float64, l.Walkers*l.Dim), LogP: make([]float64, l.Walkers),
		Extra: make([]float64, l.Walkers*l.NumExtra), Accepted: make([]bool, l.Walkers),
	}
	_, err := scanParts(dir, parts, func(cols []ChainColumn, walkers int) {}, func(s, k int, row parquet.Row) error {
		step.Index = s
		step.LogP[k] = row[2].Double()
		for j, c := range l.Columns {
			v := row[3+j].Double()
			if c.Role == RoleParameter {
				step.Pos[k*l.Dim+c.Source] = v
			} else {
				step.Extra[k*l.NumExtra+c.Source] = v
			}
		}
		if k < l.Walkers-1 {
			return nil
		}
		for _, rec := range recs {
			if err := rec.Record(step); err != nil {
				return err
			}
		}
		return nil
	})
	return err
}

// progress reports a session's progress.
type progress struct {
	w        io.Writer
	terminal bool
	every    time.Duration
	stop     StopRule
	base     time.Duration
	llIndex  int

	begin, lastOut, lastTau time.Time
	first, cur              int
	accepted, proposed      int64
	bestLL                  float64
	tau                     float64
	drawn                   bool
}

func newProgress(opt RunOptions, stop StopRule, st *sampler.State, base time.Duration, ll int) *progress {
	every := opt.LogInterval
	if every == 0 {
		every = 30 * time.Second
	}
	if opt.Terminal {
		every = 500 * time.Millisecond
	}
	p := &progress{w: opt.Progress, terminal: opt.Terminal, every: every, stop: stop, base: base, llIndex: ll,
		begin: time.Now(), first: st.Step, cur: st.Step, bestLL: math.Inf(-1), tau: math.NaN()}
	p.lastOut = p.begin
	for k := 0; k < st.Walkers && ll >= 0; k++ {
		p.bestLL = math.Max(p.bestLL, st.Extra[k*st.NumExtra+ll])
	}
	return p
}

func (p *progress) step(s *sampler.Step, h *sampler.History) {
	p.cur = s.Index
	for k, a := range s.Accepted {
		if a {
			p.accepted++
		}
		if p.llIndex >= 0 {
			if v := s.Extra[k*s.NumExtra+p.llIndex]; v > p.bestLL {
				p.bestLL = v
			}
		}
	}
	p.proposed += int64(s.Walkers)
	now := time.Now()
	if now.Sub(p.lastOut) < p.every {
		return
	}
	if now.Sub(p.lastTau) > 5*time.Second || !p.terminal {
		tau, _ := h.Tau(nil, SokalWindow)
		p.tau = 0
		for _, t := range tau {
			if t > p.tau || math.IsNaN(t) {
				p.tau = t
			}
		}
		p.lastTau = now
	}
	p.lastOut = now
	p.print(false)
}

func (p *progress) print(final bool) {
	el := time.Since(p.begin)
	rate := float64(p.cur-p.first) / el.Seconds()
	var b strings.Builder
	fmt.Fprintf(&b, "step %d", p.cur)
	if p.stop.Steps > 0 {
		fmt.Fprintf(&b, "/%d", p.stop.Steps)
	}
	if p.proposed > 0 {
		fmt.Fprintf(&b, ", acceptance %.2f", float64(p.accepted)/float64(p.proposed))
	}
	if !math.IsNaN(p.tau) && p.tau > 0 {
		fmt.Fprintf(&b, ", tau %.1f", p.tau)
	}
	if !math.IsInf(p.bestLL, -1) {
		fmt.Fprintf(&b, ", best log-likelihood %.2f", p.bestLL)
	}
	if rate > 0 {
		fmt.Fprintf(&b, ", %.1f steps/s", rate)
	}
	if !final && rate > 0 {
		var left time.Duration
		ok := true
		switch {
		case p.stop.Steps > 0:
			left = secs(float64(p.stop.Steps-p.cur) / rate)
		case p.stop.Budget > 0:
			left = secs(p.stop.Budget) - p.base - el
		default:
			need := ConvergedTaus*p.tau - float64(p.cur)
			ok = !math.IsNaN(p.tau) && p.tau > 0
			left = secs(math.Max(need, 0) / rate)
		}
		if ok {
			fmt.Fprintf(&b, ", about %s left", left.Round(time.Second))
			if p.stop.UntilConverged {
				b.WriteString(" to 50 tau")
			}
		}
	}
	if p.terminal {
		fmt.Fprintf(p.w, "\r\033[K%s", b.String())
		p.drawn = true
		if final {
			fmt.Fprintln(p.w)
		}
		return
	}
	fmt.Fprintf(p.w, "chord: %s\n", b.String())
}

func (p *progress) finish() {
	if p == nil {
		return
	}
	if p.cur > p.first || p.drawn {
		p.print(true)
	}
}
