package config

import (
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"sort"
	"strings"

	"github.com/BurntSushi/toml"

	"chord/forward"
	"chord/forward/opacity"
	"chord/forward/opacity/demo"
	"chord/forward/opacity/tablefile"
)

// ModelConfig is the model part of a configuration file: the sections
// [star], [planet], [atmosphere], [clouds], [opacity] and [spectrum], shared
// by `chord spectrum` and by retrieval configurations (which embed it, so
// there is one schema). Pointer fields are optional unless Validate says
// otherwise; nil means the default stated beside each field.
type ModelConfig struct {
	Star       StarConfig       `toml:"star"`
	Planet     PlanetConfig     `toml:"planet"`
	Atmosphere AtmosphereConfig `toml:"atmosphere"`
	Clouds     CloudsConfig     `toml:"clouds"`
	Opacity    OpacityConfig    `toml:"opacity"`
	Spectrum   SpectrumConfig   `toml:"spectrum"`

	// BaseDir is the directory relative paths are resolved against (the
	// configuration file's directory); set by the decoder, not a key.
	BaseDir string `toml:"-"`
	// Renamed are the warnings of the old key spellings the file used
	// (Renames); set by the decoder, not a key.
	Renamed []string `toml:"-"`
	// free holds the prior ranges of the quantities free parameters set
	// (Resolve), for the system checks (system.go).
	free map[Quantity]priorSpan
}

// StarConfig is [star]. Exactly one radius key is required.
type StarConfig struct {
	Name       string   `toml:"name"`        // label for outputs
	RadiusRsun *float64 `toml:"radius_rsun"` // stellar radius, nominal solar radii (IAU 2015 B3)
	RadiusM    *float64 `toml:"radius_m"`    // stellar radius, m
}

// PlanetConfig is [planet]. Exactly one radius key and one mass key are
// required.
type PlanetConfig struct {
	Name         string   `toml:"name"`          // label for outputs
	RadiusRjup   *float64 `toml:"radius_rjup"`   // radius at the reference pressure, nominal Jupiter equatorial radii
	RadiusRearth *float64 `toml:"radius_rearth"` // the same in nominal Earth equatorial radii
	RadiusM      *float64 `toml:"radius_m"`      // the same in m
	MassMjup     *float64 `toml:"mass_mjup"`     // mass, Jupiter masses (nominal GM / G)
	MassMearth   *float64 `toml:"mass_mearth"`   // mass, Earth masses
	MassKg       *float64 `toml:"mass_kg"`       // mass, kg
	// ReferencePressureBar is where the radius applies; default 10 bar.
	ReferencePressureBar *float64 `toml:"reference_pressure_bar"`
}

// AtmosphereConfig is [atmosphere].
type AtmosphereConfig struct {
	TopPressureBar    *float64 `toml:"top_pressure_bar"`    // default 1e-7
	BottomPressureBar *float64 `toml:"bottom_pressure_bar"` // default 100
	Layers            *int     `toml:"layers"`              // default 100
	// BalanceGas is the gas making up what the trace gases leave (the
	// balance): "H2+He" (default) or one gas.
	BalanceGas string `toml:"balance_gas"`
	// BalanceHeH2Ratio is the He/H2 number ratio of an H2+He balance;
	// default forward.DefaultHeH2.
	BalanceHeH2Ratio *float64 `toml:"balance_he_h2_ratio"`
	// Gases maps trace-gas names to volume mixing ratios (fractions).
	Gases       map[string]float64 `toml:"gases"`
	Temperature TemperatureConfig  `toml:"temperature"`
}

// TemperatureConfig is [atmosphere.temperature].
type TemperatureConfig struct {
	// Profile is "isothermal" (default), "guillot" or "table".
	Profile string `toml:"profile"`
	// isothermal
	TemperatureK *float64 `toml:"temperature_k"` // required for isothermal
	// guillot (Guillot 2010, A&A 520, A27, eq. 29)
	TIntK              *float64 `toml:"t_int_k"`               // internal temperature, K; default 100
	TIrrK              *float64 `toml:"t_irr_k"`               // irradiation temperature, K; required
	ThermalOpacityM2Kg *float64 `toml:"thermal_opacity_m2_kg"` // Guillot's kappa_th, thermal (infrared) mean opacity, m^2/kg; default DefaultThermalOpacityM2Kg
	OpacityRatio       *float64 `toml:"opacity_ratio"`         // Guillot's gamma = kappa_v / kappa_th, visible-to-thermal opacity ratio; default DefaultOpacityRatio
	Redistribution     *float64 `toml:"redistribution"`        // f: 1 substellar, 0.5 dayside, 0.25 (default) planet average
	// table
	PressuresBar  []float64 `toml:"pressures_bar"`  // table pressures, bar
	TemperaturesK []float64 `toml:"temperatures_k"` // table temperatures, K
}

// CloudsConfig is [clouds]; an absent section means a clear atmosphere.
type CloudsConfig struct {
	CloudTopBar   *float64 `toml:"cloud_top_bar"`  // grey deck top pressure, bar; absent means no deck
	CloudFraction *float64 `toml:"cloud_fraction"` // patchy-cloud fraction in [0, 1]; default 1
	// Haze: sigma_haze = A sigma_H2(lambda_0) (lambda/lambda_0)^index per
	// molecule, the strength A times the H2 Rayleigh cross-section at the
	// pivot wavelength lambda_0 with a free index (MacDonald & Madhusudhan
	// 2017, MNRAS 469, 1979), the enhanced-Rayleigh form of Lecavelier des
	// Etangs et al. (2008, A&A 481, L83) when the index is -4.
	HazeStrength *float64 `toml:"haze_strength"` // A; default 0 (no haze)
	HazeIndex    *float64 `toml:"haze_index"`    // power-law index; default forward.DefaultHazeSlope (-4, Rayleigh)
	HazePivotUm  *float64 `toml:"haze_pivot_um"` // lambda_0, um; default forward.DefaultHazeReference (0.35 um)
}

