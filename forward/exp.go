package forward

import "math"

// absorbedTable holds 2^(-j/64), j = 0..63, for oneMinusExpNeg.
var absorbedTable = func() (t [64]float64) {
	for j := range t {
		t[j] = math.Exp2(-float64(j) / 64)
	}
	return t
}()

// Constants of oneMinusExpNeg's range reduction.
const (
	expInv    = 64 / math.Ln2
	expLn2Hi  = 6.93147180369123816490e-01 / 64 // upper bits of ln 2, as in math.Exp
	expLn2Lo  = 1.90821492927058770002e-10 / 64
	expRounds = 1 << 52 * 1.5 // adding and subtracting it rounds to an integer
)

// oneMinusExpNeg returns 1 - exp(-t) for t >= 0 without branches on t's
// size, so that the loop over a spectrum's points runs at a steady rate
// whatever its optical depths.
//
// exp(-t) = 2^-(q/64) exp(-r) with q = round(64 t/ln 2) and
// |r| <= ln2/128; 2^-(q/64) = 2^-(q>>6) 2^-((q&63)/64) from a table, and
// exp(-r) by its Taylor series to r^5 (truncation below 4e-17 relative),
// evaluated in Estrin's form for a short dependency chain. t is clamped to
// satTau, where 1 - exp(-t) already rounds to 1. The absolute error is a
// few 1e-16 (TestOneMinusExpNeg). addAbsorbed repeats this body inline.
func oneMinusExpNeg(t float64) float64 {
	if t > satTau { // a compare and move; the builtin min is slower here
		t = satTau
	}
	q := (t*expInv + expRounds) - expRounds // t in [0, 38] so q in [0, 3510]
	r := (t - q*expLn2Hi) - q*expLn2Lo
	iq := int(q)
	r2 := r * r
	p := (1 - r) + r2*(0.5-r*(1.0/6)) + r2*r2*(1.0/24-r*(1.0/120))
	return 1 - p*math.Float64frombits(uint64(1023-(iq>>6))<<52)*absorbedTable[iq&63]
}

// transmittedTable holds 2^(-j/256), j = 0..255, for expNeg.
var transmittedTable = func() (t [256]float64) {
	for j := range t {
		t[j] = math.Exp2(-float64(j) / 256)
	}
	return t
}()

// Constants of expNeg's range reduction.
const (
	expInv256 = 256 / math.Ln2
	expLn2256 = math.Ln2 / 256
)

// expNeg returns exp(-t) for t >= 0, and 0 from satTau on, for the
// transmissions of the k-distribution path, where a relative error of
// 2e-13 is far below anything a depth can show: shorter than
// oneMinusExpNeg, it takes exp(-t) = 2^-(q/256) exp(-r) with q =
// round(256 t/ln 2) and |r| <= ln2/512, exp(-r) to r^3 (truncation below
// 1.5e-13 relative; the one-constant reduction adds a few 1e-15), and
// 2^-(q/256) = 2^-(q>>8) 2^-((q&255)/256) from a table (TestExpNeg).
// transmission repeats this body inline.
func expNeg(t float64) float64 {
	if t >= satTau {
		return 0
	}
	q := (t*expInv256 + expRounds) - expRounds // t in [0, 38) so q in [0, 14035]
	r := t - q*expLn2256
	iq := int(q)
	p := (1 - r) + r*r*(0.5-r*(1.0/6))
	return p * math.Float64frombits(uint64(1023-(iq>>8))<<52) * transmittedTable[iq&255]
}
