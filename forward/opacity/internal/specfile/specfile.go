// Package specfile holds what the readers of spectroscopic text files
// share: the conversions from the files' cgs units to SI and the parsing
// of finite numbers.
package specfile

import (
	"errors"
	"math"
	"strconv"
)

// Unit conversions of spectroscopic files.
const (
	PerCmToPerM = 100   // 1 cm^-1 = 100 m^-1
	Cm2ToM2     = 1e-4  // 1 cm^2 = 1e-4 m^2
	Cm5ToM5     = 1e-10 // 1 cm^5 = 1e-10 m^5
)

// ParseFinite parses a decimal number that must be finite; the error says
// "not a number" or "not a finite number", for the caller to put beside
// the file, line and field.
func ParseFinite(s string) (float64, error) {
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		return 0, errors.New("not a number")
	}
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, errors.New("not a finite number")
	}
	return v, nil
}
