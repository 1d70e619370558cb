package obs

import (
	"fmt"
	"strings"

	"chord/forward"
)

// Units of observation columns, as files and configurations state them.
//
// Wavelengths (centres, widths, edges): um (also micron, microns, µm), nm,
// angstrom (also Angstrom, AA, Å). Transit depths and their errors:
// fraction (also an empty or "dimensionless" unit), ppm, percent (also %),
// and rp_rs for a depth column that holds the planet-to-star radius ratio
// Rp/Rs (the depth is its square). Unit strings are compared without
// regard to case, except that a unit is taken as written when it is one of
// these exactly.

// wavelengthUnit returns the factor of a wavelength unit to m, and the
// unit's canonical name.
func wavelengthUnit(u string) (float64, string, error) {
	switch strings.ToLower(strings.TrimSpace(u)) {
	case "um", "micron", "microns", "µm", "μm", "micrometer", "micrometre":
		return forward.Micron, "um", nil
	case "nm", "nanometer", "nanometre":
		return 1e-9, "nm", nil
	case "angstrom", "aa", "å", "angstroms":
		return 1e-10, "angstrom", nil
	}
	return 0, "", fmt.Errorf("unknown wavelength unit %q (um, nm or angstrom)", u)
}

// depthUnitRpRs is the canonical name of the radius-ratio depth unit.
const depthUnitRpRs = "rp_rs"

// depthUnit returns the factor of a transit-depth unit to a fraction (0
// for rp_rs, whose values are squared instead) and the unit's canonical
// name.
func depthUnit(u string) (float64, string, error) {
	switch strings.ToLower(strings.TrimSpace(u)) {
	case "", "fraction", "dimensionless":
		return 1, "fraction", nil
	case "ppm":
		return 1e-6, "ppm", nil
	case "percent", "%", "pct":
		return 1e-2, "percent", nil
	case depthUnitRpRs, "rp/rs", "radius_ratio":
		return 0, depthUnitRpRs, nil
	}
	return 0, "", fmt.Errorf("unknown depth unit %q (fraction, ppm, percent or rp_rs)", u)
}

// unitSource is a unit as stated by one source: the column's name
// (depth_ppm), the file (an IPAC units line, an ECSV header) or a key of
// the configuration (depth_unit).
type unitSource struct {
	unit  string
	where string // e.g. "the column name", "the file's units line (line 5)", "depth_unit"
}

// agreeingUnit returns the unit the sources state, checking that those
// stating one agree (canonical names compared by canon); ok is false when
// none states a unit.
func agreeingUnit(srcs []unitSource, canon func(string) (string, error)) (unit string, ok bool, err error) {
	var first unitSource
	var firstCanon string
	for _, s := range srcs {
		if s.where == "" {
			continue
		}
		c, err := canon(s.unit)
		if err != nil {
			return "", false, fmt.Errorf("%s: %w", s.where, err)
		}
		if first.where == "" {
			first, firstCanon = s, c
			continue
		}
		if c != firstCanon {
			return "", false, fmt.Errorf("%s gives the unit %q but %s gives %q", first.where, first.unit, s.where, s.unit)
		}
	}
	return firstCanon, first.where != "", nil
}

func canonWavelength(u string) (string, error) { _, c, err := wavelengthUnit(u); return c, err }
func canonDepth(u string) (string, error)      { _, c, err := depthUnit(u); return c, err }
