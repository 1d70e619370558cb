package lbl

import (
	"fmt"
	"math"
	"sort"
	"strings"
)

// Broadener is a perturbing gas for which line lists give per-line
// pressure-broadening parameters besides air and self: HITRAN's planetary
// broadeners (Tan et al. 2022, ApJS 262, 40: H2, He, CO2; H2O for some
// molecules) and ExoMol's .broad files (Tennyson et al. 2016, J. Mol.
// Spectrosc. 327, 73).
type Broadener uint8

// The broadeners with per-line parameters.
const (
	H2 Broadener = iota
	He
	CO2
	H2O
	NumBroadeners
)

var broadenerNames = [NumBroadeners]string{"H2", "He", "CO2", "H2O"}

func (b Broadener) String() string {
	if b < NumBroadeners {
		return broadenerNames[b]
	}
	return fmt.Sprintf("Broadener(%d)", b)
}

// ParseBroadener returns the broadener named name ("H2", "He", "CO2",
// "H2O"; case as written here).
func ParseBroadener(name string) (Broadener, bool) {
	for i, n := range broadenerNames {
		if n == name {
			return Broadener(i), true
		}
	}
	return 0, false
}

// Flags of BroadParams.Has.
const (
	HasGamma uint8 = 1 << iota
	HasN
	HasDelta
)

// BroadParams are one broadener's parameters of a line at 296 K, in
// HITRAN's units. Has says which are given; a line list that lacks them
// leaves them out and the build uses the stated fallback (Mixture).
type BroadParams struct {
	Gamma float32 // Lorentz half-width (HWHM), cm^-1/atm
	N     float32 // temperature exponent of Gamma: Gamma(T) = Gamma (296/T)^N
	Delta float32 // pressure shift, cm^-1/atm
	Has   uint8
}

// MixtureComponent is one gas of the background that broadens the lines
// (everything but the absorber itself) and its share of the background.
type MixtureComponent struct {
	Gas      string  // "air", or a Broadener name ("H2", "He", "CO2", "H2O")
	Fraction float64 // share of the background pressure, in (0, 1]
}

// Mixture is the background gas as fractions of its components; they sum
// to 1. The Lorentz half-width of a line at pressure p (atm), temperature
// T and absorber fraction x_self is
//
//	gamma_L = (1 - x_self) p sum_c f_c gamma_c (296/T)^n_c + x_self p gamma_self (296/T)^n_air,
//
// and its centre is shifted by (1 - x_self) p sum_c f_c delta_c + x_self p
// delta_air. For a component c whose parameters a line carries, gamma_c,
// n_c and delta_c are the line's own; for "air", and as the stated
// fallback for a line that lacks a component's parameters, they are the
// air values: gamma_c = Scale gamma_air, n_c = N (or n_air when N is 0),
// delta_c = delta_air (Broadening's Scale and N; a missing n_c or delta_c
// alone falls back the same way). Builds count the lines that fell back
// per component and say so. An empty Mixture is air alone.
type Mixture []MixtureComponent

// H2HeMixture returns the background of a giant planet's atmosphere with
// helium-to-hydrogen number ratio heH2: H2 1/(1+heH2), He heH2/(1+heH2).
func H2HeMixture(heH2 float64) Mixture {
	return Mixture{{"H2", 1 / (1 + heH2)}, {"He", heH2 / (1 + heH2)}}
}

// ParseMixture reads "H2:0.85,He:0.15" (fractions of the background).
func ParseMixture(s string) (Mixture, error) {
	var m Mixture
	for _, part := range strings.Split(s, ",") {
		name, frac, ok := strings.Cut(strings.TrimSpace(part), ":")
		var f float64
		if ok {
			_, err := fmt.Sscanf(frac, "%g", &f)
			ok = err == nil
		}
		if !ok {
			return nil, fmt.Errorf("broadening mixture %q: %q is not GAS:FRACTION", s, part)
		}
		m = append(m, MixtureComponent{Gas: strings.TrimSpace(name), Fraction: f})
	}
	return m, m.Validate()
}

// Validate reports whether the components are known, distinct, positive
// and sum to 1 (within 1e-6).
func (m Mixture) Validate() error {
	sum := 0.0
	seen := map[string]bool{}
	for _, c := range m {
		if _, ok := ParseBroadener(c.Gas); !ok && c.Gas != "air" {
			return fmt.Errorf("broadening mixture: unknown broadener %q (known: air, H2, He, CO2, H2O)", c.Gas)
		}
		if seen[c.Gas] {
			return fmt.Errorf("broadening mixture: %s given twice", c.Gas)
		}
		seen[c.Gas] = true
		if !(c.Fraction > 0 && c.Fraction <= 1) {
			return fmt.Errorf("broadening mixture: fraction of %s is %g, must be in (0, 1]", c.Gas, c.Fraction)
		}
		sum += c.Fraction
	}
	if len(m) > 0 && math.Abs(sum-1) > 1e-6 {
		return fmt.Errorf("broadening mixture: fractions sum to %.8g, must sum to 1", sum)
	}
	return nil
}

