// Package opacity provides the opacity sources of the forward model:
// cross-section tables sigma(log10 P, T, wavenumber) per gas, collision-induced
// absorption tables k(T, wavenumber) per pair, Rayleigh scattering, a grey
// absorber, line-by-line cross-sections from line lists, and table files.
//
// Units are SI: wavenumber in m^-1, cross-sections in m^2, CIA coefficients
// in m^5 (absorption coefficient per number density squared). Readers of
// spectroscopic files convert from cm^-1, cm^2 and cm^5 as they read.
package opacity