// OpacityConfig is [opacity].
type OpacityConfig struct {
	Dir  string `toml:"dir"`  // directory of table files (relative to the configuration file)
	Demo bool   `toml:"demo"` // the built-in demo tables (not for science)
	// CIA lists pairs such as "H2-H2"; absent means every pair in the
	// tables whose gases are in the atmosphere.
	CIA *[]string `toml:"cia"`
	// Rayleigh lists scattering gases; absent means every gas of the
	// atmosphere with a Rayleigh formula.
	Rayleigh *[]string `toml:"rayleigh"`
	// TableKind chooses the kind of gas tables the model uses when a set
	// holds both: "k" (k-distribution tables, per bin) or "xsec" (point
	// cross-sections on a model grid, for line-by-line comparisons); ""
	// (the default) means "k" when the set has k-tables, else "xsec".
	TableKind string `toml:"table_kind"`
	// Overlap is how the gases' k-distributions combine within a bin:
	// "product" (default) or "resort-rebin" (k-tables only).
	Overlap string `toml:"overlap"`
	// Grey absorber on every molecule, sigma (P/P_ref)^n; 0 (default) none.
	GreyCrossSectionM2       float64  `toml:"grey_cross_section_m2"`
	GreyPressureExponent     float64  `toml:"grey_pressure_exponent"`      // n; default 0
	GreyReferencePressureBar *float64 `toml:"grey_reference_pressure_bar"` // P_ref; default 1
}

// SpectrumConfig is [spectrum]: the model grid and optional bins.
type SpectrumConfig struct {
	WavelengthMinUm *float64 `toml:"wavelength_min_um"` // required
	WavelengthMaxUm *float64 `toml:"wavelength_max_um"` // required
	ResolvingPower  *float64 `toml:"resolving_power"`   // model grid lambda/dlambda; default 1000
	// Bins, at most one way: edges; centres and widths; or constant R.
	BinEdgesUm        []float64 `toml:"bin_edges_um"`
	BinCentresUm      []float64 `toml:"bin_centres_um"`
	BinWidthsUm       []float64 `toml:"bin_widths_um"`
	BinResolvingPower *float64  `toml:"bin_resolving_power"`
	MinBinPoints      *int      `toml:"min_bin_points"` // default 2
}

// maxModelPoints bounds the model grid: every opacity table is resampled
// onto it as float64, about 1.2 kB per point per gas on a 13 x 12 grid.
const maxModelPoints = 200000

// DecodeStrict decodes the TOML file at path into v and rejects keys v does
// not have, naming each (e.g. "planet.mas_mjup"). Retrieval configurations
// use it with a struct that embeds ModelConfig.
func DecodeStrict(path string, v any) (toml.MetaData, error) {
	text, err := os.ReadFile(path)
	if err != nil {
		return toml.MetaData{}, fmt.Errorf("%s: %w", path, err)
	}
	return decodeStrict(string(text), path, v)
}

// decodeStrict is DecodeStrict on TOML text; name (a file name) starts
// every error, with the line of a syntax error.
//
// Old spellings of renamed keys (Renames) are rewritten to the new ones;
// the warnings naming them are kept in v when it is (or embeds) a
// ModelConfig (ModelConfig.Renamed).
func decodeStrict(text, name string, v any) (toml.MetaData, error) {
	text, renamed, err := renamedText(text)
	if err == nil {
		if rn, ok := v.(Renamer); ok {
			rn.SetRenamed(renamed)
		}
		var md toml.MetaData
		md, err = toml.Decode(text, v)
		if err == nil {
			return md, undecoded(md, name, reflect.TypeOf(v))
		}
	}
	var pe toml.ParseError
	var ke *KeyError
	switch {
	case errors.As(err, &pe):
		return toml.MetaData{}, &KeyError{File: name, Line: pe.Position.Line, Msg: pe.Message}
	case errors.As(err, &ke):
		ke.File = name
		return toml.MetaData{}, ke
	}
	return toml.MetaData{}, &KeyError{File: name, Err: err}
}

// undecoded is the error naming the keys of md that the decoded value does
// not have, or nil.
func undecoded(md toml.MetaData, name string, t reflect.Type) error {
	if und := md.Undecoded(); len(und) > 0 {
		// The keys inside an unknown table are not listed again.
		var keys []string
		for _, k := range und {
			if freeForm(t, k) {
				continue // inside a map of any values: decoded as given
			}
			if n := len(keys); n == 0 || !strings.HasPrefix(k.String(), keys[n-1]+".") {
				keys = append(keys, k.String())
			}
		}
		msg := "unknown key"
		if len(keys) > 1 {
			msg += " (also unknown: " + strings.Join(keys[1:], ", ") + ")"
		}
		if len(keys) > 0 {
			return &KeyError{File: name, Key: keys[0], Msg: msg}
		}
	}
	return nil
}

