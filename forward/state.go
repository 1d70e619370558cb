package forward

import (
	"errors"
	"fmt"
)

// State is the physical input of one spectrum. The model's composition,
// grids and opacities are fixed in the Model; everything a retrieval may
// vary is here.
type State struct {
	// Profile gives T(P). Callers that vary it per call keep one profile
	// value (e.g. a *Guillot) and change its fields, so no allocation is
	// needed.
	Profile Profile
	// VMR are the volume mixing ratios of Model.Gases(), in that order;
	// each in [0, 1], summing to at most 1. The fill gas makes up the rest.
	VMR []float64
	// HeH2 is the He/H2 number ratio of the FillH2He fill gas (>= 0; 0
	// means pure H2; DefaultHeH2 is solar). Ignored for other fill gases.
	HeH2 float64

	RefRadius  float64 // m, planet radius at Model.RefPressure() (> 0)
	Mass       float64 // kg, planet mass (> 0)
	StarRadius float64 // m (> 0)

	// CloudTop is the pressure (Pa) of the top of a grey, opaque cloud
	// deck; 0 means no deck. It may not lie below the bottom of the
	// model; above the model top it covers the whole atmosphere.
	CloudTop float64
	// CloudFraction phi is the fraction of the limb covered by the deck,
	// in [0, 1]: D = phi D_cloudy + (1-phi) D_clear (Line & Parmentier
	// 2016, ApJ 820, 78). Used only when CloudTop is set; DefaultState
	// sets 1.
	CloudFraction float64

	// HazeFactor A (the configuration's haze strength) and HazeSlope
	// gamma (its haze index) give a haze cross-section per molecule
	// A sigma_ref (lambda/lambda_ref)^gamma, with sigma_ref the H2 Rayleigh
	// cross-section at the pivot lambda_ref: the parameterisation of
	// MacDonald & Madhusudhan (2017, MNRAS 469, 1979), the enhanced
	// Rayleigh scattering of Lecavelier des Etangs et al. (2008, A&A 481,
	// L83) at gamma = -4. A = 0 (default) means no haze.
	HazeFactor float64
	HazeSlope  float64
}

// DefaultState returns a clear state for model m with trace gases at 0, a
// solar He/H2 ratio and a cloud fraction of 1; radii, mass and profile are
// left for the caller.
func (m *Model) DefaultState() State {
	return State{VMR: make([]float64, len(m.gases)), HeH2: DefaultHeH2, CloudFraction: 1, HazeSlope: DefaultHazeSlope}
}

// Reasons a state is rejected, for errors.Is; a retrieval counts them.
var (
	ErrInvalidState = errors.New("invalid state")
	ErrMixingRatio  = errors.New("trace-gas mixing ratios sum to more than 1")
	ErrUnbound      = errors.New("atmosphere is unbound: 1/r reaches 0 within the model (too hot, too light or too low in mass for its radius)")
	ErrCloudBelow   = errors.New("cloud top lies below the bottom of the model atmosphere")
)

// StateError is the error Transit returns for a state it cannot compute.
// Kind is one of the Err* values (or ErrTemperature); Param names the
// field or gas and Value its value. Transit keeps it in the Workspace so
// that rejecting a state does not allocate: it is valid until the next
// call with the same Workspace (copy it to keep it).
type StateError struct {
	Kind  error
	Gas   string // the gas, for a bad mixing ratio
	Param string
	Value float64
}

func (e *StateError) Error() string {
	switch e.Kind {
	case ErrMixingRatio:
		return fmt.Sprintf("forward: %v (sum %g)", e.Kind, e.Value)
	case ErrUnbound:
		return fmt.Sprintf("forward: %v", e.Kind)
	case ErrCloudBelow:
		return fmt.Sprintf("forward: %v (cloud top %g bar)", e.Kind, e.Value/Bar)
	case ErrTemperature:
		return fmt.Sprintf("%v", e.Kind)
	}
	if e.Gas != "" {
		return fmt.Sprintf("forward: %v: %s %s is %g", e.Kind, e.Gas, e.Param, e.Value)
	}
	return fmt.Sprintf("forward: %v: %s is %g", e.Kind, e.Param, e.Value)
}

// Unwrap returns Kind.
func (e *StateError) Unwrap() error { return e.Kind }
