package config

import (
	"fmt"
	"math"

	"chord/forward"
)

// The planetary system as a whole: what cannot be is refused, what is
// possible but implausible (a typo, a unit slip) is named in a warning.
//
// Refused (checkSystem, part of Validate):
//   - a planet at least as large as its star at the reference pressure: the
//     transit depth would be 1 or more;
//   - an atmosphere unbound at the reference radius: for the coolest
//     temperature of the profile between the reference pressure and the
//     top of the model, the heaviest mean molecular weight the composition
//     allows and the planet's mass, hydrostatic equilibrium with gravity
//     falling as 1/r^2 gives 1/r <= 0 below the top of the model, that is
//     G M mu m_u / (k_B T R) <= ln(P_ref/P_top) (exact for an isothermal
//     layer; DESIGN section 2). A coolest temperature makes this the
//     most-bound case, so a refused atmosphere is unbound for any profile
//     the keys allow.
//
// In a retrieval, a quantity that a free parameter sets takes its most
// favourable value within its prior (Resolve records the ranges): the
// smallest radius and temperature, the largest mass, and the heaviest gas
// when a mixing ratio is free; a Guillot profile with a free infrared
// opacity or opacity ratio is not checked for binding.
//
// Warned (SystemWarnings), for values given as keys: bounds of known stars
// and planets, with a wide margin (fact of the trade, rounded; from
// memory): stars from 0.08 R_sun (the smallest hydrogen-burning stars;
// white dwarfs are about 0.01 R_sun) to 1000 R_sun (the largest known
// supergiants reach about 1500); planets from 0.1 R_earth to 3 R_jup (the
// largest known are about 2 R_jup) and from 0.01 M_earth to 80 M_jup (the
// hydrogen-burning limit, about 0.075 M_sun: above it, a star); mean
// densities from 0.01 to 50 g/cm^3 (known planets span about 0.03 to 20).
const (
	plausibleStarMinRsun    = 0.08
	plausibleStarMaxRsun    = 1000
	plausiblePlanetMinRe    = 0.1
	plausiblePlanetMaxRj    = 3
	plausiblePlanetMinMe    = 0.01
	plausiblePlanetMaxMj    = 80
	plausibleDensityMinGcm3 = 0.01
	plausibleDensityMaxGcm3 = 50
)

// priorSpan is the range a free parameter's prior gives its quantity
// (central 1 - 2e-9 of the prior, as checkPriorRange).
type priorSpan struct{ lo, hi float64 }

// planetKeys name the keys of the planet's radius and mass as given.
func (c *ModelConfig) planetKeys() (radius, mass string) {
	p := &c.Planet
	switch {
	case p.RadiusRjup != nil:
		radius = "planet.radius_rjup"
	case p.RadiusRearth != nil:
		radius = "planet.radius_rearth"
	default:
		radius = "planet.radius_m"
	}
	switch {
	case p.MassMjup != nil:
		mass = "planet.mass_mjup"
	case p.MassMearth != nil:
		mass = "planet.mass_mearth"
	default:
		mass = "planet.mass_kg"
	}
	return
}

// span returns the most favourable range of a quantity: the prior's when
// a free parameter sets it (in SI units, from the quantities' units), else
// the given value; free says which.
func (c *ModelConfig) span(value float64, qs ...Quantity) (lo, hi float64, free bool) {
	for _, q := range qs {
		if s, ok := c.free[q]; ok {
			f := map[Quantity]float64{QRadiusRjup: forward.JupiterRadius, QRadiusRearth: forward.EarthRadius,
				QMassMjup: forward.JupiterMass, QMassMearth: forward.EarthMass}[q]
			if f == 0 {
				f = 1
			}
			return s.lo * f, s.hi * f, true
		}
	}
	return value, value, false
}

