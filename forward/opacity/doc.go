// Package opacity holds the opacity sources of the forward model in
// memory: cross-section tables sigma(log10 P, T, wavenumber) per gas,
// collision-induced absorption tables k(T, wavenumber) per pair, Rayleigh
// scattering, a grey absorber, their interpolation, and the provenance
// keys of a table's metadata.
//
// Codecs and builders live in subpackages, as image/png lives beside
// image: lbl (line-by-line cross-sections, partition functions, the Voigt
// profile), hitran and exomol (readers of those databases' files),
// tablefile (table files and directories of them) and demo (the demo
// tables). This package depends on the standard library alone.
//
// Units are SI: wavenumber in m^-1, cross-sections in m^2, CIA coefficients
// in m^5 (absorption coefficient per number density squared). Readers of
// spectroscopic files convert from cm^-1, cm^2 and cm^5 as they read.
package opacity