// freeForm reports whether the key lies inside a map of any values of the
// type t (a grid's [set], where "sampler.steps = 600" decodes as nested
// tables the TOML decoder counts as undecoded).
func freeForm(t reflect.Type, key toml.Key) bool {
	for _, k := range key {
		for t.Kind() == reflect.Pointer || t.Kind() == reflect.Slice {
			t = t.Elem()
		}
		switch t.Kind() {
		case reflect.Map:
			return t.Elem().Kind() == reflect.Interface
		case reflect.Struct:
			f, ok := tomlField(t, k)
			if !ok {
				return false
			}
			t = f
		default:
			return false
		}
	}
	return false
}

// tomlField is the type of the field of struct type t with TOML key k,
// embedded structs included.
func tomlField(t reflect.Type, k string) (reflect.Type, bool) {
	for i := range t.NumField() {
		f := t.Field(i)
		name, _, _ := strings.Cut(f.Tag.Get("toml"), ",")
		if f.Anonymous && name == "" && f.Type.Kind() == reflect.Struct {
			if ft, ok := tomlField(f.Type, k); ok {
				return ft, true
			}
			continue
		}
		if name == k || (name == "" && strings.EqualFold(f.Name, k)) {
			return f.Type, true
		}
	}
	return nil, false
}

// LoadModel reads and validates a model configuration file.
func LoadModel(path string) (*ModelConfig, error) {
	c := &ModelConfig{}
	if _, err := DecodeStrict(path, c); err != nil {
		return nil, err
	}
	c.BaseDir = filepath.Dir(path)
	if err := c.Validate(); err != nil {
		return nil, InFile(path, err)
	}
	return c, nil
}

func positive(key string, v *float64) error {
	if v != nil && (!(*v > 0) || math.IsInf(*v, 0)) {
		return keyErr(key, "must be positive and finite, got %g", *v)
	}
	return nil
}

// oneOf returns the value of the one key given among keys (converted by
// the factors), or an error naming them.
func oneOf(section string, keys []string, vals []*float64, factors []float64, required bool) (float64, bool, error) {
	var out float64
	found := ""
	for i, v := range vals {
		if v == nil {
			continue
		}
		k := section + "." + keys[i]
		if found != "" {
			return 0, false, keyErr(k, "%s is given too; use one", found)
		}
		if err := positive(k, v); err != nil {
			return 0, false, err
		}
		found, out = k, *v*factors[i]
	}
	if found == "" && required {
		names := make([]string, len(keys))
		for i, k := range keys {
			names[i] = section + "." + k
		}
		return 0, false, missingKey(names[0], "one of "+strings.Join(names, ", ")+" is required")
	}
	return out, found != "", nil
}

func (c *ModelConfig) starRadius() (float64, error) {
	v, _, err := oneOf("star", []string{"radius_rsun", "radius_m"},
		[]*float64{c.Star.RadiusRsun, c.Star.RadiusM}, []float64{forward.SolarRadius, 1}, true)
	return v, err
}

func (c *ModelConfig) planetRadius() (float64, error) {
	v, _, err := oneOf("planet", []string{"radius_rjup", "radius_rearth", "radius_m"},
		[]*float64{c.Planet.RadiusRjup, c.Planet.RadiusRearth, c.Planet.RadiusM},
		[]float64{forward.JupiterRadius, forward.EarthRadius, 1}, true)
	return v, err
}

func (c *ModelConfig) planetMass() (float64, error) {
	v, _, err := oneOf("planet", []string{"mass_mjup", "mass_mearth", "mass_kg"},
		[]*float64{c.Planet.MassMjup, c.Planet.MassMearth, c.Planet.MassKg},
		[]float64{forward.JupiterMass, forward.EarthMass, 1}, true)
	return v, err
}

// Defaults of the model sections, the values ModelConfig documents for
// absent keys besides those of package forward (grid, reference pressure,
// He/H2 ratio, haze power law). withDefaults writes them all out; the
// resolved configuration (run.toml), the forward model's configuration and
// its state are all made from its result, so nothing restates them.
const (
	DefaultResolvingPower = 1000 // model grid lambda/dlambda
	DefaultMinBinPoints   = 2    // model points per observed bin
	DefaultTIntK          = 100  // Guillot internal temperature, K
	// DefaultThermalOpacityM2Kg is Guillot's thermal opacity kappa_th in
	// SI units: 1e-3 m^2/kg = 0.01 cm^2/g, and DefaultOpacityRatio his
	// gamma = kappa_v/kappa_th = 0.4, the values of Guillot (2010, A&A 520,
	// A27) for HD 209458b (kappa_th = 1e-2 cm^2/g, kappa_v = 4e-3 cm^2/g;
	// from memory). Before this release the default was 0.01 m^2/kg
	// (0.1 cm^2/g), the paper's number taken in the wrong unit.
	DefaultThermalOpacityM2Kg       = 1e-3
	DefaultOpacityRatio             = 0.4
	DefaultRedistribution           = 0.25 // Guillot f: planet average
	DefaultCloudFraction            = 1    // a deck covers the whole limb
	DefaultGreyReferencePressureBar = 1    // P_ref of the grey absorber, bar
)

