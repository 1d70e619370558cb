package sampler

// Target is a log-density over R^Dim with NumExtra derived values per sample
// (for example the log-likelihood or derived physical quantities). The
// density need not be normalised.
type Target interface {
	Dim() int
	NumExtra() int
	// NewEvaluator returns an evaluator for one worker goroutine; each worker
	// gets its own, so evaluators need not be safe for concurrent use. Two
	// evaluators of one target must return identical values for identical
	// input (the chain must not depend on which worker evaluated a point).
	NewEvaluator() Evaluator
}

// Evaluator computes the log density of its Target.
type Evaluator interface {
	// LogProb returns the log density at x and fills extra (len NumExtra).
	// -Inf, +Inf or NaN means "rejected". Must not retain x or extra.
	LogProb(x, extra []float64) float64
}

// Step is one completed ensemble step, handed to a Recorder; its slices are
// valid only during the call.
type Step struct {
	Index                  int // 1 for the first step after the initial ensemble
	Walkers, Dim, NumExtra int
	Pos                    []float64 // Walkers*Dim, row-major (walker-major)
	LogP                   []float64 // Walkers
	Extra                  []float64 // Walkers*NumExtra
	Accepted               []bool    // Walkers: whether the walker moved in this step
}

// Recorder receives every step of a run, in order. An error from Record ends
// the run.
type Recorder interface {
	Record(s *Step) error
}

// Flusher is implemented by recorders that buffer. Run calls Flush when it
// stops for any reason and before every checkpoint, so that the recorded
// steps are durable up to the checkpointed step.
type Flusher interface {
	Flush() error
}
