package config

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"testing"

	"chord/forward"
)

// The unbound-atmosphere refusal sits at the mass where hydrostatic
// equilibrium with gravity falling as 1/r^2 reaches 1/r = 0 at the top of
// the model: for an isothermal atmosphere
// 1/r_top = 1/R - k_B T ln(P_ref/P_top) / (mu m_u G M) exactly (DESIGN
// section 2), so M* = k_B T R ln(P_ref/P_top) / (G mu m_u), with mu the
// mean molecular weight of the mixture (sum of mixing ratio times
// molecular mass, fact of the trade). 1% below M* is refused naming the
// mass key, and the forward model itself finds such a state unbound; 1%
// above it is accepted and computes.
func TestUnboundThreshold(t *testing.T) {
	const T, heh2, xh2o = 900.0, 0.17, 0.01
	R := 4.1 * forward.EarthRadius
	// IUPAC standard atomic weights (CIAAW 2021), from memory: H 1.008,
	// He 4.002602, O 15.999.
	mH2, mHe, mH2O := 2*1.008, 4.002602, 2*1.008+15.999
	mu := xh2o*mH2O + (1-xh2o)*(mH2+heh2*mHe)/(1+heh2)
	mStar := forward.Boltzmann * T * R * math.Log(10/1e-7) / (forward.Gravitation * mu * forward.AtomicMass)
	for _, f := range []float64{0.99, 1.01} {
		text := strings.Replace(greyConfig, "mass_mearth = 18", fmt.Sprintf("mass_mearth = %.10g", f*mStar/forward.EarthMass), 1)
		c, err := LoadModel(writeConfig(t, text))
		if f < 1 {
			var ke *KeyError
			if !errors.As(err, &ke) || ke.Key != "planet.mass_mearth" || !strings.Contains(err.Error(), "unbound") {
				t.Errorf("mass %.2f M*: error %v, want an unbound refusal naming planet.mass_mearth", f, err)
			}
			// The forward model agrees: the same system at a mass it
			// accepts, then lowered to f M*, is unbound.
			c, err := LoadModel(writeConfig(t, greyConfig))
			if err != nil {
				t.Fatal(err)
			}
			set, _ := c.LoadOpacity("", nil)
			m, s, err := c.Build(set)
			if err != nil {
				t.Fatal(err)
			}
			s.Mass = f * mStar
			d := make([]float64, m.OutputLen())
			if err := m.Transit(d, &s, m.NewWorkspace()); !errors.Is(err, forward.ErrUnbound) {
				t.Errorf("forward model at %.2f M*: %v, want ErrUnbound", f, err)
			}
			continue
		}
		if err != nil {
			t.Fatalf("mass %.2f M*: %v", f, err)
		}
		set, _ := c.LoadOpacity("", nil)
		m, s, err := c.Build(set)
		if err != nil {
			t.Fatal(err)
		}
		d := make([]float64, m.OutputLen())
		if err := m.Transit(d, &s, m.NewWorkspace()); err != nil {
			t.Errorf("forward model at %.2f M*: %v", f, err)
		}
	}
}

// Absurd systems of issue 12: a star smaller than the planet is refused
// naming the star's radius; a star of 1e6 R_sun and a planet of 1e9 Earth
// masses are accepted with a warning naming the key (a unit slip, not an
// impossibility). The bounds are those documented in system.go.
func TestAbsurdSystems(t *testing.T) {
	c, err := LoadModel(writeConfig(t, strings.Replace(greyConfig, "radius_rsun = 0.7", "radius_rsun = 0.01", 1)))
	var ke *KeyError
	if !errors.As(err, &ke) || ke.Key != "star.radius_rsun" || !strings.Contains(err.Error(), "no larger than the planet") {
		t.Errorf("star smaller than the planet: %v", err)
	}
	for _, tc := range []struct{ old, new, key, want string }{
		{"radius_rsun = 0.7", "radius_rsun = 1e6", "star.radius_rsun", "larger than any known star"},
		{"radius_rsun = 0.7", "radius_rsun = 0.05", "star.radius_rsun", "smaller than any hydrogen-burning star"},
		{"mass_mearth = 18", "mass_mearth = 1e9", "planet.mass_mearth", "above the hydrogen-burning limit"},
		{"radius_rearth = 4.1\nmass_mearth = 18", "radius_rearth = 40\nmass_mearth = 1000", "planet.radius_rearth", "larger than any known planet"},
		{"mass_mearth = 18", "mass_mearth = 3000", "planet.mass_mearth", "mean density"},
	} {
		if c, err = LoadModel(writeConfig(t, strings.Replace(greyConfig, tc.old, tc.new, 1))); err != nil {
			t.Errorf("%s: %v", tc.new, err)
			continue
		}
		w := strings.Join(c.SystemWarnings(), "\n")
		if !strings.Contains(w, tc.key+": ") || !strings.Contains(w, tc.want) {
			t.Errorf("%s: warnings %q, want one naming %s (%q)", tc.new, w, tc.key, tc.want)
		}
	}
	if c, err = LoadModel(writeConfig(t, greyConfig)); err != nil || len(c.SystemWarnings()) > 0 {
		t.Errorf("a plausible hot Neptune: %v, warnings %q", err, c.SystemWarnings())
	}
}
