// Package retrieve runs retrievals: configuration, observations, likelihood,
// orchestration of the sampler, the chain store, summaries, plots and
// comparisons between runs.
package retrieve

// Version is the program version, written into every output chord makes.
const Version = "0.1.0-dev"
