// Package lbl computes opacity tables line by line: the Line type of line
// lists with its per-line broadening, isotopologue data and partition
// functions, the Voigt profile through the Faddeeva function, BuildXSec,
// which turns lines into an opacity.XSecTable of point values, and
// BuildK/BuildKFrom, which stream lines of any number into an
// opacity.KTable (correlated-k).
//
// Lines keep the units of the spectroscopic databases (cm^-1,
// cm^-1/(molecule cm^-2), cm^-1/atm; HITRAN definitions); the tables
// BuildXSec makes are SI. Readers of line-list files are in the sibling
// packages hitran and exomol.
package lbl
