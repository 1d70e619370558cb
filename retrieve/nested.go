package retrieve

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"chord/chains"
	"chord/config"
	"chord/internal/atomicfile"
	"chord/internal/version"
	"chord/report"
	"chord/sampler"
)

// Nested-sampling runs (sampler.method = "nested"; docs/evidence.md).
//
// They live in the same run directory as ensemble runs, with the same
// promises: the dead points stream to the chain store (a store of dead
// points, chains.Layout.Nested), a checkpoint holding the
// sampler.NestedState is written after every committed part, a resumed run
// continues the very same sequence of dead points whatever the number of
// workers, and a run killed at any instant resumes from its last
// checkpoint, the points written after it removed and drawn again. The
// stopping rule is the evidence tolerance (until_converged) or a budget,
// whichever comes first; a run stopped by its budget or a signal is
// resumable, one that met its tolerance is finished.

// NestedSpec is the nested-sampling part of a RunSpec: the Target is then
// the log-likelihood (its first extra value the log posterior, which the
// chain store keeps in its log_posterior column), the prior enters through
// Prior's quantile functions, and Init is unused.
type NestedSpec struct {
	Prior       []sampler.Quantiler
	Live, Batch int
	EvidenceTol float64
}

func checkNestedStop(s config.StopRule) error {
	if s.Steps > 0 {
		return fmt.Errorf("stopping rule: a nested-sampling run ends at its evidence tolerance (until converged) or a budget; a step count does not apply")
	}
	return checkStop(s)
}

// startNested samples a new nested run into dir (StartRun).
func startNested(ctx context.Context, dir string, spec *RunSpec, opt RunOptions) (*RunOutcome, error) {
	if err := checkNestedStop(opt.Stop); err != nil {
		return nil, err
	}
	if err := checkSpec(spec); err != nil {
		return nil, err
	}
	ns := spec.Nested
	t0 := time.Now()
	st, err := sampler.InitNested(ctx, spec.Target, ns.Prior, sampler.NestedInit{Live: ns.Live, Seed: spec.Seed, Workers: opt.Workers})
	if err != nil {
		if ctx.Err() != nil && errors.Is(err, ctx.Err()) {
			return &RunOutcome{Stop: sampler.StopCanceled, BeforeStart: true}, nil
		}
		return nil, fmt.Errorf("initial live points: %w", err)
	}
	perEval := time.Since(t0) / time.Duration(ns.Live)
	w, err := chains.Create(filepath.Join(dir, chains.DirName), spec.Layout)
	if err != nil {
		return nil, err
	}
	r := &nestedRunner{dir: dir, spec: spec, opt: opt, w: w, stop: opt.Stop, st: st}
	if opt.CheckpointSteps == 0 {
		// An iteration costs a few evaluations (one over the rejection
		// efficiency); aim a little early.
		r.opt.CheckpointSteps = autoCheckpointSteps(5 * perEval)
	}
	if err := r.checkpoint(st); err != nil {
		return nil, err
	}
	return r.sample(ctx, &RunOutcome{})
}