// checkSystem refuses an impossible system (see above). It runs after the
// other checks of Validate, so every value it reads is valid.
func (c *ModelConfig) checkSystem() error {
	rs, _ := c.starRadius()
	rp, _ := c.planetRadius()
	mp, _ := c.planetMass()
	rKey, mKey := c.planetKeys()
	rLo, _, rFree := c.span(rp, QRadiusRjup, QRadiusRearth)
	_, mHi, _ := c.span(mp, QMassMjup, QMassMearth)
	if rLo >= rs {
		what := fmt.Sprintf("%s (%.4g km)", rKey, rp/1e3)
		if rFree {
			what = fmt.Sprintf("the lower end of its radius prior (%.4g km)", rLo/1e3)
		}
		return keyErr(starRadiusKey(c), "the star (%.4g km) is no larger than the planet, %s: the transit depth would be 1 or more; check the units of both", rs/1e3, what)
	}
	tMin, ok, err := c.coolestTemperature(rLo, mHi)
	if err != nil || !ok {
		return err
	}
	d := c.withDefaults()
	ref, top := *d.Planet.ReferencePressureBar, *d.Atmosphere.TopPressureBar
	mu := c.heaviestMeanWeight()
	binding := forward.Gravitation * mHi * mu * forward.AtomicMass / (forward.Boltzmann * tMin * rLo)
	if binding <= math.Log(ref/top) {
		return keyErr(mKey, "the atmosphere is unbound: at the reference radius (%.4g km) the planet's mass (%.4g kg) holds gas of mean molecular weight %.4g u at %.4g K only over %.3g e-foldings of pressure, and the model reaches from %g bar up to %g bar (%.3g e-foldings); the planet is too light, too large or too hot; check %s, %s and the temperature",
			rLo/1e3, mHi, mu, tMin, binding, ref, top, math.Log(ref/top), mKey, rKey)
	}
	return nil
}

func starRadiusKey(c *ModelConfig) string {
	if c.Star.RadiusRsun != nil {
		return "star.radius_rsun"
	}
	return "star.radius_m"
}

// coolestTemperature is the lowest temperature the profile gives between
// the reference pressure and the top of the model (with free
// temperatures at the low ends of their priors), for a planet of radius r
// and mass m; ok is false when it cannot be bounded (a Guillot profile
// with a free infrared opacity or opacity ratio).
func (c *ModelConfig) coolestTemperature(r, m float64) (float64, bool, error) {
	t := c.Atmosphere.Temperature.withDefaults()
	if _, free := c.free[QLog10ThermalOpacity]; free {
		return 0, false, nil
	}
	if _, free := c.free[QLog10OpacityRatio]; free {
		return 0, false, nil
	}
	if t.TemperatureK != nil {
		lo, _, _ := c.span(*t.TemperatureK, QTemperature)
		t.TemperatureK = &lo
	}
	if t.TIrrK != nil {
		lo, _, _ := c.span(*t.TIrrK, QTIrr)
		t.TIrrK = &lo
	}
	if t.TIntK != nil {
		lo, _, _ := c.span(*t.TIntK, QTInt)
		t.TIntK = &lo
	}
	prof, err := t.profile()
	if err != nil {
		return 0, false, err
	}
	d := c.withDefaults()
	ref, top := *d.Planet.ReferencePressureBar*forward.Bar, *d.Atmosphere.TopPressureBar*forward.Bar
	const n = 64
	p, temp := make([]float64, n), make([]float64, n)
	for i := range p {
		p[i] = top * math.Pow(ref/top, float64(i)/(n-1))
	}
	if err := prof.TemperatureTo(temp, p, forward.Gravitation*m/(r*r)); err != nil {
		return 0, false, nil // the forward model rejects such a profile itself
	}
	tMin := math.Inf(1)
	for _, v := range temp {
		tMin = math.Min(tMin, v)
	}
	return tMin, true, nil
}

