// Package sampler is an affine-invariant ensemble sampler (Goodman & Weare
// 2010, CAMCoS 5, 65) with stretch, walk and differential-evolution moves,
// parallel evaluation over half-ensembles, checkpoints that resume bit for
// bit, and convergence diagnostics. It knows nothing about spectra and
// imports nothing of chord's.
package sampler
