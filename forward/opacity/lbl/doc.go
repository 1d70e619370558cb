// Package lbl computes cross-section tables line by line: the Line type of
// line lists, isotopologue data and partition functions, the Voigt profile
// through the Faddeeva function, and BuildXSec, which turns lines into an
// opacity.XSecTable of point values or cell means.
//
// Lines keep the units of the spectroscopic databases (cm^-1,
// cm^-1/(molecule cm^-2), cm^-1/atm; HITRAN definitions); the tables
// BuildXSec makes are SI. Readers of line-list files are in the sibling
// packages hitran and exomol.
package lbl
