// Package sampler is an affine-invariant ensemble sampler (Goodman & Weare
// 2010, CAMCoS 5, 65) with stretch, walk and differential-evolution moves,
// parallel evaluation over half-ensembles, checkpoints that resume bit for
// bit, and convergence diagnostics; and a nested sampler (Skilling 2006,
// Bayesian Analysis 1, 833) for the evidence, with the same promises. It
// knows nothing about spectra and imports nothing of chord's.
//
// # Running a chain
//
// A Target gives the dimension, the number of extra (derived) values per
// sample, and one Evaluator per worker goroutine. InitBall, InitPrior or
// InitPositions make the initial State (checking that every walker has a
// finite log density and that the ensemble spans the parameter space); Run
// advances it under Settings, hands every Step to a Recorder, and returns
// the final State and a Result saying which stopping rule ended the run.
//
// # Reproducibility
//
// Every random number is drawn from the State's PCG generator
// (math/rand/v2) on the goroutine that called Run, in a fixed order; the
// worker goroutines only evaluate log densities. The chain is therefore the
// same for any Settings.Workers, and State.MarshalBinary captures everything
// needed to continue it bit for bit.
//
// # Convergence
//
// The convergence rule estimates the integrated autocorrelation time from a
// History, a bounded thinned copy of the positions (memory does not grow
// with the chain). A caller that resumes in a new process replays its stored
// chain into a fresh History; the previous estimate of tau travels in the
// State, so the resumed run takes the same decisions as an uninterrupted
// one.
//
// # Nested sampling
//
// InitNested draws the live points from the prior, given as one Quantiler
// (inverse CDF) per parameter; the Target's LogProb is then the
// log-likelihood. RunNested replaces the worst live point, iteration by
// iteration, by a draw above its likelihood from bounding ellipsoids fitted
// to the live points (split when they cluster), or by slice sampling when
// rejection is inefficient, hands every dead point with its log weight to
// a DeadRecorder, and stops when the live points can no longer change ln Z
// by more than the tolerance. NestedState.Evidence gives ln Z, its error
// sqrt(H/N) and the information H; EqualWeight resamples the dead points
// into equally weighted posterior samples. Batches of likelihood
// evaluations run on the workers, every random number is drawn on the
// calling goroutine, and NestedState.MarshalBinary captures the run, so it
// too is independent of the worker count and resumes bit for bit.
//
// # Diagnostics
//
// Autocorr / IntegratedTime (FFT, Sokal's automatic window), SplitRhat and
// BulkESS (Vehtari et al. 2021, Bayesian Analysis 16, 667), and
// State.Acceptance with stuck-walker flags.
package sampler
