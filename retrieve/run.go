package retrieve

import (
	"bytes"
	"context"
	crand "crypto/rand"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/BurntSushi/toml"

	"chord/chains"
	"chord/config"
	"chord/forward/opacity"
	"chord/internal/atomicfile"
	"chord/internal/eta"
	"chord/internal/logto"
	"chord/internal/runlock"
	"chord/internal/version"
	"chord/obs"
	"chord/priors"
	"chord/report"
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

// Names inside a run directory (the chain store is chains.DirName).
const (
	RunFile        = "run.toml"
	CheckpointFile = "checkpoint"
)

// convergenceRule describes the until-converged stopping rule.
var convergenceRule = fmt.Sprintf("chain longer than %g tau, tau stable to %g%%", sampler.DefaultConvergedTaus, 100*sampler.DefaultTauRelChange)

// CheckpointInterval is the wall-clock time aimed at between checkpoints
// when RunOptions.CheckpointSteps is 0.
const CheckpointInterval = time.Minute

// RunSpec is a validated retrieval ready to sample.
type RunSpec struct {
	Target sampler.Target
	Layout chains.Layout // must agree with Target (Dim, NumExtra)
	Move   sampler.Move  // nil means the stretch move, a = 2
	Seed   uint64
	// Init draws the initial ensemble (step 0) from Seed.
	Init func(ctx context.Context, workers int) (*sampler.State, error)
	// RunID and ConfigSHA256 identify the run; a checkpoint whose digest
	// differs from ConfigSHA256 is refused on resume.
	RunID        string
	ConfigSHA256 string
	// Nested, when set, makes the run a nested-sampling run (nested.go):
	// Target is then the log-likelihood, Layout a store of dead points, and
	// Move and Init are unused.
	Nested *NestedSpec
}

// RunOptions are the settings of one session of a run.
type RunOptions struct {
	Workers int // goroutines evaluating the posterior; 0 means GOMAXPROCS
	// Stop is the stopping rule; for ContinueRun the zero value keeps the
	// run's rule.
	Stop config.StopRule
	// CheckpointSteps is the number of steps between checkpoints; 0 chooses
	// it so that checkpoints come about every CheckpointInterval.
	CheckpointSteps int
	Progress        Progress
}

// Progress says where and how a run reports its progress.
type Progress struct {
	// Writer receives progress reports (nil: none). With Terminal set one
	// status line is redrawn; otherwise a line is logged every LogInterval
	// (0 means 30 s).
	Writer      io.Writer
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
	// Met is set when the run had already met its stopping rule: nothing
	// was sampled (Stop says which rule).
	Met bool
	// BeforeStart is set when the session was interrupted while the
	// initial ensemble was being made (Stop is StopCanceled): there is no
	// checkpoint yet, and a resume starts the run again from its seed.
	BeforeStart bool
	// Nested sampling: Step and Steps count dead points, and Evidence is
	// the evidence as the session left it (nil for the ensemble).
	Evidence *report.Evidence
	// SessionEvaluations counts the evaluations of this session (nested
	// sampling; 0 for the ensemble, where it is Steps times the walkers).
	SessionEvaluations int64
}

// StartRun samples a new run into dir, whose chain store must be empty.
func StartRun(ctx context.Context, dir string, spec *RunSpec, opt RunOptions) (*RunOutcome, error) {
	if spec.Nested != nil {
		return startNested(ctx, dir, spec, opt)
	}
	if err := checkStop(opt.Stop); err != nil {
		return nil, err
	}
	if err := checkSpec(spec); err != nil {
		return nil, err
	}
	st, err := spec.Init(ctx, opt.Workers)
	if err != nil {
		if ctx.Err() != nil && errors.Is(err, ctx.Err()) {
			return &RunOutcome{Stop: sampler.StopCanceled, BeforeStart: true}, nil
		}
		return nil, fmt.Errorf("initial walkers: %w", err)
	}
	stepTime := timeStep(spec.Target, st, opt.Workers)
	w, err := chains.Create(filepath.Join(dir, chains.DirName), spec.Layout)
	if err != nil {
		return nil, err
	}
	r := &runner{dir: dir, spec: spec, opt: opt, w: w, stop: opt.Stop}
	r.evals = int64(st.Walkers)
	if opt.CheckpointSteps == 0 {
		r.opt.CheckpointSteps = autoCheckpointSteps(stepTime)
	}
	if err := r.checkpoint(st); err != nil {
		return nil, err
	}
	return r.sample(ctx, st, &RunOutcome{})
}

// ContinueRun resumes the run in dir from its checkpoint.
func ContinueRun(ctx context.Context, dir string, spec *RunSpec, opt RunOptions) (*RunOutcome, error) {
	if spec.Nested != nil {
		return continueNested(ctx, dir, spec, opt)
	}
	ck, parts, stateBytes, recovered, err := openCheckpoint(dir, spec, "the rows of these steps")
	if err != nil {
		return nil, err
	}
	out := &RunOutcome{Recovered: recovered}
	store := filepath.Join(dir, chains.DirName)
	st := new(sampler.State)
	if err := st.UnmarshalBinary(stateBytes); err != nil {
		return nil, fmt.Errorf("%s: sampler state in the checkpoint: %w", dir, err)
	}
	last := chains.LastStep(parts)
	if st.Step != last {
		return nil, fmt.Errorf("%s: the checkpoint's state is at step %d but its parts end at step %d", dir, st.Step, last)
	}
	stop := opt.Stop
	if stop == (config.StopRule{}) {
		stop = ck.Stop
	}
	if err := checkStop(stop); err != nil {
		return nil, err
	}
	stopped := ck.Stopped
	if out.Recovered {
		stopped = "" // the state resumed from is one part before the one that met the rule
	}
	if reason, met, err := metRule(stop, st.Step, secs(ck.Elapsed), stopped); err != nil {
		return nil, fmt.Errorf("%s: %w", dir, err)
	} else if met {
		out.Stop, out.Met, out.Step = reason, true, st.Step
		out.TotalElapsed, out.Evaluations = secs(ck.Elapsed), ck.Evaluations
		return out, nil
	}
	removed, err := chains.Trim(store, parts)
	out.Removed = removed
	if err != nil {
		return nil, err
	}
	w, err := chains.NewWriter(atomicfile.OS, store, spec.Layout, parts)
	if err != nil {
		return nil, err
	}
	r := &runner{dir: dir, spec: spec, opt: opt, w: w, stop: stop, evals: ck.Evaluations, base: secs(ck.Elapsed)}
	// The state resumed from is the previous state of the next checkpoint.
	r.last = &Checkpoint{CheckpointHeader: ck.CheckpointHeader, State: stateBytes}
	r.last.Step, r.last.Parts, r.last.Stopped = st.Step, parts, stopped
	if out.Recovered {
		r.last.Prev = nil
	} else {
		r.last.Prev = ck.Prev
	}
	switch {
	case opt.CheckpointSteps > 0:
	case ck.CheckpointSteps > 0:
		r.opt.CheckpointSteps = ck.CheckpointSteps // the run's own interval
	default: // a checkpoint that does not record it
		per := CheckpointInterval / 100
		if ck.Step > 0 && ck.Elapsed > 0 {
			per = secs(ck.Elapsed / float64(ck.Step))
		}
		r.opt.CheckpointSteps = autoCheckpointSteps(per)
	}
	if err := ctx.Err(); err != nil {
		out.Stop, out.Step = sampler.StopCanceled, st.Step
		return out, nil
	}
	// Rebuild the histories (convergence rule, progress) from the stored chain.
	if err := r.newHistories(st); err != nil {
		return nil, err
	}
	if len(parts) > 0 {
		if err := replay(ctx, store, parts, &spec.Layout, r.histories()...); err != nil {
			if ctx.Err() != nil && errors.Is(err, ctx.Err()) {
				out.Stop, out.Step = sampler.StopCanceled, st.Step
				return out, nil
			}
			return nil, fmt.Errorf("%s: replaying the chain: %w", dir, err)
		}
	}
	return r.sample(ctx, st, out)
}

// checkOwner refuses a checkpoint that is not the run's: one of another
// run (copied over it), of another configuration or inputs, or of another
// openCheckpoint reads and verifies the checkpoint of the run in dir: that
// it and every chain part belong to spec's run. When only the newest part
// is damaged and the checkpoint holds the state before it, it returns the
// parts and state before that part, with recovered set: the run resumes
// from there. The checkpoint stays as it is until the next one, so should
// this session stop before that, the next resume recovers the same way.
// The parts' columns must be the layout's, or its old spellings
// (matchColumns). lost names what a damaged part held, for the error.
func openCheckpoint(dir string, spec *RunSpec, lost string) (ck *Checkpoint, parts []chains.PartInfo, state []byte, recovered bool, err error) {
	if err := checkSpec(spec); err != nil {
		return nil, nil, nil, false, err
	}
	ck, err = ReadCheckpoint(filepath.Join(dir, CheckpointFile))
	if err != nil {
		return nil, nil, nil, false, err
	}
	if err := checkOwner(dir, ck, spec); err != nil {
		return nil, nil, nil, false, err
	}
	parts, state = ck.Parts, ck.State
	store := filepath.Join(dir, chains.DirName)
	if err := chains.CheckParts(store, parts, partMeta(spec)); err != nil {
		var pe *chains.PartError
		n := len(parts)
		if !errors.As(err, &pe) || pe.Index != n-1 || ck.Prev == nil || ck.PrevStep != parts[n-1].FirstStep-1 {
			return nil, nil, nil, false, fmt.Errorf("%s: %w; %s cannot be recovered", dir, err, lost)
		}
		parts, state, recovered = parts[:n-1], ck.Prev, true
	}
	if err := matchColumns(dir, store, parts, &spec.Layout); err != nil {
		return nil, nil, nil, false, err
	}
	return ck, parts, state, recovered, nil
}

// ensemble shape.
func checkOwner(dir string, ck *Checkpoint, spec *RunSpec) error {
	if ck.RunID != spec.RunID {
		return fmt.Errorf("%s: the checkpoint belongs to run %s, run.toml to run %s: it was copied from another run; restore this run's checkpoint, or start a new run", dir, ck.RunID, spec.RunID)
	}
	if ck.ConfigSHA256 != spec.ConfigSHA256 {
		return fmt.Errorf("%s: the checkpoint belongs to a run with configuration digest %s, the run's configuration and inputs now give %s: they changed since the run started; start a new run instead", dir, short(ck.ConfigSHA256), short(spec.ConfigSHA256))
	}
	if spec.Nested != nil {
		return checkNestedOwner(dir, ck, spec)
	}
	if ck.Method != "" || ck.Walkers != spec.Layout.Walkers || ck.Dim != spec.Layout.Dim {
		return fmt.Errorf("%s: the checkpoint holds %d walkers x %d parameters (%s), the configuration gives an ensemble of %d x %d", dir, ck.Walkers, ck.Dim, methodName(ck.Method), spec.Layout.Walkers, spec.Layout.Dim)
	}
	return nil
}

// matchColumns gives the layout l the columns of the chains already
// stored (the first of parts) when they are the same columns, by name or
// by an older name (report.LegacyColumns), role and source, so that a run started
// before a rename continues with the names and descriptions it has; any
// other difference is refused before anything is written.
func matchColumns(dir, store string, parts []chains.PartInfo, l *chains.Layout) error {
	if len(parts) == 0 {
		return nil
	}
	r, err := chains.NewReader(store, parts[:1])
	if err != nil {
		return fmt.Errorf("%s: %w", dir, err)
	}
	var have []chains.Column // the layout's columns, without the log densities
	for _, c := range r.Columns() {
		if c.Role == chains.RoleParameter || c.Role == chains.RoleDerived {
			have = append(have, c)
		}
	}
	r.Close()
	names := func(cs []chains.Column) string {
		n := make([]string, len(cs))
		for i, c := range cs {
			n[i] = c.Name
		}
		return strings.Join(n, ",")
	}
	if len(have) != len(l.Columns) {
		return fmt.Errorf("%s: the stored chains have the columns %s, this configuration gives %s", dir, names(have), names(l.Columns))
	}
	for i, c := range l.Columns {
		h := have[i]
		if (h.Name != c.Name && h.Name != report.LegacyColumns[c.Name]) || h.Role != c.Role || h.Source != c.Source {
			return fmt.Errorf("%s: the stored chains have the columns %s, this configuration gives %s", dir, names(have), names(l.Columns))
		}
	}
	// The same columns, perhaps under older names and descriptions:
	// continue with those stored.
	l.Columns = slices.Clone(have)
	return nil
}

// partMeta is the metadata every chain part of the run must carry: its
// run identity, when the layout writes one.
func partMeta(spec *RunSpec) map[string]string {
	if id, ok := spec.Layout.Meta[runIDKey]; ok {
		return map[string]string{runIDKey: id}
	}
	return nil
}

// runIDKey is the chain parts' metadata key of the run identity.
const runIDKey = "chord.run_id"

// metRule reports whether a run at step, having sampled for elapsed, has
// met the rule stop (stopped: the reason recorded by the session that
// met the run's rule, or ""). A step count below the chain's length is an
// error: chains are never shortened.
func metRule(stop config.StopRule, step int, elapsed time.Duration, stopped string) (sampler.StopReason, bool, error) {
	switch {
	case stop.Steps > 0:
		if step > stop.Steps {
			return 0, false, fmt.Errorf("the chain already holds %d steps, more than the %d asked for", step, stop.Steps)
		}
		return sampler.StopMaxSteps, step == stop.Steps, nil
	case stop.Budget > 0:
		return sampler.StopBudget, elapsed >= secs(stop.Budget), nil
	}
	return sampler.StopConverged, stopped == sampler.StopConverged.String(), nil
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

func checkStop(s config.StopRule) error {
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

// timeStep estimates the time of one ensemble step: the fastest of three
// evaluations at the first walker, times the walkers per worker. (The
// start itself is no measure: its search for the mode takes thousands of
// evaluations.)
func timeStep(t sampler.Target, st *sampler.State, workers int) time.Duration {
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	ev := t.NewEvaluator()
	extra := make([]float64, st.NumExtra)
	best := time.Duration(math.MaxInt64)
	for range 3 {
		t0 := time.Now()
		ev.LogProb(st.Pos[:st.Dim], extra)
		best = min(best, time.Since(t0))
	}
	return best * time.Duration((st.Walkers+workers-1)/workers)
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
	stop  config.StopRule
	w     *chains.Writer
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
	// The progress display reads the convergence rule's history when there
	// is one, so that its tau and time left are the rule's own.
	if r.opt.Progress.Writer != nil && r.conv == nil {
		if r.progHist, err = sampler.NewHistory(st.Walkers, st.Dim, 256); err != nil {
			return err
		}
	}
	return nil
}

// tauHistory is the history the progress display estimates tau from.
func (r *runner) tauHistory() *sampler.History {
	if r.conv != nil {
		return r.conv
	}
	return r.progHist
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
	if err := r.w.Record(s); err != nil {
		return err
	}
	r.evals += int64(s.Walkers)
	if r.progHist != nil {
		if err := r.progHist.Record(s); err != nil {
			return err
		}
	}
	if h := r.tauHistory(); h != nil && r.prog != nil {
		r.prog.step(s, h)
	}
	return nil
}

// Flush implements sampler.Flusher: it commits the open part.
func (r *runner) Flush() error { return r.w.Flush() }

// checkpoint is the sampler's checkpoint callback (after Flush).
func (r *runner) checkpoint(st *sampler.State) error { return r.checkpointStopped(st, "") }

// checkpointStopped writes a checkpoint of st unless the last one is of
// the same step and stopping reason (stopped: see CheckpointHeader).
func (r *runner) checkpointStopped(st *sampler.State, stopped string) error {
	if r.last != nil && st.Step == r.last.Step && stopped == r.last.Stopped {
		return nil
	}
	return r.writeCheckpoint(st, stopped)
}

func (r *runner) writeCheckpoint(st *sampler.State, stopped string) error {
	parts := r.w.Committed()
	last := chains.LastStep(parts)
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
			Version: version.Version, RunID: r.spec.RunID, ConfigSHA256: r.spec.ConfigSHA256, Seed: r.spec.Seed,
			Walkers: st.Walkers, Dim: st.Dim, Step: st.Step, Parts: append([]chains.PartInfo(nil), parts...),
			Elapsed: elapsed.Seconds(), Evaluations: r.evals, Stop: r.stop, Stopped: stopped,
			CheckpointSteps: r.opt.CheckpointSteps,
		},
		State: data,
	}
	switch {
	case r.last != nil && r.last.Step == st.Step:
		// The same state again (now with why the run stopped): the
		// previous state stays the one before the newest part.
		ck.PrevStep, ck.Prev = r.last.PrevStep, r.last.Prev
	case r.last != nil:
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
		set.MaxSteps = r.stop.Steps
	case r.stop.Budget > 0:
		set.MaxDuration = max(secs(r.stop.Budget)-r.base, time.Nanosecond)
	case r.stop.UntilConverged:
		set.Convergence = &sampler.Convergence{History: r.conv}
	}
	if r.opt.Progress.Writer != nil {
		r.prog = newProgress(r.opt.Progress, r.stop, st, r.base, r.layoutLogLikelihood())
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
		if r.last == nil {
			return out, fmt.Errorf("%w; no checkpoint was written", err)
		}
		return out, &StoppedError{Dir: r.dir, Step: r.last.Step, Err: err}
	}
	stopped := ""
	if res.Stop != sampler.StopCanceled {
		stopped = res.Stop.String()
	}
	if err := r.checkpointStopped(st, stopped); err != nil {
		return out, &StoppedError{Dir: r.dir, Step: r.last.Step, Err: err}
	}
	out.Stop = res.Stop
	out.Step = st.Step
	out.TotalElapsed = secs(r.last.Elapsed)
	out.Evaluations = r.evals
	if h := r.tauHistory(); out.Tau == nil && h != nil {
		if tau, ok := h.Tau(nil, sampler.DefaultSokalWindow); ok {
			out.Tau = tau
		}
	}
	return out, nil
}

// layoutLogLikelihood is the extra index of the log_likelihood column, or -1.
func (r *runner) layoutLogLikelihood() int {
	for _, c := range r.spec.Layout.Columns {
		if c.Name == "log_likelihood" && c.Role == chains.RoleDerived {
			return c.Source
		}
	}
	return -1
}

// replay streams the stored chain, step by step, into the recorders; it
// stops with ctx's error when ctx is cancelled.
func replay(ctx context.Context, dir string, parts []chains.PartInfo, l *chains.Layout, recs ...sampler.Recorder) error {
	if len(recs) == 0 {
		return nil
	}
	r, err := chains.NewReader(dir, parts)
	if err != nil {
		return err
	}
	defer r.Close()
	step := &sampler.Step{
		Walkers: l.Walkers, Dim: l.Dim, NumExtra: l.NumExtra,
		Pos: make([]float64, l.Walkers*l.Dim), LogP: make([]float64, l.Walkers),
		Extra: make([]float64, l.Walkers*l.NumExtra), Accepted: make([]bool, l.Walkers),
	}
	for {
		if err := ctx.Err(); err != nil {
			return err
		}
		if _, err := r.Next(); err == io.EOF {
			return nil
		} else if err != nil {
			return err
		}
		if err := r.StepTo(step); err != nil {
			return err
		}
		for _, rec := range recs {
			if err := rec.Record(step); err != nil {
				return err
			}
		}
	}
}

// progress reports a session's progress.
type progress struct {
	w        io.Writer
	terminal bool
	every    time.Duration
	stop     config.StopRule
	base     time.Duration
	llIndex  int

	begin, lastOut, lastTau time.Time
	first, cur              int
	accepted, proposed      int64
	bestLL                  float64
	tau                     float64
	drawn                   bool
	left                    eta.Smoother
}

func newProgress(opt Progress, stop config.StopRule, st *sampler.State, base time.Duration, ll int) *progress {
	every := opt.LogInterval
	if every == 0 {
		every = 30 * time.Second
	}
	if opt.Terminal {
		every = 500 * time.Millisecond
	}
	p := &progress{w: opt.Writer, terminal: opt.Terminal, every: every, stop: stop, base: base, llIndex: ll,
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
		tau, _ := h.Tau(nil, sampler.DefaultSokalWindow)
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
	if !final && !math.IsNaN(p.tau) && p.tau > 0 {
		// The estimate while sampling; the final line leaves tau to the
		// summary, which estimates it after the burn-in.
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
			need := sampler.DefaultConvergedTaus*p.tau - float64(p.cur)
			ok = !math.IsNaN(p.tau) && p.tau > 0 && need > 0
			left = secs(need / rate)
			if !math.IsNaN(p.tau) && p.tau > 0 && need <= 0 {
				fmt.Fprintf(&b, ", past %g tau, waiting for tau to settle", sampler.DefaultConvergedTaus)
			}
		}
		if ok {
			left = p.left.Update(time.Now(), left)
			fmt.Fprintf(&b, ", about %s left", left.Round(time.Second))
			if p.stop.UntilConverged {
				fmt.Fprintf(&b, " to %g tau", sampler.DefaultConvergedTaus)
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

// Runs from configuration files: chord fit, resume and report.
//
// run.toml is the resolved configuration (Resolved.WriteTOML: every default
// explicit, the seed included, the observations named by their copies in
// the run directory, inputs.go) followed by a [run] table
// of our own: program version, run identity, the configuration file it
// came from and the SHA-256 of every input file (the configuration, the
// observations, the opacity tables). The checkpoint records a digest of
// the resolved configuration and the inputs' digests; resume recomputes it
// from run.toml and the files as they are now, and refuses to continue a
// chain whose configuration or inputs changed, naming what changed.

// RunInfo is the [run] table of run.toml.
type RunInfo struct {
	Version    string      `toml:"version"`     // program version that started the run
	RunID      string      `toml:"run_id"`      // random identity, also in the chain parts and checkpoint
	Created    string      `toml:"created"`     // UTC start time, RFC 3339
	ConfigFile string      `toml:"config_file"` // the configuration file the run was started from
	RunDir     string      `toml:"run_dir"`     // the run directory when it was made (rundir.go: moved inputs)
	Demo       bool        `toml:"demo_opacities"`
	Inputs     []InputFile `toml:"inputs"`
}

// InputFile is one input of a run with its digest.
type InputFile struct {
	Role   string `toml:"role"` // "configuration", "observations" or "opacity"
	Path   string `toml:"path"`
	SHA256 string `toml:"sha256"`
}

// runFile is run.toml as decoded.
type runFile struct {
	config.Config
	Run RunInfo `toml:"run"`
}

func fileSHA256(path string) (string, error) {
	f, err := os.Open(path)
	if err != nil {
		return "", err
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return "", err
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}

// runInputs lists the inputs of a resolved configuration whose contents
// the chain depends on, with their digests.
func runInputs(r *config.Resolved, set *opacity.Set) ([]InputFile, error) {
	var in []InputFile
	add := func(role, path string) error {
		h, err := fileSHA256(path)
		if err != nil {
			return fmt.Errorf("input file: %w", err)
		}
		in = append(in, InputFile{Role: role, Path: path, SHA256: h})
		return nil
	}
	for _, o := range r.Config.Observations {
		if err := add("observations", o.File); err != nil {
			return nil, err
		}
	}
	files := append([]string(nil), set.Files...)
	sort.Strings(files)
	for _, f := range files {
		if err := add("opacity", f); err != nil {
			return nil, err
		}
	}
	return in, nil
}

// configDigest is the digest a checkpoint is bound to: the resolved
// configuration (without the stopping rule and workers, which resume may
// change, and without the input files' paths, so that a run moves with
// its inputs) and the digests of the inputs, which stand for the files.
func configDigest(r *config.Resolved, inputs []InputFile) (string, error) {
	c := r.Config
	c.Sampler.Steps, c.Sampler.Budget, c.Sampler.UntilConverged, c.Sampler.Workers = nil, "", nil, nil
	c.Observations = slices.Clone(c.Observations)
	for i := range c.Observations {
		c.Observations[i].File = ""
	}
	if c.Opacity.Dir != "" {
		c.Opacity.Dir = "(directory)"
	}
	text, err := config.DigestText(c)
	if err != nil {
		return "", err
	}
	b := bytes.NewBuffer(text)
	for _, in := range inputs {
		fmt.Fprintf(b, "\n%s %s", in.Role, in.SHA256)
	}
	sum := sha256.Sum256(b.Bytes())
	return hex.EncodeToString(sum[:]), nil
}

// job is a resolved configuration made ready to run.
type job struct {
	html   bool // the report includes report.html
	res    *config.Resolved
	set    *opacity.Set
	prob   *Problem
	spec   *RunSpec
	inputs []InputFile
	log    io.Writer // the run's log (the start's searches); nil for none
	// configFile is the configuration file the run was started from (for
	// advice in the summary); "" when not known.
	configFile string
}

// quantityUnit is the unit of each quantity in chains and reports.
var quantityUnit = map[config.Quantity]string{
	config.QTemperature: "K", config.QTIrr: "K", config.QTInt: "K", config.QLog10ThermalOpacity: "log10(m^2/kg)",
	config.QRadiusRjup: "R_jup", config.QRadiusRearth: "R_earth", config.QMassMjup: "M_jup", config.QMassMearth: "M_earth",
	config.QLog10CloudTop: "log10(bar)", config.QOffsetPPM: "ppm", config.QErrorInflationPM: "ppm",
}

// derivedInfo describes the Problem's extra values after the first.
var derivedInfo = map[string][2]string{
	"mean_molecular_weight": {"mean molecular weight", "u"},
	"balance_vmr":           {"volume mixing ratio of the balance gas", ""},
	"chi_square_fitted":     {"chi-square with the errors as fitted (inflated when error_inflation_ppm is fitted)", ""},
}

func newJob(r *config.Resolved, set *opacity.Set, runID string) (*job, error) {
	prob, err := NewProblem(r, set)
	if err != nil {
		return nil, err
	}
	inputs, err := runInputs(r, set)
	if err != nil {
		return nil, err
	}
	digest, err := configDigest(r, inputs)
	if err != nil {
		return nil, err
	}
	extras := prob.ExtraNames()
	if len(extras) == 0 || extras[0] != "log_likelihood" {
		return nil, fmt.Errorf("run: the problem's first extra value is %v, want log_likelihood", extras)
	}
	l := chains.Layout{Walkers: r.Walkers, Dim: prob.Dim(), NumExtra: prob.NumExtra(),
		Meta: map[string]string{"chord.version": version.Version, "chord.run_id": runID, "chord.seed": strconv.FormatUint(r.Seed, 10),
			"chord.demo_opacities": strconv.FormatBool(set.Demo)}}
	l.Columns = append(l.Columns, chains.Column{Name: "log_likelihood", Role: chains.RoleDerived, Source: 0, Quantity: "natural log of the likelihood, with its normalising term"})
	for i, par := range r.Free {
		q := string(par.Sets)
		switch {
		case par.Gas != "":
			q += " of " + par.Gas
		case par.Dataset >= 0 && (par.Sets == config.QOffsetPPM || par.Sets == config.QErrorInflationPM):
			q += " of " + r.Datasets[par.Dataset].Name
		}
		l.Columns = append(l.Columns, chains.Column{Name: par.Name, Role: chains.RoleParameter, Source: i, Quantity: q, Unit: quantityUnit[par.Sets], Prior: fmt.Sprint(par.Prior)})
	}
	for j := 1; j < len(extras); j++ {
		info := derivedInfo[extras[j]]
		l.Columns = append(l.Columns, chains.Column{Name: extras[j], Role: chains.RoleDerived, Source: j, Quantity: info[0], Unit: info[1]})
	}
	var target sampler.Target = prob
	var nested *NestedSpec
	if r.Method == config.MethodNested {
		if l, nested, err = nestedJob(r, prob, l); err != nil {
			return nil, err
		}
		target = likelihood{prob}
	}
	var move sampler.Move
	switch r.Move {
	case config.MoveWalk:
		move = sampler.Walk{}
	case config.MoveDiffEvolution:
		move = sampler.DiffEvolution{}
	default:
		move = sampler.Stretch{A: 2}
	}
	j := &job{}
	spec := &RunSpec{
		Target: target, Layout: l, Move: move, Seed: r.Seed, RunID: runID, ConfigSHA256: digest, Nested: nested,
		Init: func(ctx context.Context, workers int) (*sampler.State, error) {
			pos, found, err := sampler.StartBall(ctx, prob, prob.DrawPrior, priorWidths(prob.Priors()), sampler.StartSettings{Walkers: r.Walkers, Seed: r.Seed, Workers: workers})
			if err != nil {
				return nil, err
			}
			fmt.Fprintln(logto.First(j.log), "chord: start:", found)
			return sampler.InitPositions(ctx, prob, pos, sampler.InitSettings{Walkers: r.Walkers, Seed: r.Seed, Workers: workers})
		},
	}
	j.res, j.set, j.prob, j.spec, j.inputs = r, set, prob, spec, inputs
	return j, nil
}

// priorWidths returns the central 68% widths of the priors, the scales of
// the start of a chain (sampler.StartBall).
func priorWidths(ps []priors.Prior) []float64 {
	w := make([]float64, len(ps))
	for k, pr := range ps {
		w[k] = pr.Quantile(0.84) - pr.Quantile(0.16)
	}
	return w
}

// gases lists the free log10 mixing ratios with a uniform prior, for the
// detection verdicts.
func (j *job) gases() []report.GasParam {
	var g []report.GasParam
	for _, par := range j.res.Free {
		if u, ok := par.Prior.(priors.Uniform); ok && par.Sets == config.QLog10VMR {
			g = append(g, report.GasParam{Column: par.Name, Gas: par.Gas, Low: u.Low, High: u.High})
		}
	}
	return g
}

// report writes the report of the job's run in dir.
func (j *job) report(dir string, burn int, auto bool, thin int, html bool, out *RunOutcome) (*report.Summary, string, error) {
	ck, err := ReadCheckpoint(filepath.Join(dir, CheckpointFile))
	if err != nil {
		return nil, "", err
	}
	parts := ck.Parts
	if len(parts) == 0 {
		if j.spec.Nested == nil {
			return nil, "", fmt.Errorf("%s: the chain has no steps yet", dir)
		}
		parts = []chains.PartInfo{} // no dead points yet: the live points alone
	}
	title := j.res.Config.Planet.Name
	truth, err := ReadTruth(dir)
	if err != nil {
		return nil, "", err
	}
	var details *report.RunDetails
	if html {
		if details, err = j.runDetails(dir); err != nil {
			return nil, "", err
		}
	}
	var evidence *report.Evidence
	var live *chains.Points
	if j.spec.Nested != nil {
		if evidence, live, err = j.nestedReport(ck); err != nil {
			return nil, "", fmt.Errorf("%s: %w", dir, err)
		}
		if auto {
			burn = 0
		}
	}
	s, err := report.Write(dir, parts, report.Options{
		Evidence: evidence, Live: live, ConfigFile: j.configFile,
		Burn: burn, BurnAuto: auto, Thin: thin, Gases: j.gases(), Model: newReportModel(j), Fitted: j.fitted(), Title: title,
		Atmosphere: j.atmosphere(), Truth: truth, HTML: details,
		Bounds:         paramBounds(j.res.Free, *j.res.Config.Atmosphere.BottomPressureBar),
		ErrorsInflated: j.prob.inflate,
		Coverage:       j.prob.Coverage(),
		Fill: func(s *report.Summary) {
			s.RunID = ck.RunID
			s.DemoOpacities = j.set.Demo
			if s.DemoOpacities {
				s.Warnings = append(s.Warnings, report.DemoWarning)
			}
			if out != nil {
				s.Stop = out.Stop.String()
				rej := j.prob.Rejections()
				if len(rej) > 0 {
					s.InvalidStates = map[string]int64{}
					for _, r := range rej {
						s.InvalidStates[r.Reason] = r.Count
					}
				}
			}
			s.Warnings = append(s.Warnings, j.res.Warnings...)
			for _, n := range j.res.Notes {
				s.Warnings = append(s.Warnings, "note: "+n)
			}
			s.Warnings = append(s.Warnings, j.prob.Notes()...)
		},
	})
	if s == nil {
		return nil, "", err
	}
	var txt bytes.Buffer
	s.WriteText(&txt)
	return s, txt.String(), err
}

// FitOptions configures Fit.
type FitOptions struct {
	ConfigPath string
	RunDir     string
	Force      bool            // replace a run in a non-empty RunDir
	Seed       *uint64         // overrides sampler.seed
	Workers    *int            // overrides sampler.workers
	Stop       config.StopRule // overrides the configuration's rule when set
	DemoCache  string          // where demo opacities are cached; "" means config.DemoCacheDir
	Progress   Progress        // progress reports
	Log        io.Writer       // notes (opacity building, observation notes); nil means Progress.Writer
	// CheckpointSteps is the number of steps between checkpoints; 0 means
	// about one every CheckpointInterval.
	CheckpointSteps int
	// Opacity, when not nil, are the tables already loaded for this
	// configuration (a plan's fits share one set); nil loads them.
	Opacity *opacity.Set
	// Truth, when not nil, is the true atmosphere of a simulated
	// observation: its parameter values go to RunDir/truth.toml and the
	// report marks them.
	Truth *config.ModelConfig
	// HTML also writes report.html.
	HTML bool
	// Without names gases whose log10 mixing ratio the fit holds at its
	// prior's lower edge: the reduced model of a detection by evidence
	// (config.Config.Without).
	Without []string
}

// RunReport is what Fit, Resume and Demo return.
type RunReport struct {
	Dir     string
	Walkers int
	Outcome *RunOutcome
	// Summary is nil when the run was interrupted, or when a nested run
	// stopped too early for one (SummaryText then says so).
	Summary     *report.Summary
	SummaryText string
	// ConfigFile and ObservationFile are the demo's files (Demo only).
	ConfigFile, ObservationFile string
}

// StoppedError is the error of a session that stopped on an error after a
// checkpoint: the chain up to the checkpoint's step is intact, and the run
// can be resumed from it once the cause is fixed.
type StoppedError struct {
	Dir  string // the run directory
	Step int    // the step of the last checkpoint
	Err  error  // why the session stopped
}

func (e *StoppedError) Error() string {
	return fmt.Sprintf("%v; the chain up to the last checkpoint (step %d) is intact", e.Err, e.Step)
}

func (e *StoppedError) Unwrap() error { return e.Err }

func newRunID() string {
	var b [8]byte
	crand.Read(b[:])
	return hex.EncodeToString(b[:])
}

// Fit validates a configuration, starts a run in opt.RunDir and reports it.
// It holds the run directory's lock throughout (see rundir.go). A
// cancelled ctx before run.toml is written ends it with an error wrapping
// ctx's, nothing written; after, with the outcome StopCanceled.
func Fit(ctx context.Context, opt FitOptions) (*RunReport, error) {
	log := logto.First(opt.Log, opt.Progress.Writer)
	lock, err := runlock.Create(opt.RunDir, runlock.Holder("chord fit"), func() error { return checkRunDir(opt.RunDir, opt.Force) })
	if err != nil {
		return nil, err
	}
	defer lock.Release()
	r, err := loadConfig(opt.ConfigPath, opt.Without)
	if err != nil {
		return nil, err
	}
	if opt.Seed != nil {
		if *opt.Seed > math.MaxInt64 { // TOML integers are signed 64-bit
			return nil, fmt.Errorf("seed %d: must be below 2^63", *opt.Seed)
		}
		r.Seed = *opt.Seed
		s := int64(*opt.Seed)
		r.Config.Sampler.Seed = &s
		r.Notes = slices.DeleteFunc(r.Notes, func(n string) bool { return strings.HasPrefix(n, "sampler.seed not given") })
	}
	if opt.Workers != nil {
		if *opt.Workers < 0 {
			return nil, fmt.Errorf("workers %d: must not be negative", *opt.Workers)
		}
		r.Workers = *opt.Workers
		w := r.Workers
		r.Config.Sampler.Workers = &w
	}
	if opt.Stop != (config.StopRule{}) {
		r.Stop = opt.Stop
		sc := &r.Config.Sampler
		sc.Steps, sc.Budget, sc.UntilConverged = nil, "", nil
		switch {
		case opt.Stop.Steps > 0:
			n := opt.Stop.Steps
			sc.Steps = &n
		case opt.Stop.Budget > 0:
			sc.Budget = secs(opt.Stop.Budget).String()
		default:
			t := true
			sc.UntilConverged = &t
		}
	}
	if r.Method == config.MethodNested && r.Stop.Steps > 0 {
		return nil, fmt.Errorf("%s: a nested-sampling run ends at its evidence tolerance (until converged) or a budget; a step count does not apply", opt.ConfigPath)
	}
	for _, n := range r.Notes {
		fmt.Fprintln(log, "chord: note:", n)
	}
	for _, w := range r.Warnings {
		fmt.Fprintln(log, "chord: warning:", w)
	}
	if len(opt.Without) > 0 {
		fmt.Fprintf(log, "chord: the reduced model: %s held at its prior's lower edge (absent)\n", strings.Join(opt.Without, ", "))
	}
	set := opt.Opacity
	if set == nil {
		if set, err = r.Config.LoadOpacity(opt.DemoCache, log); err != nil {
			return nil, config.InFile(opt.ConfigPath, err)
		}
	}
	if set.Demo {
		fmt.Fprintln(log, "chord: "+report.DemoWarning)
	}
	runID := newRunID()
	j, err := newJob(r, set, runID)
	if err != nil {
		return nil, config.InFile(opt.ConfigPath, err)
	}
	j.log = log
	cfgHash, err := fileSHA256(opt.ConfigPath)
	if err != nil {
		return nil, err
	}
	abs, _ := filepath.Abs(opt.ConfigPath)
	j.configFile = abs
	info := RunInfo{Version: version.Version, RunID: runID, Created: time.Now().UTC().Format(time.RFC3339), ConfigFile: abs, Demo: set.Demo,
		Inputs: append([]InputFile{{Role: "configuration", Path: abs, SHA256: cfgHash}}, j.inputs...)}
	info.RunDir, _ = filepath.Abs(opt.RunDir)
	copies, err := copyInputs(r, info.Inputs)
	if err != nil {
		return nil, err
	}
	var buf bytes.Buffer
	if err := copies.writeTOML(r, &buf); err != nil {
		return nil, err
	}
	buf.WriteString("\n# The run: program version, identity and the SHA-256 of every input file.\n")
	if err := toml.NewEncoder(&buf).Encode(struct {
		Run RunInfo `toml:"run"`
	}{info}); err != nil {
		return nil, err
	}
	if err := ctx.Err(); err != nil {
		return nil, fmt.Errorf("%s: interrupted before the run started; nothing was written: %w", opt.RunDir, err)
	}
	if err := prepareRunDir(opt.RunDir); err != nil {
		return nil, err
	}
	if err := copies.write(opt.RunDir); err != nil {
		return nil, err
	}
	if err := atomicfile.Write(filepath.Join(opt.RunDir, RunFile), buf.Bytes(), true); err != nil {
		return nil, err
	}
	if opt.Truth != nil {
		if err := writeTruth(opt.RunDir, r, opt.Truth); err != nil {
			return nil, err
		}
	}
	j.html = opt.HTML
	if r.Method == config.MethodNested {
		fmt.Fprintf(log, "chord: run %s: %d free parameters, nested sampling with %d live points, seed %d, stopping rule: %s\n", opt.RunDir, j.prob.Dim(), r.LivePoints, r.Seed, describeNestedStop(r.EvidenceTol, r.Stop))
	} else {
		fmt.Fprintf(log, "chord: run %s: %d free parameters, %d walkers, seed %d, stopping rule: %s\n", opt.RunDir, j.prob.Dim(), r.Walkers, r.Seed, describeStop(r.Stop))
	}
	out, err := StartRun(ctx, opt.RunDir, j.spec, RunOptions{Workers: r.Workers, Stop: r.Stop, Progress: opt.Progress, CheckpointSteps: opt.CheckpointSteps})
	if err != nil {
		return nil, fmt.Errorf("%s: %w", opt.RunDir, err)
	}
	return j.finish(opt.RunDir, out)
}

func describeStop(s config.StopRule) string {
	switch {
	case s.Steps > 0:
		return fmt.Sprintf("%d steps", s.Steps)
	case s.Budget > 0:
		return "a budget of " + secs(s.Budget).String()
	}
	return "until converged (" + convergenceRule + ")"
}

// finish reports a run session unless it was interrupted.
func (j *job) finish(dir string, out *RunOutcome) (*RunReport, error) {
	rep := &RunReport{Dir: dir, Walkers: j.res.Walkers, Outcome: out}
	if out.Stop == sampler.StopCanceled {
		return rep, nil
	}
	s, txt, err := j.report(dir, 0, true, 1, j.html, out)
	if errors.Is(err, report.ErrFewSamples) && out.Evidence != nil && !out.Evidence.Finished {
		// A nested run stopped early (a budget): no summary yet.
		rep.SummaryText = fmt.Sprintf("no summary yet: %v\n", err)
		return rep, nil
	}
	if err != nil {
		return rep, fmt.Errorf("%s: report: %w", dir, err)
	}
	rep.Summary, rep.SummaryText = s, txt
	return rep, nil
}

// loadRun reads run.toml of dir, resolves it, loads the opacities and
// builds the job; it checks that the inputs are those the run started
// with, naming any that changed.
func loadRun(dir, cache string, set *opacity.Set, log io.Writer) (*job, *RunInfo, error) {
	path := filepath.Join(dir, RunFile)
	rf := &runFile{}
	if _, err := config.DecodeStrict(path, rf); err != nil {
		return nil, nil, err
	}
	rf.Config.BaseDir = dir
	rf.relocate(dir)
	r, err := rf.Config.Resolve()
	if err != nil {
		return nil, nil, config.InFile(path, err)
	}
	log = logto.First(log)
	if set == nil {
		if set, err = r.Config.LoadOpacity(cache, log); err != nil {
			return nil, nil, config.InFile(path, err)
		}
	}
	// After loading: loading the demo tables rebuilds them when their
	// generator changed, which must count as a change too.
	for _, in := range rf.Run.Inputs {
		if in.Role == "configuration" {
			continue // the run uses run.toml, not the original file
		}
		p := in.Path
		if !filepath.IsAbs(p) {
			p = filepath.Join(dir, p) // an input copied into the run directory
		}
		h, err := fileSHA256(p)
		if err != nil {
			return nil, nil, fmt.Errorf("%s: input %s of the run: %w", dir, in.Path, err)
		}
		if h != in.SHA256 {
			return nil, nil, fmt.Errorf("%s: the %s file %s changed since the run started (SHA-256 %s, run.toml records %s): the chain cannot be continued or reported against it; restore the file, or start a new run", dir, in.Role, p, short(h), short(in.SHA256))
		}
	}
	j, err := newJob(r, set, rf.Run.RunID)
	if err != nil {
		return nil, nil, config.InFile(path, err)
	}
	j.configFile = rf.Run.ConfigFile
	return j, &rf.Run, nil
}

// ResumeOptions configures Resume.
type ResumeOptions struct {
	Stop      config.StopRule // the zero rule keeps the run's
	Workers   *int            // overrides the run's workers
	DemoCache string
	Progress  Progress
	Log       io.Writer
	// CheckpointSteps as in FitOptions.
	CheckpointSteps int
	// Opacity, when not nil, are the run's tables already loaded (a plan's
	// fits share one set); nil loads them.
	Opacity *opacity.Set
	HTML    bool // also write report.html
}

// Resume continues the run in dir from its checkpoint and reports it,
// holding the run directory's lock throughout. A run that has met its
// stopping rule is left as it is (RunOutcome.Met; its report is written
// if it is missing); a run stopped before its first checkpoint starts
// again from its seed.
func Resume(ctx context.Context, dir string, opt ResumeOptions) (*RunReport, error) {
	log := logto.First(opt.Log, opt.Progress.Writer)
	if err := isRunDir(dir); err != nil {
		return nil, err
	}
	lock, err := runlock.Acquire(dir, runlock.Holder("chord resume"))
	if err != nil {
		return nil, err
	}
	defer lock.Release()
	j, _, err := loadRun(dir, opt.DemoCache, opt.Opacity, log)
	if err != nil {
		return nil, err
	}
	j.log = log // a run restarted from its seed searches for its start again
	j.html = opt.HTML
	if j.set.Demo {
		fmt.Fprintln(log, "chord: "+report.DemoWarning)
	}
	workers := j.res.Workers
	if opt.Workers != nil {
		if *opt.Workers < 0 {
			return nil, fmt.Errorf("workers %d: must not be negative", *opt.Workers)
		}
		workers = *opt.Workers
	}
	ro := RunOptions{Workers: workers, Stop: opt.Stop, Progress: opt.Progress, CheckpointSteps: opt.CheckpointSteps}
	if _, err := os.Stat(filepath.Join(dir, CheckpointFile)); errors.Is(err, fs.ErrNotExist) {
		return j.restart(ctx, dir, ro, log)
	}
	out, err := ContinueRun(ctx, dir, j.spec, ro)
	if err != nil {
		return nil, err
	}
	if len(out.Removed) > 0 {
		fmt.Fprintf(log, "chord: removed %s (rows written after the checkpoint; sampled again)\n", strings.Join(out.Removed, ", "))
	}
	if out.Recovered {
		fmt.Fprintln(log, "chord: the newest chain part was damaged; resumed from the checkpoint's previous state, one part earlier")
	}
	if out.Met {
		if _, err := os.Stat(filepath.Join(dir, "summary.json")); err == nil {
			return &RunReport{Dir: dir, Walkers: j.res.Walkers, Outcome: out}, nil
		}
		fmt.Fprintf(log, "chord: %s has met its stopping rule but has no report (stopped before it was written): writing it\n", dir)
	}
	return j.finish(dir, out)
}

// restart starts again the run in dir that stopped before its first
// checkpoint (while its initial ensemble was being made): everything is
// drawn from the run's seed, so this is the run it would have been.
func (j *job) restart(ctx context.Context, dir string, opt RunOptions, log io.Writer) (*RunReport, error) {
	store := filepath.Join(dir, chains.DirName)
	if _, err := os.Stat(store); err == nil {
		if _, err := chains.Trim(store, nil); err != nil {
			return nil, err
		}
	}
	if opt.Stop == (config.StopRule{}) {
		opt.Stop = j.res.Stop
	}
	rule := describeStop(opt.Stop)
	if j.spec.Nested != nil {
		rule = describeNestedStop(j.res.EvidenceTol, opt.Stop)
	}
	fmt.Fprintf(log, "chord: %s stopped before its first checkpoint; starting it again from its seed %d (stopping rule: %s)\n", dir, j.res.Seed, rule)
	out, err := StartRun(ctx, dir, j.spec, opt)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", dir, err)
	}
	return j.finish(dir, out)
}

// isRunDir refuses a dir without run.toml.
func isRunDir(dir string) error {
	if _, err := os.Stat(filepath.Join(dir, RunFile)); err != nil {
		return fmt.Errorf("%s is not a run directory: %w", dir, err)
	}
	return nil
}

// ReportRunOptions configures Report.
type ReportRunOptions struct {
	Burn      int
	BurnAuto  bool
	Thin      int
	DemoCache string
	HTML      bool // also write report.html
}

// Report recomputes the summaries and plots of the run in dir; it returns
// the summary and its text. It first verifies what Resume verifies: the
// checkpoint is this run's (run identity, configuration and inputs), and
// every chain part it lists is the very file it recorded (size, SHA-256)
// and this run's (run identity in its metadata); a part that fails is
// named. In a directory this process cannot write, the summary and its
// text are returned with a *report.WriteError.
func Report(dir string, opt ReportRunOptions) (*report.Summary, string, error) {
	if err := isRunDir(dir); err != nil {
		return nil, "", err
	}
	lock, _, err := runLock(dir, "chord report")
	if err != nil {
		return nil, "", err
	}
	defer lock.Release()
	j, _, err := loadRun(dir, opt.DemoCache, nil, nil)
	if err != nil {
		return nil, "", err
	}
	ck, err := ReadCheckpoint(filepath.Join(dir, CheckpointFile))
	if err != nil {
		return nil, "", err
	}
	if err := checkOwner(dir, ck, j.spec); err != nil {
		return nil, "", err
	}
	if err := chains.CheckParts(filepath.Join(dir, chains.DirName), ck.Parts, partMeta(j.spec)); err != nil {
		advice := "restore it from a copy, or start a new run"
		var pe *chains.PartError
		if errors.As(err, &pe) && pe.Index == len(ck.Parts)-1 && ck.Prev != nil && ck.PrevStep == pe.Part.FirstStep-1 {
			advice = "chord resume " + dir + " samples its steps again from the state before it"
		}
		return nil, "", fmt.Errorf("%s: %w; the run is not reported: %s", dir, err, advice)
	}
	return j.report(dir, opt.Burn, opt.BurnAuto, max(opt.Thin, 1), opt.HTML, nil)
}

// RunNoisePPM is the noise level of a run directory's observations (all
// data sets together), read through the observation files run.toml names.
func RunNoisePPM(dir string) (float64, error) {
	path := filepath.Join(dir, RunFile)
	rf := &runFile{}
	if _, err := config.DecodeStrict(path, rf); err != nil {
		return 0, err
	}
	rf.Config.BaseDir = dir
	rf.relocate(dir)
	var sigma []float64
	for i, o := range rf.Config.Observations {
		opt, err := o.ReadOptions(fmt.Sprintf("observations[%d]", i+1))
		if err != nil {
			return 0, config.InFile(path, err)
		}
		ds, err := obs.Read(rf.Config.Abs(o.File), opt)
		if err != nil {
			return 0, fmt.Errorf("%s: %w", path, err)
		}
		for _, d := range ds {
			sigma = append(sigma, d.Sigma...)
		}
	}
	if len(sigma) == 0 {
		return 0, fmt.Errorf("%s: no observations", path)
	}
	return obs.NoisePPM(sigma), nil
}