// withDefaults returns a copy of m with the defaults of the model sections
// written out (the values ModelConfig documents for absent keys).
func (m ModelConfig) withDefaults() ModelConfig {
	a := &m.Atmosphere
	m.Planet.ReferencePressureBar = orDefault(m.Planet.ReferencePressureBar, forward.DefaultRefPressure/forward.Bar)
	a.TopPressureBar = orDefault(a.TopPressureBar, forward.DefaultTopPressure/forward.Bar)
	a.BottomPressureBar = orDefault(a.BottomPressureBar, forward.DefaultBottomPressure/forward.Bar)
	a.Layers = orDefault(a.Layers, forward.DefaultLayers)
	if a.BalanceGas == "" {
		a.BalanceGas = forward.FillH2He
	}
	if a.BalanceGas == forward.FillH2He {
		a.BalanceHeH2Ratio = orDefault(a.BalanceHeH2Ratio, forward.DefaultHeH2)
	}
	a.Temperature = a.Temperature.withDefaults()
	cl := &m.Clouds
	if cl.CloudTopBar != nil {
		cl.CloudFraction = orDefault(cl.CloudFraction, DefaultCloudFraction)
	}
	cl.HazeStrength = orDefault(cl.HazeStrength, 0)
	cl.HazeIndex = orDefault(cl.HazeIndex, forward.DefaultHazeSlope)
	cl.HazePivotUm = orDefault(cl.HazePivotUm, forward.DefaultHazeReference/forward.Micron)
	m.Opacity.GreyReferencePressureBar = orDefault(m.Opacity.GreyReferencePressureBar, DefaultGreyReferencePressureBar)
	s := &m.Spectrum
	s.ResolvingPower = orDefault(s.ResolvingPower, DefaultResolvingPower)
	s.MinBinPoints = orDefault(s.MinBinPoints, DefaultMinBinPoints)
	return m
}

// withDefaults returns a copy of t with its profile's defaults written out.
func (t TemperatureConfig) withDefaults() TemperatureConfig {
	if t.Profile == "" {
		t.Profile = "isothermal"
	}
	if t.Profile == "guillot" {
		t.TIntK = orDefault(t.TIntK, DefaultTIntK)
		t.ThermalOpacityM2Kg = orDefault(t.ThermalOpacityM2Kg, DefaultThermalOpacityM2Kg)
		t.OpacityRatio = orDefault(t.OpacityRatio, DefaultOpacityRatio)
		t.Redistribution = orDefault(t.Redistribution, DefaultRedistribution)
	}
	return t
}

// orDefault returns a pointer to a copy of *v, or to d when v is nil.
func orDefault[T any](v *T, d T) *T {
	if v != nil {
		c := *v
		return &c
	}
	return &d
}

// Validate checks every key that can be checked without the opacity
// tables: required keys present, values in range, one way of giving each
// quantity. Errors name the key.
func (c *ModelConfig) Validate() error {
	for _, check := range []func() error{c.checkBodies, c.checkPositive, c.checkAtmosphere, c.checkClouds, c.checkOpacity, c.checkSpectrum, c.checkSystem} {
		if err := check(); err != nil {
			return err
		}
	}
	return nil
}

// checkBodies checks the star's radius and the planet's radius and mass.
func (c *ModelConfig) checkBodies() error {
	if _, err := c.starRadius(); err != nil {
		return err
	}
	if _, err := c.planetRadius(); err != nil {
		return err
	}
	if _, err := c.planetMass(); err != nil {
		return err
	}
	return nil
}

// checkPositive checks the keys that must be positive when given.
func (c *ModelConfig) checkPositive() error {
	a := &c.Atmosphere
	for _, kv := range []struct {
		key string
		v   *float64
	}{
		{"planet.reference_pressure_bar", c.Planet.ReferencePressureBar},
		{"atmosphere.top_pressure_bar", a.TopPressureBar},
		{"atmosphere.bottom_pressure_bar", a.BottomPressureBar},
		{"clouds.cloud_top_bar", c.Clouds.CloudTopBar},
		{"clouds.haze_pivot_um", c.Clouds.HazePivotUm},
		{"opacity.grey_reference_pressure_bar", c.Opacity.GreyReferencePressureBar},
		{"spectrum.wavelength_min_um", c.Spectrum.WavelengthMinUm},
		{"spectrum.wavelength_max_um", c.Spectrum.WavelengthMaxUm},
		{"spectrum.resolving_power", c.Spectrum.ResolvingPower},
		{"spectrum.bin_resolving_power", c.Spectrum.BinResolvingPower},
	} {
		if err := positive(kv.key, kv.v); err != nil {
			return err
		}
	}
	return nil
}

// checkAtmosphere checks [atmosphere]: the pressure grid, the reference
// pressure, the balance gas, the trace gases and the temperature profile.
func (c *ModelConfig) checkAtmosphere() error {
	a := &c.Atmosphere
	d := c.withDefaults()
	top, bot := *d.Atmosphere.TopPressureBar, *d.Atmosphere.BottomPressureBar
	if !(bot > top) {
		return keyErr("atmosphere.bottom_pressure_bar", "%g bar must be above atmosphere.top_pressure_bar (%g bar)", bot, top)
	}
	if a.Layers != nil && (*a.Layers < 1 || *a.Layers > 2000) {
		return keyErr("atmosphere.layers", "must be between 1 and 2000, got %d", *a.Layers)
	}
	ref := *d.Planet.ReferencePressureBar
	if ref < top || ref > bot {
		return keyErr("planet.reference_pressure_bar", "%g bar lies outside the atmosphere (%g to %g bar)", ref, top, bot)
	}
	fill := a.BalanceGas
	if fill == "" {
		fill = forward.FillH2He
	}
	if fill != forward.FillH2He {
		if _, err := forward.MolecularMass(fill); err != nil {
			return keyErr("atmosphere.balance_gas", "%q is neither %q nor a known gas (known: %s)", fill, forward.FillH2He, strings.Join(forward.KnownGases(), ", "))
		}
	} else if a.BalanceHeH2Ratio != nil && (!(*a.BalanceHeH2Ratio >= 0) || math.IsInf(*a.BalanceHeH2Ratio, 0)) {
		return keyErr("atmosphere.balance_he_h2_ratio", "must be finite and non-negative, got %g", *a.BalanceHeH2Ratio)
	}
	if fill != forward.FillH2He && a.BalanceHeH2Ratio != nil {
		return keyErr("atmosphere.balance_he_h2_ratio", "applies only to the balance gas %q, not %q", forward.FillH2He, fill)
	}
	sum := 0.0
	for _, g := range c.gasNames() {
		v := a.Gases[g]
		key := "atmosphere.gases." + g
		if _, err := forward.MolecularMass(g); err != nil {
			return keyErr(key, "unknown gas (known: %s)", strings.Join(forward.KnownGases(), ", "))
		}
		if !(v >= 0 && v <= 1) {
			return keyErr(key, "volume mixing ratio must be in [0, 1], got %g", v)
		}
		if g == fill || (fill == forward.FillH2He && (g == "H2" || g == "He")) {
			return keyErr(key, "is part of the balance gas %q, which makes up the rest", fill)
		}
		sum += v
	}
	if sum > 1 {
		return keyErr("atmosphere.gases", "volume mixing ratios sum to %g, more than 1", sum)
	}
	if _, err := c.Atmosphere.Temperature.profile(); err != nil {
		return err
	}
	return nil
}