// continueNested resumes the nested run in dir from its checkpoint
// (ContinueRun).
func continueNested(ctx context.Context, dir string, spec *RunSpec, opt RunOptions) (*RunOutcome, error) {
	ck, parts, stateBytes, recovered, err := openCheckpoint(dir, spec, "the dead points of these iterations")
	if err != nil {
		return nil, err
	}
	out := &RunOutcome{Recovered: recovered}
	store := filepath.Join(dir, chains.DirName)
	st := new(sampler.NestedState)
	if err := st.UnmarshalBinary(stateBytes); err != nil {
		return nil, fmt.Errorf("%s: sampler state in the checkpoint: %w", dir, err)
	}
	last := chains.LastStep(parts)
	if st.Iter != last {
		return nil, fmt.Errorf("%s: the checkpoint's state has %d dead points but its parts end at point %d", dir, st.Iter, last)
	}
	stop := opt.Stop
	if stop == (config.StopRule{}) {
		stop = ck.Stop
	}
	if err := checkNestedStop(stop); err != nil {
		return nil, err
	}
	// A finished run, or one whose budget is spent, has met its rule:
	// nothing to sample, nothing to change.
	if st.Finished || stop.Budget > 0 && secs(ck.Elapsed) >= secs(stop.Budget) {
		out.Stop, out.Met, out.Step = sampler.StopBudget, true, st.Iter
		if st.Finished {
			out.Stop = sampler.StopEvidence
		}
		out.TotalElapsed, out.Evaluations, out.Evidence = secs(ck.Elapsed), int64(st.Evals), nestedEvidence(st, spec)
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
	r := &nestedRunner{dir: dir, spec: spec, opt: opt, w: w, stop: stop, st: st, base: secs(ck.Elapsed)}
	r.last = &Checkpoint{CheckpointHeader: ck.CheckpointHeader, State: stateBytes}
	r.last.Step, r.last.Parts, r.last.Stopped = st.Iter, parts, ""
	if out.Recovered {
		r.last.Prev = nil
	} else {
		r.last.Prev = ck.Prev
	}
	switch {
	case opt.CheckpointSteps > 0:
	case ck.CheckpointSteps > 0:
		r.opt.CheckpointSteps = ck.CheckpointSteps // the run's own interval
	default:
		per := CheckpointInterval / 100
		if ck.Step > 0 && ck.Elapsed > 0 {
			per = secs(ck.Elapsed / float64(ck.Step))
		}
		r.opt.CheckpointSteps = autoCheckpointSteps(per)
	}
	if err := ctx.Err(); err != nil {
		out.Stop, out.Step, out.Evidence = sampler.StopCanceled, st.Iter, nestedEvidence(st, spec)
		return out, nil
	}
	return r.sample(ctx, out)
}

// checkNestedOwner is checkOwner's test of the sampler's shape for a
// nested run.
func checkNestedOwner(dir string, ck *Checkpoint, spec *RunSpec) error {
	if ck.Method != config.MethodNested || ck.LivePoints != spec.Nested.Live || ck.Dim != spec.Layout.Dim {
		return fmt.Errorf("%s: the checkpoint holds a run of method %s with %d parameters (%d live points), the configuration gives nested sampling of %d parameters with %d live points", dir,
			methodName(ck.Method), ck.Dim, ck.LivePoints, spec.Layout.Dim, spec.Nested.Live)
	}
	return nil
}

func methodName(m string) string {
	if m == "" {
		return config.MethodEnsemble
	}
	return m
}

// nestedRunner is one session of a nested run: the sampler's dead-point
// recorder (chain store) and checkpoint writer.
type nestedRunner struct {
	dir   string
	spec  *RunSpec
	opt   RunOptions
	stop  config.StopRule
	w     *chains.Writer
	st    *sampler.NestedState // the run's state, which RunNested advances in place
	last  *Checkpoint
	base  time.Duration // sampling time of earlier sessions
	begin time.Time
	prog  *nestedProgress
}

// RecordDead implements sampler.DeadRecorder: the point goes to the chain
// store, its first extra value (the log posterior) to log_posterior.
func (r *nestedRunner) RecordDead(p *sampler.DeadPoint) error {
	if err := r.w.WriteDead(p.Index, p.Final, p.LogWt, p.Extra[0], p.X, p.Extra); err != nil {
		return err
	}
	if r.prog != nil {
		r.prog.point(p, r.st)
	}
	return nil
}

// Flush implements sampler.Flusher: it commits the open part, with the
// evidence as it stands in its metadata.
func (r *nestedRunner) Flush() error {
	z, zerr, h := r.st.Evidence()
	for k, v := range map[string]string{
		"chord.log_evidence":       ftoa(z),
		"chord.log_evidence_error": ftoa(zerr),
		"chord.information":        ftoa(h),
		"chord.evaluations":        strconv.Itoa(r.st.Evals),
		"chord.finished":           strconv.FormatBool(r.st.Finished),
		"chord.nested_method":      r.st.Method,
	} {
		r.w.SetPartMeta(k, v)
	}
	return r.w.Flush()
}

var (
	_ sampler.DeadRecorder = (*nestedRunner)(nil)
	_ sampler.Flusher      = (*nestedRunner)(nil)
)

func ftoa(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

// checkpoint is the sampler's checkpoint callback (after Flush).
func (r *nestedRunner) checkpoint(st *sampler.NestedState) error { return r.checkpointStopped(st, "") }

// checkpointStopped writes a checkpoint of st unless the last one is of
// the same point and stopping reason (stopped: see CheckpointHeader).
func (r *nestedRunner) checkpointStopped(st *sampler.NestedState, stopped string) error {
	if r.last != nil && st.Iter == r.last.Step && stopped == r.last.Stopped {
		return nil
	}
	parts := r.w.Committed()
	last := chains.LastStep(parts)
	if last != st.Iter {
		return fmt.Errorf("checkpoint at dead point %d but the committed chain parts end at point %d", st.Iter, last)
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
			Dim: st.Dim, Step: st.Iter, Parts: append([]chains.PartInfo(nil), parts...),
			Elapsed: elapsed.Seconds(), Evaluations: int64(st.Evals), Stop: r.stop, Stopped: stopped,
			CheckpointSteps: r.opt.CheckpointSteps, Method: config.MethodNested, LivePoints: st.Live,
		},
		State: data,
	}
	switch {
	case r.last != nil && r.last.Step == st.Iter:
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

// sample runs the nested sampler to the stopping rule.
func (r *nestedRunner) sample(ctx context.Context, out *RunOutcome) (*RunOutcome, error) {
	st := r.st
	ns := r.spec.Nested
	out.Step, out.TotalElapsed, out.Evaluations = st.Iter, r.base, int64(st.Evals)
	set := sampler.NestedSettings{
		Workers: r.opt.Workers, Batch: ns.Batch, EvidenceTol: ns.EvidenceTol,
		CheckpointEvery: r.opt.CheckpointSteps, Checkpoint: r.checkpoint,
	}
	if r.stop.Budget > 0 {
		set.MaxDuration = max(secs(r.stop.Budget)-r.base, time.Nanosecond)
	}
	if r.opt.Progress.Writer != nil {
		r.prog = newNestedProgress(r.opt.Progress, st, ns.EvidenceTol)
	}
	r.begin = time.Now()
	first, evals := st.Iter, st.Evals
	st, res, err := sampler.RunNested(ctx, r.spec.Target, ns.Prior, st, set, r)
	r.st = st
	r.prog.finish(st)
	out.Steps = st.Iter - first
	out.SessionEvaluations = int64(st.Evals - evals)
	out.Elapsed = res.Elapsed
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
	out.Step = st.Iter
	out.TotalElapsed = secs(r.last.Elapsed)
	out.Evaluations = int64(st.Evals)
	out.Evidence = r.evidence()
	return out, nil
}

// evidence is the run's evidence as the state holds it.
func (r *nestedRunner) evidence() *report.Evidence {
	return nestedEvidence(r.st, r.spec)
}

func nestedEvidence(st *sampler.NestedState, spec *RunSpec) *report.Evidence {
	z, zerr, h := st.Evidence()
	return &report.Evidence{
		LogZ: z, LogZErr: zerr, Information: h, LivePoints: st.Live, DeadPoints: st.Iter, Evaluations: int64(st.Evals),
		Finished: st.Finished, Tolerance: spec.Nested.EvidenceTol, Method: st.Method, Seed: spec.Seed,
	}
}

// nestedProgress reports a nested session's progress: dead points, ln Z so
// far, how much the live points could still add (the run ends when that
// falls below the tolerance), the best log-likelihood and the rate.
type nestedProgress struct {
	w        io.Writer
	terminal bool
	every    time.Duration
	tol      float64

	begin, lastOut time.Time
	first, cur     int
	evals0         int
	bestLL         float64
	drawn          bool
}

func newNestedProgress(opt Progress, st *sampler.NestedState, tol float64) *nestedProgress {
	every := opt.LogInterval
	if every == 0 {
		every = 30 * time.Second
	}
	if opt.Terminal {
		every = 500 * time.Millisecond
	}
	p := &nestedProgress{w: opt.Writer, terminal: opt.Terminal, every: every, tol: tol,
		begin: time.Now(), first: st.Iter, cur: st.Iter, evals0: st.Evals, bestLL: math.Inf(-1)}
	p.lastOut = p.begin
	for _, l := range st.LogL {
		p.bestLL = math.Max(p.bestLL, l)
	}
	return p
}

func (p *nestedProgress) point(d *sampler.DeadPoint, st *sampler.NestedState) {
	p.cur = d.Index
	now := time.Now()
	if now.Sub(p.lastOut) < p.every {
		return
	}
	p.lastOut = now
	p.print(st, false)
}

func (p *nestedProgress) print(st *sampler.NestedState, final bool) {
	for _, l := range st.LogL {
		p.bestLL = math.Max(p.bestLL, l)
	}
	z, zerr, _ := st.Evidence()
	el := time.Since(p.begin).Seconds()
	var b strings.Builder
	fmt.Fprintf(&b, "dead point %d, ln Z = %.2f ± %.2f", p.cur, z, zerr)
	if !st.Finished && st.LogZ > math.Inf(-1) {
		// What the live points could still add: ln(Z + L_max X) - ln Z.
		add := math.Log1p(math.Exp(-float64(st.Iter)/float64(st.Live) + p.bestLL - st.LogZ))
		fmt.Fprintf(&b, ", live points could add %.3g (stops below %g)", add, p.tol)
	}
	if !math.IsInf(p.bestLL, -1) {
		fmt.Fprintf(&b, ", best log-likelihood %.2f", p.bestLL)
	}
	if el > 0 {
		fmt.Fprintf(&b, ", %.0f evaluations/s", float64(st.Evals-p.evals0)/el)
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

func (p *nestedProgress) finish(st *sampler.NestedState) {
	if p == nil {
		return
	}
	if p.cur > p.first || p.drawn {
		p.print(st, true)
	}
}

// likelihood is a Problem as nested sampling needs it: LogProb is the
// log-likelihood (the prior enters through the quantile functions), and
// the extra values are the log posterior followed by the Problem's own
// (ExtraNames). A state the forward model rejects has likelihood zero.
type likelihood struct{ p *Problem }

func (l likelihood) Dim() int      { return l.p.Dim() }
func (l likelihood) NumExtra() int { return 1 + l.p.NumExtra() }
func (l likelihood) NewEvaluator() sampler.Evaluator {
	return likelihoodEval{l.p.NewPosteriorEvaluator()}
}

type likelihoodEval struct{ e *PosteriorEvaluator }

func (e likelihoodEval) LogProb(x, extra []float64) float64 {
	lp := e.e.LogProb(x, extra[1:])
	extra[0] = lp
	if math.IsInf(lp, 0) || math.IsNaN(lp) {
		return math.Inf(-1)
	}
	return extra[1]
}

// quantilers are the free parameters' priors as nested sampling draws
// them. The configuration refuses joint (centred-log-ratio) priors with
// nested sampling.
func quantilers(p *Problem) []sampler.Quantiler {
	ps := p.Priors()
	q := make([]sampler.Quantiler, len(ps))
	for i, pr := range ps {
		q[i] = pr
	}
	return q
}

// nestedJob turns the ensemble layout l of a job into the store of dead
// points and returns the nested spec of the run.
func nestedJob(r *config.Resolved, prob *Problem, l chains.Layout) (chains.Layout, *NestedSpec, error) {
	if r.CLR != nil {
		return l, nil, errors.New("nested sampling needs independent priors; the centred-log-ratio prior is a joint one")
	}
	l.Nested, l.Walkers, l.NumExtra = true, 1, prob.NumExtra()+1
	for i := range l.Columns {
		if l.Columns[i].Role == chains.RoleDerived {
			l.Columns[i].Source++ // after the log posterior
		}
	}
	l.Meta["chord.sampler"] = config.MethodNested
	l.Meta["chord.live_points"] = strconv.Itoa(r.LivePoints)
	l.Meta["chord.batch"] = strconv.Itoa(r.Batch)
	l.Meta["chord.evidence_tolerance"] = ftoa(r.EvidenceTol)
	return l, &NestedSpec{Prior: quantilers(prob), Live: r.LivePoints, Batch: r.Batch, EvidenceTol: r.EvidenceTol}, nil
}

// dataDigest identifies the observations a run fits: the SHA-256 of their
// files' digests in configuration order.
func dataDigest(inputs []InputFile) string {
	h := sha256.New()
	for _, in := range inputs {
		if in.Role == "observations" {
			fmt.Fprintln(h, in.SHA256)
		}
	}
	return hex.EncodeToString(h.Sum(nil))
}

// nestedReport reads the evidence of the nested run from its checkpoint
// ck and, when the run has not finished, its live points.
func (j *job) nestedReport(ck *Checkpoint) (*report.Evidence, *chains.Points, error) {
	st := new(sampler.NestedState)
	if err := st.UnmarshalBinary(ck.State); err != nil {
		return nil, nil, fmt.Errorf("sampler state in the checkpoint: %w", err)
	}
	e := nestedEvidence(st, j.spec)
	e.Data = dataDigest(j.inputs)
	return e, livePoints(st, j.spec.Layout.ValueColumns()), nil
}

// livePoints returns the live points of st as weighted points with the
// value columns cols of its store (log_weight, log_posterior, then the
// layout's), each with the prior mass X/Live a final point gets, or nil
// when the run has finished (its final points are stored).
func livePoints(st *sampler.NestedState, cols []chains.Column) *chains.Points {
	if st.Finished {
		return nil
	}
	d, ne := st.Dim, st.NumExtra
	lnw := -float64(st.Iter)/float64(st.Live) - math.Log(float64(st.Live))
	p := &chains.Points{Columns: cols}
	for k := range st.Live {
		row := make([]float64, len(cols))
		row[0], row[1] = lnw+st.LogL[k], st.Extra[k*ne]
		for i, c := range cols[2:] {
			if c.Role == chains.RoleParameter {
				row[2+i] = st.X[k*d+c.Source]
			} else {
				row[2+i] = st.Extra[k*ne+c.Source]
			}
		}
		p.Rows = append(p.Rows, row)
	}
	return p
}

// nestedPosterior reads the equal-weight samples of the nested run in dir
// (ReadPosterior): its dead points and, when it has not finished, its live
// points from the checkpoint ck.
func nestedPosterior(store string, ck *Checkpoint, seed uint64) (*chains.Chain, error) {
	st := new(sampler.NestedState)
	if err := st.UnmarshalBinary(ck.State); err != nil {
		return nil, fmt.Errorf("sampler state in the checkpoint: %w", err)
	}
	var live *chains.Points
	if !st.Finished {
		if len(ck.Parts) == 0 {
			return nil, fmt.Errorf("%s: the run has no dead points yet (chord report makes its summary from the live points alone)", store)
		}
		r, err := chains.NewReader(store, ck.Parts)
		if err != nil {
			return nil, err
		}
		live = livePoints(st, r.Columns())
		r.Close()
	}
	return report.EqualWeightSamples(store, ck.Parts, live, seed)
}

// describeNestedStop describes the stopping rule of a nested run with
// evidence tolerance tol.
func describeNestedStop(tol float64, stop config.StopRule) string {
	s := fmt.Sprintf("until the live points could add less than %g to ln Z", tol)
	if stop.Budget > 0 {
		s += ", or a budget of " + secs(stop.Budget).String()
	}
	return s
}

// DecodeConfig reads and decodes the retrieval configuration at path,
// unresolved, with the gases of without held absent (config.Config.Without,
// the reduced model of fit --without): what Fit resolves.
func DecodeConfig(path string, without []string) (*config.Config, error) {
	text, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("configuration: %w", err)
	}
	c, err := config.Decode(string(text), path, filepath.Dir(path))
	if err != nil {
		return nil, err
	}
	if len(without) > 0 {
		if err := c.Without(without); err != nil {
			return nil, config.InFile(path, err)
		}
	}
	return c, nil
}

// loadConfig loads the retrieval configuration at path, made the reduced
// model without the gases named (config.Config.Without) when there are any.
func loadConfig(path string, without []string) (*config.Resolved, error) {
	if len(without) == 0 {
		return config.Load(path)
	}
	c, err := DecodeConfig(path, without)
	if err != nil {
		return nil, err
	}
	r, err := c.Resolve()
	if err != nil {
		return nil, config.InFile(path, err)
	}
	return r, nil
}
