// Package obs reads and writes the tables of observed spectra (transit
// depth with errors per wavelength bin) and of instrument bins and noise;
// every error names the file and line.
package obs
