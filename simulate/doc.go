// Package simulate makes synthetic observations of a scenario: its true
// spectrum on the instrument's bins, error bars from a noise model and,
// optionally, Gaussian noise from a seed.
package simulate
