// Package priors provides prior distributions for retrieval parameters and
// composition priors for mixing ratios. It imports nothing of chord's.
//
// One-dimensional priors (Uniform, LogUniform, Normal, TruncatedNormal,
// Fixed) implement Prior: a normalised log density, its support, a draw
// from a passed-in *rand.Rand (math/rand/v2; never a global generator) and
// a quantile for initialisation. Constructors validate their arguments and
// return errors naming the parameter.
//
// Composition priors act on several gases at once: FillGas (independent
// priors on log10 mixing ratios, the rest is a fill gas; trace gases
// summing above 1 are invalid) and CLR, the centred-log-ratio prior of
// Benneke & Seager (2012, ApJ 753, 100) for atmospheres whose dominant gas
// is unknown.
package priors
