// Package priors provides prior distributions for retrieval parameters and
// composition priors for mixing ratios. It imports nothing of chord's.
package priors