// checkClouds checks [clouds] against the atmosphere's bottom.
func (c *ModelConfig) checkClouds() error {
	bot := *c.withDefaults().Atmosphere.BottomPressureBar
	cl := &c.Clouds
	if cl.CloudTopBar != nil && *cl.CloudTopBar > bot {
		return keyErr("clouds.cloud_top_bar", "%g bar lies below the bottom of the atmosphere (%g bar)", *cl.CloudTopBar, bot)
	}
	if cl.CloudFraction != nil && !(*cl.CloudFraction >= 0 && *cl.CloudFraction <= 1) {
		return keyErr("clouds.cloud_fraction", "must be in [0, 1], got %g", *cl.CloudFraction)
	}
	if cl.CloudFraction != nil && cl.CloudTopBar == nil {
		return keyErr("clouds.cloud_fraction", "needs clouds.cloud_top_bar")
	}
	if cl.HazeStrength != nil && (!(*cl.HazeStrength >= 0) || math.IsInf(*cl.HazeStrength, 0)) {
		return keyErr("clouds.haze_strength", "must be finite and non-negative, got %g", *cl.HazeStrength)
	}
	if cl.HazeIndex != nil && (math.IsNaN(*cl.HazeIndex) || math.IsInf(*cl.HazeIndex, 0)) {
		return keyErr("clouds.haze_index", "must be finite, got %g", *cl.HazeIndex)
	}
	return nil
}

// checkOpacity checks [opacity] against the atmosphere's composition.
func (c *ModelConfig) checkOpacity() error {
	o := &c.Opacity
	if o.Dir != "" && o.Demo {
		return keyErr("opacity.dir", "and opacity.demo both given; use one source of tables")
	}
	switch o.TableKind {
	case "", TableKindK, TableKindXSec:
	default:
		return keyErr("opacity.table_kind", "%q: want %q (k-distribution tables) or %q (point cross-sections)", o.TableKind, TableKindK, TableKindXSec)
	}
	if o.Overlap != "" && !slices.Contains(forward.Overlaps, forward.Overlap(o.Overlap)) {
		return keyErr("opacity.overlap", "%q: want one of %v", o.Overlap, forward.Overlaps)
	}
	if !(o.GreyCrossSectionM2 >= 0) || math.IsInf(o.GreyCrossSectionM2, 0) {
		return keyErr("opacity.grey_cross_section_m2", "must be finite and non-negative, got %g", o.GreyCrossSectionM2)
	}
	if math.IsNaN(o.GreyPressureExponent) || math.IsInf(o.GreyPressureExponent, 0) {
		return keyErr("opacity.grey_pressure_exponent", "must be finite, got %g", o.GreyPressureExponent)
	}
	if o.Rayleigh != nil {
		for _, g := range *o.Rayleigh {
			if _, err := opacity.NewRayleigh(g); err != nil {
				return keyWrap("opacity.rayleigh", err)
			}
			if !c.inComposition(g) {
				return keyErr("opacity.rayleigh", "gas %q is not in the atmosphere", g)
			}
		}
	}
	if o.CIA != nil {
		for _, p := range *o.CIA {
			a, b, ok := strings.Cut(p, "-")
			if !ok || a == "" || b == "" {
				return keyErr("opacity.cia", "pair %q: write it as two gases joined by '-', e.g. \"H2-He\"", p)
			}
			if !c.inComposition(a) || !c.inComposition(b) {
				return keyErr("opacity.cia", "pair %q needs gases that are in the atmosphere", p)
			}
		}
	}
	return nil
}