// String gives the mixture as ParseMixture reads it; "air:1" when empty.
func (m Mixture) String() string {
	if len(m) == 0 {
		return "air:1"
	}
	parts := make([]string, len(m))
	for i, c := range m {
		parts[i] = fmt.Sprintf("%s:%g", c.Gas, c.Fraction)
	}
	return strings.Join(parts, ",")
}

// widthRule is a prepared Mixture and Broadening: it gives each line's
// Lorentz half-width and shift at a pressure and temperature.
type widthRule struct {
	comps   []ruleComp
	scale   float64 // air scale
	airN    float64 // 0: the line's n_air
	self    float64 // absorber fraction
	noShift bool
}

type ruleComp struct {
	b    Broadener // NumBroadeners for air
	frac float64
}

func newWidthRule(m Mixture, b Broadening, self float64, noShift bool) (widthRule, error) {
	if err := m.Validate(); err != nil {
		return widthRule{}, err
	}
	r := widthRule{scale: b.Scale, airN: b.N, self: self, noShift: noShift}
	if r.scale == 0 {
		r.scale = 1
	}
	if len(m) == 0 {
		m = Mixture{{"air", 1}}
	}
	for _, c := range m {
		bc, ok := ParseBroadener(c.Gas)
		if !ok {
			bc = NumBroadeners
		}
		r.comps = append(r.comps, ruleComp{bc, c.Fraction})
	}
	return r, nil
}

// at returns a line's Lorentz half-width and centre shift (cm^-1) at
// pressure pAtm (atm) and lnT = ln(296/T).
func (r *widthRule) at(l *Line, pAtm, lnT float64) (gammaL, shift float64) {
	g, gs, d := r.parts(l, lnT)
	return r.combine(l, g, gs, d, pAtm)
}

// parts returns what of a line's width and shift depends on temperature
// alone (lnT = ln(296/T)): the background's half-width g and shift d per
// atm, and the self-broadened half-width gs per atm.
func (r *widthRule) parts(l *Line, lnT float64) (g, gs, d float64) {
	airN := l.NAir
	if r.airN > 0 {
		airN = r.airN
	}
	airG := r.scale * l.GammaAir * math.Exp(airN*lnT)
	for _, c := range r.comps {
		cg, cd := airG, l.DeltaAir
		if c.b < NumBroadeners {
			bp := &l.Broad[c.b]
			if bp.Has&HasGamma != 0 {
				n := airN
				if bp.Has&HasN != 0 {
					n = float64(bp.N)
				}
				cg = float64(bp.Gamma) * math.Exp(n*lnT)
			}
			if bp.Has&HasDelta != 0 {
				cd = float64(bp.Delta)
			}
		}
		g += c.frac * cg
		d += c.frac * cd
	}
	return g, l.GammaSelf * math.Exp(l.NAir*lnT), d
}

// combine gives the Lorentz half-width and shift at pressure pAtm (atm)
// from the parts.
func (r *widthRule) combine(l *Line, g, gs, d, pAtm float64) (gammaL, shift float64) {
	pSelf := r.self * pAtm
	pBg := pAtm - pSelf
	gammaL = g*pBg + gs*pSelf
	if !r.noShift {
		shift = d*pBg + l.DeltaAir*pSelf
	}
	return gammaL, shift
}

// fallbacks counts, per component of the mixture other than air, the
// lines that lack its half-width and so use the fallback.
func (r *widthRule) fallbacks(lines []Line) map[string]int {
	out := map[string]int{}
	for _, c := range r.comps {
		if c.b == NumBroadeners {
			continue
		}
		n := 0
		for i := range lines {
			if lines[i].Broad[c.b].Has&HasGamma == 0 {
				n++
			}
		}
		out[c.b.String()] = n
	}
	return out
}

// fallbackNote says how many of n lines fell back, per component; "" when
// none did.
func fallbackNote(counts map[string]int, n int) string {
	var parts []string
	for gas, k := range counts {
		if k > 0 {
			parts = append(parts, fmt.Sprintf("%s: %d of %d lines", gas, k, n))
		}
	}
	if len(parts) == 0 {
		return ""
	}
	sort.Strings(parts)
	return "lines without their own broadening parameters use the air values (scaled as given) in their place: " + strings.Join(parts, "; ")
}

// LorentzWidth returns the Lorentz half-width and the centre shift
// (cm^-1) of line l at pressure pAtm (atm) and temperature t (K) in the
// background m (with Broadening b for the air values) and absorber
// fraction self, as the builders compute them (see Mixture).
func LorentzWidth(l *Line, m Mixture, b Broadening, self, pAtm, t float64) (gammaL, shift float64, err error) {
	r, err := newWidthRule(m, b, self, false)
	if err != nil {
		return 0, 0, err
	}
	gammaL, shift = r.at(l, pAtm, math.Log(TRef/t))
	return gammaL, shift, nil
}