// heaviestMeanWeight is the mean molecular weight (u) of the composition,
// or, when a mixing ratio is free, the molecular mass of its heaviest gas
// (no mixture is heavier).
func (c *ModelConfig) heaviestMeanWeight() float64 {
	a := c.withDefaults().Atmosphere
	fill := 0.0
	species := c.fillSpecies()
	if len(species) == 2 { // H2+He
		mh2, _ := forward.MolecularMass("H2")
		mhe, _ := forward.MolecularMass("He")
		fill = (mh2 + *a.BalanceHeH2Ratio*mhe) / (1 + *a.BalanceHeH2Ratio)
	} else {
		fill, _ = forward.MolecularMass(species[0])
	}
	_, freeVMR := c.free[QLog10VMR]
	_, freeCLR := c.free[QCLR]
	mu, rest, heaviest := 0.0, 1.0, fill
	for _, g := range c.gasNames() {
		m, _ := forward.MolecularMass(g)
		heaviest = math.Max(heaviest, m)
		mu += a.Gases[g] * m
		rest -= a.Gases[g]
	}
	if freeVMR || freeCLR {
		return heaviest
	}
	return mu + math.Max(rest, 0)*fill
}

// SystemWarnings lists the implausible values of the star and planet
// given as keys (not set by free parameters), each naming its key; see
// the bounds above. Call it on a validated configuration.
func (c *ModelConfig) SystemWarnings() []string {
	var w []string
	rs, err1 := c.starRadius()
	rp, err2 := c.planetRadius()
	mp, err3 := c.planetMass()
	if err1 != nil || err2 != nil || err3 != nil {
		return nil
	}
	rKey, mKey := c.planetKeys()
	sKey := starRadiusKey(c)
	_, _, rFree := c.span(rp, QRadiusRjup, QRadiusRearth)
	_, _, mFree := c.span(mp, QMassMjup, QMassMearth)
	add := func(key, format string, a ...any) {
		w = append(w, key+": "+fmt.Sprintf(format, a...))
	}
	switch r := rs / forward.SolarRadius; {
	case r < plausibleStarMinRsun:
		add(sKey, "a star of %.3g R_sun is smaller than any hydrogen-burning star (about %g R_sun); a white dwarf? check the unit", r, plausibleStarMinRsun)
	case r > plausibleStarMaxRsun:
		add(sKey, "a star of %.3g R_sun is larger than any known star (about 1500 R_sun at most); check the unit", r)
	}
	if !rFree {
		switch {
		case rp < plausiblePlanetMinRe*forward.EarthRadius:
			add(rKey, "a planet of %.3g R_earth is smaller than any known transiting planet; check the unit", rp/forward.EarthRadius)
		case rp > plausiblePlanetMaxRj*forward.JupiterRadius:
			add(rKey, "a planet of %.3g R_jup is larger than any known planet (about 2 R_jup); check the unit", rp/forward.JupiterRadius)
		}
	}
	if !mFree {
		switch {
		case mp < plausiblePlanetMinMe*forward.EarthMass:
			add(mKey, "a planet of %.3g M_earth is lighter than the Moon (0.012 M_earth); check the unit", mp/forward.EarthMass)
		case mp > plausiblePlanetMaxMj*forward.JupiterMass:
			add(mKey, "a body of %.3g M_jup is above the hydrogen-burning limit (about %g M_jup): a star, not a planet; check the unit", mp/forward.JupiterMass, float64(plausiblePlanetMaxMj))
		}
	}
	if !rFree && !mFree {
		rho := mp / (4 * math.Pi / 3 * rp * rp * rp) / 1e3 // g/cm^3
		if rho < plausibleDensityMinGcm3 || rho > plausibleDensityMaxGcm3 {
			add(mKey, "with %s the planet's mean density is %.3g g/cm^3, outside the %g to %g g/cm^3 of any known planet; check both", rKey, rho, plausibleDensityMinGcm3, float64(plausibleDensityMaxGcm3))
		}
	}
	return w
}