// checkSpectrum checks [spectrum]: the model grid and the bins.
func (c *ModelConfig) checkSpectrum() error {
	d := c.withDefaults()
	s := &c.Spectrum
	if s.WavelengthMinUm == nil {
		return missingKey("spectrum.wavelength_min_um", "")
	}
	if s.WavelengthMaxUm == nil {
		return missingKey("spectrum.wavelength_max_um", "")
	}
	if !(*s.WavelengthMaxUm > *s.WavelengthMinUm) {
		return keyErr("spectrum.wavelength_max_um", "%g um must be above spectrum.wavelength_min_um (%g um)", *s.WavelengthMaxUm, *s.WavelengthMinUm)
	}
	if pts := *d.Spectrum.ResolvingPower * math.Log(*s.WavelengthMaxUm / *s.WavelengthMinUm); pts > maxModelPoints {
		return keyErr("spectrum.resolving_power", "%g over %g-%g um needs %.0f model points, more than the %d supported (each opacity table is held on the model grid)",
			*d.Spectrum.ResolvingPower, *s.WavelengthMinUm, *s.WavelengthMaxUm, pts, maxModelPoints)
	}
	if s.MinBinPoints != nil && *s.MinBinPoints < 1 {
		return keyErr("spectrum.min_bin_points", "must be at least 1, got %d", *s.MinBinPoints)
	}
	ways := 0
	if s.BinEdgesUm != nil {
		ways++
	}
	if s.BinCentresUm != nil || s.BinWidthsUm != nil {
		ways++
		if len(s.BinCentresUm) != len(s.BinWidthsUm) {
			return keyErr("spectrum.bin_widths_um", "%d widths for %d centres (spectrum.bin_centres_um)", len(s.BinWidthsUm), len(s.BinCentresUm))
		}
	}
	if s.BinResolvingPower != nil {
		ways++
	}
	if ways > 1 {
		return keyErr("spectrum", "give bins one way: bin_edges_um, or bin_centres_um with bin_widths_um, or bin_resolving_power")
	}
	if _, err := c.Bins(); err != nil {
		return err
	}
	return nil
}

// gasNames returns the trace gases in sorted order (the order of
// State.VMR and Model.Gases).
func (c *ModelConfig) gasNames() []string {
	names := make([]string, 0, len(c.Atmosphere.Gases))
	for g := range c.Atmosphere.Gases {
		names = append(names, g)
	}
	sort.Strings(names)
	return names
}

func (c *ModelConfig) fillSpecies() []string {
	switch c.Atmosphere.BalanceGas {
	case "", forward.FillH2He:
		return []string{"H2", "He"}
	}
	return []string{c.Atmosphere.BalanceGas}
}

func (c *ModelConfig) inComposition(g string) bool {
	if _, ok := c.Atmosphere.Gases[g]; ok {
		return true
	}
	for _, f := range c.fillSpecies() {
		if f == g {
			return true
		}
	}
	return false
}

func (t0 *TemperatureConfig) profile() (forward.Profile, error) {
	t := t0.withDefaults()
	has := map[string]bool{
		"temperature_k":         t.TemperatureK != nil,
		"t_int_k":               t.TIntK != nil,
		"t_irr_k":               t.TIrrK != nil,
		"thermal_opacity_m2_kg": t.ThermalOpacityM2Kg != nil,
		"opacity_ratio":         t.OpacityRatio != nil,
		"redistribution":        t.Redistribution != nil,
		"pressures_bar":         t.PressuresBar != nil,
		"temperatures_k":        t.TemperaturesK != nil,
	}
	kind := t.Profile
	var allowed []string
	switch kind {
	case "isothermal":
		allowed = []string{"temperature_k"}
	case "guillot":
		allowed = []string{"t_int_k", "t_irr_k", "thermal_opacity_m2_kg", "opacity_ratio", "redistribution"}
	case "table":
		allowed = []string{"pressures_bar", "temperatures_k"}
	default:
		return nil, keyErr("atmosphere.temperature.profile", "unknown profile %q (isothermal, guillot, table)", t.Profile)
	}
	keys := make([]string, 0, len(has))
	for k := range has {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		if has[k] && !contains(allowed, k) {
			return nil, keyErr("atmosphere.temperature."+k, "does not apply to profile %q", kind)
		}
	}
	const sec = "atmosphere.temperature."
	switch kind {
	case "isothermal":
		if t.TemperatureK == nil {
			return nil, missingKey(sec+"temperature_k", "")
		}
		if err := positive(sec+"temperature_k", t.TemperatureK); err != nil {
			return nil, err
		}
		return &forward.Isothermal{T: *t.TemperatureK}, nil
	case "guillot":
		if t.TIrrK == nil {
			return nil, missingKey(sec+"t_irr_k", "")
		}
		for _, kv := range []struct {
			k string
			v *float64
		}{{"t_irr_k", t.TIrrK}, {"thermal_opacity_m2_kg", t.ThermalOpacityM2Kg}, {"opacity_ratio", t.OpacityRatio}, {"redistribution", t.Redistribution}} {
			if err := positive(sec+kv.k, kv.v); err != nil {
				return nil, err
			}
		}
		if t.TIntK != nil && (!(*t.TIntK >= 0) || math.IsInf(*t.TIntK, 0)) {
			return nil, keyErr(sec+"t_int_k", "must be finite and non-negative, got %g", *t.TIntK)
		}
		return &forward.Guillot{TInt: *t.TIntK, TIrr: *t.TIrrK, KappaIR: *t.ThermalOpacityM2Kg, Gamma: *t.OpacityRatio, F: *t.Redistribution}, nil
	default:
		if t.PressuresBar == nil || t.TemperaturesK == nil {
			return nil, missingKey(sec+"pressures_bar", sec+"pressure_bar and "+sec+"temperatures_k are both required")
		}
		p := make([]float64, len(t.PressuresBar))
		for i, v := range t.PressuresBar {
			p[i] = v * forward.Bar
		}
		tp, err := forward.NewTableProfile(p, t.TemperaturesK)
		if err != nil {
			return nil, keyWrap(sec+"pressures_bar", err)
		}
		return tp, nil
	}
}

func contains(s []string, v string) bool {
	for _, x := range s {
		if x == v {
			return true
		}
	}
	return false
}

