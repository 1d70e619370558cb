// Package retrieve fits one retrieval configuration: its posterior
// (Problem: parameter vector to forward-model state, priors and Gaussian
// likelihood), sampled into a resumable run directory (Fit, Resume and
// Report of one run: run.toml, the chain store, the checkpoint and the
// report).
package retrieve
