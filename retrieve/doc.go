// Package retrieve fits one retrieval configuration: its posterior
// (Problem: parameter vector to forward-model state, priors and Gaussian
// likelihood), sampled into a resumable run directory (Fit, Resume and
// Report of one run: run.toml, the chain store, the checkpoint and the
// report).
package retrieve

import "chord/internal/version"

// Version is the program version (internal/version). It stays here for
// cmd/chord/opacity_build.go, which another change is rewriting; use
// chord/internal/version instead.
const Version = version.Version