// Bins returns the [spectrum] bins, or nil for an unbinned spectrum.
func (c *ModelConfig) Bins() (*forward.Bins, error) {
	s := &c.Spectrum
	um := func(v []float64) []float64 {
		out := make([]float64, len(v))
		for i, x := range v {
			out[i] = x * forward.Micron
		}
		return out
	}
	switch {
	case s.BinEdgesUm != nil:
		b, err := forward.BinsFromEdges(um(s.BinEdgesUm))
		if err != nil {
			return nil, keyWrap("spectrum.bin_edges_um", err)
		}
		return &b, nil
	case s.BinCentresUm != nil:
		b, err := forward.BinsFromCentres(um(s.BinCentresUm), um(s.BinWidthsUm))
		if err != nil {
			return nil, keyWrap("spectrum.bin_centres_um", err)
		}
		return &b, nil
	case s.BinResolvingPower != nil:
		b, err := forward.ResolvingPowerBins(*s.WavelengthMinUm*forward.Micron, *s.WavelengthMaxUm*forward.Micron, *s.BinResolvingPower)
		if err != nil {
			return nil, keyWrap("spectrum.bin_resolving_power", err)
		}
		return &b, nil
	}
	return nil, nil
}

// DemoCacheDir is where the demo opacity tables are cached:
// os.UserCacheDir()/chord/demo-<demo.Version>.
func DemoCacheDir() (string, error) {
	d, err := os.UserCacheDir()
	if err != nil {
		return "", fmt.Errorf("demo opacities: no cache directory: %w", err)
	}
	return filepath.Join(d, "chord", "demo-"+demo.Version), nil
}

// LoadOpacity returns the tables [opacity] asks for: the table files of
// opacity.dir, the demo tables (built once and cached in demoCache, ""
// meaning DemoCacheDir, with progress messages to progress, which may be
// nil), or an empty set when neither is given (grey and Rayleigh
// opacities only).
func (c *ModelConfig) LoadOpacity(demoCache string, progress io.Writer) (*opacity.Set, error) {
	switch {
	case c.Opacity.Demo:
		if demoCache == "" {
			var err error
			if demoCache, err = DemoCacheDir(); err != nil {
				return nil, keyWrap("opacity.demo", err)
			}
		}
		s, err := demo.Load(demoCache, progress)
		if err != nil {
			return nil, keyWrap("opacity.demo", err)
		}
		return s, nil
	case c.Opacity.Dir != "":
		dir := c.Opacity.Dir
		if !filepath.IsAbs(dir) && c.BaseDir != "" {
			dir = filepath.Join(c.BaseDir, dir)
		}
		s, err := tablefile.LoadDir(dir)
		if err != nil {
			return nil, keyWrap("opacity.dir", err)
		}
		return s, nil
	}
	return &opacity.Set{XSec: map[string]*opacity.XSecTable{}}, nil
}

// The values of opacity.table_kind.
const (
	TableKindK    = "k"
	TableKindXSec = "xsec"
)

// TableKind returns the kind of gas tables a model of c uses with set:
// opacity.table_kind, or "k" when set holds k-tables and "xsec" otherwise.
func (c *ModelConfig) TableKind(set *opacity.Set) string {
	if k := c.Opacity.TableKind; k != "" {
		return k
	}
	if set != nil && len(set.K) > 0 {
		return TableKindK
	}
	return TableKindXSec
}

// ForwardConfig returns the forward-model configuration for the tables of
// set, with bins (nil for the [spectrum] bins, which may themselves be
// absent). A retrieval passes its observations' bins. c must be valid.
//
// With k-tables (TableKind "k") the model works per bin: every trace gas
// needs a k-table, the bins default to the first table's bins within the
// [spectrum] range, and the model grid ([spectrum] resolving_power) is
// not used.
func (c *ModelConfig) ForwardConfig(set *opacity.Set, bins *forward.Bins) (forward.Config, error) {
	if set == nil {
		set = &opacity.Set{}
	}
	d := c.withDefaults()
	a := &d.Atmosphere
	s := &d.Spectrum
	kind := c.TableKind(set)
	var wl []float64
	if kind == TableKindXSec {
		var err error
		if wl, err = forward.WavelengthGrid(*s.WavelengthMinUm*forward.Micron, *s.WavelengthMaxUm*forward.Micron, *s.ResolvingPower); err != nil {
			return forward.Config{}, keyWrap("spectrum", err)
		}
	}
	cfg := forward.Config{
		Wavelength:     wl,
		TopPressure:    *a.TopPressureBar * forward.Bar,
		BottomPressure: *a.BottomPressureBar * forward.Bar,
		Layers:         *a.Layers,
		RefPressure:    *d.Planet.ReferencePressureBar * forward.Bar,
		Gases:          c.gasNames(),
		Fill:           a.BalanceGas,
		Grey: opacity.Grey{
			Sigma:       d.Opacity.GreyCrossSectionM2,
			Exponent:    d.Opacity.GreyPressureExponent,
			RefPressure: *d.Opacity.GreyReferencePressureBar * forward.Bar,
		},
		HazeRefWavelength: *d.Clouds.HazePivotUm * forward.Micron,
		MinBinPoints:      *s.MinBinPoints,
	}
	species := append(c.gasNames(), c.fillSpecies()...)
	if kind == TableKindK {
		cfg.Overlap = forward.Overlap(c.Opacity.Overlap)
		for _, g := range species {
			if t, ok := set.K[g]; ok {
				cfg.KTables = append(cfg.KTables, t)
			} else if c.inTrace(g) {
				return forward.Config{}, keyErr("atmosphere.gases", "gas %q has no k-table among the loaded tables (%s)", g, kNames(set))
			}
		}
		if len(cfg.KTables) == 0 {
			return forward.Config{}, keyErr("opacity", "no k-tables for the gases of the atmosphere (tables loaded for: %s)", kNames(set))
		}
	} else {
		for _, g := range species {
			if t, ok := set.XSec[g]; ok {
				cfg.XSec = append(cfg.XSec, t)
			}
		}
	}
	if c.Opacity.CIA == nil {
		for _, t := range set.CIA {
			if c.inComposition(t.Pair[0]) && c.inComposition(t.Pair[1]) {
				cfg.CIA = append(cfg.CIA, t)
			}
		}
	} else {
		for _, p := range *c.Opacity.CIA {
			t := findCIA(set, p)
			if t == nil {
				return forward.Config{}, keyErr("opacity.cia", "no table for the pair %q among the loaded tables (%s)", p, ciaNames(set))
			}
			cfg.CIA = append(cfg.CIA, t)
		}
	}
	if c.Opacity.Rayleigh == nil {
		for _, g := range species {
			if _, err := opacity.NewRayleigh(g); err == nil {
				cfg.Rayleigh = append(cfg.Rayleigh, g)
			}
		}
	} else {
		cfg.Rayleigh = append(cfg.Rayleigh, *c.Opacity.Rayleigh...)
	}
	if bins == nil {
		var err error
		if bins, err = c.Bins(); err != nil {
			return forward.Config{}, err
		}
	}
	if bins == nil && kind == TableKindK {
		bins = tableBins(cfg.KTables[0], *s.WavelengthMinUm*forward.Micron, *s.WavelengthMaxUm*forward.Micron)
		if bins.Len() == 0 {
			return forward.Config{}, keyErr("spectrum", "no bin of the %s k-table (%.4g-%.4g um) lies within %g-%g um",
				cfg.KTables[0].Gas, cfg.KTables[0].Lo[0]/forward.Micron, cfg.KTables[0].Hi[cfg.KTables[0].Bins()-1]/forward.Micron,
				*s.WavelengthMinUm, *s.WavelengthMaxUm)
		}
	}
	cfg.Bins = bins
	return cfg, nil
}

