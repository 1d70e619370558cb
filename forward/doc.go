// Package forward computes transmission spectra of layered planetary
// atmospheres: pressure grid, temperature profile, composition, hydrostatic
// structure with 1/r^2 gravity, slant optical depth, transit depth, clouds
// and hazes, and binning onto an instrument's wavelength bins.
//
// Units inside the package are SI (m, kg, s, K, Pa).
package forward