// tableBins returns the bins of t within [lo, hi] (m), to a relative 1e-9.
func tableBins(t *opacity.KTable, lo, hi float64) *forward.Bins {
	b := &forward.Bins{}
	for i := range t.Lo {
		if t.Lo[i] >= lo*(1-1e-9) && t.Hi[i] <= hi*(1+1e-9) {
			b.Lo = append(b.Lo, t.Lo[i])
			b.Hi = append(b.Hi, t.Hi[i])
		}
	}
	return b
}

// inTrace reports whether g is a trace gas of the atmosphere (not the
// balance gas).
func (c *ModelConfig) inTrace(g string) bool {
	_, ok := c.Atmosphere.Gases[g]
	return ok
}

func kNames(set *opacity.Set) string {
	if len(set.K) == 0 {
		return "none"
	}
	n := make([]string, 0, len(set.K))
	for g := range set.K {
		n = append(n, g)
	}
	slices.Sort(n)
	return strings.Join(n, ", ")
}

func findCIA(set *opacity.Set, pair string) *opacity.CIATable {
	a, b, _ := strings.Cut(pair, "-")
	for _, t := range set.CIA {
		if (t.Pair[0] == a && t.Pair[1] == b) || (t.Pair[0] == b && t.Pair[1] == a) {
			return t
		}
	}
	return nil
}

func ciaNames(set *opacity.Set) string {
	if len(set.CIA) == 0 {
		return "none"
	}
	n := make([]string, len(set.CIA))
	for i, t := range set.CIA {
		n[i] = t.Pair[0] + "-" + t.Pair[1]
	}
	return strings.Join(n, ", ")
}

// State returns the physical state the configuration describes, for a
// model built from ForwardConfig. c must be valid.
func (c *ModelConfig) State(m *forward.Model) (forward.State, error) {
	d := c.withDefaults()
	s := m.DefaultState()
	var err error
	if s.Profile, err = d.Atmosphere.Temperature.profile(); err != nil {
		return s, err
	}
	for i, g := range m.Gases() {
		s.VMR[i] = d.Atmosphere.Gases[g]
	}
	if d.Atmosphere.BalanceHeH2Ratio != nil { // an H2+He balance gas
		s.HeH2 = *d.Atmosphere.BalanceHeH2Ratio
	}
	if s.RefRadius, err = d.planetRadius(); err != nil {
		return s, err
	}
	if s.Mass, err = d.planetMass(); err != nil {
		return s, err
	}
	if s.StarRadius, err = d.starRadius(); err != nil {
		return s, err
	}
	if d.Clouds.CloudTopBar != nil {
		s.CloudTop = *d.Clouds.CloudTopBar * forward.Bar
		s.CloudFraction = *d.Clouds.CloudFraction
	}
	s.HazeFactor = *d.Clouds.HazeStrength
	s.HazeSlope = *d.Clouds.HazeIndex
	return s, nil
}

// Build validates c and returns the prepared model, with the [spectrum]
// bins if any, and the state the configuration describes.
func (c *ModelConfig) Build(set *opacity.Set) (*forward.Model, forward.State, error) {
	if err := c.Validate(); err != nil {
		return nil, forward.State{}, err
	}
	fc, err := c.ForwardConfig(set, nil)
	if err != nil {
		return nil, forward.State{}, err
	}
	m, err := forward.NewModel(fc)
	if err != nil {
		return nil, forward.State{}, err
	}
	s, err := c.State(m)
	if err != nil {
		return nil, forward.State{}, err
	}
	return m, s, nil
}
