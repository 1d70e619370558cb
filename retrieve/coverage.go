package retrieve

import (
	"math"
	"slices"

	"chord/config"
	"chord/forward"
	"chord/obs"
	"chord/priors"
	"chord/report"
)

// tableCoverage says what the opacity tables of fc (cross-sections,
// k-tables, CIA) cover of the data sets' bins and of the model atmosphere
// (its level pressures lv, Pa, bottom first), for the table-coverage check
// (report.Coverage).
func tableCoverage(fc forward.Config, ds []*obs.Dataset, lv []float64) *report.Coverage {
	type bin struct {
		lo, hi float64
		where  string
	}
	var bins []bin
	for _, d := range ds {
		for i := range d.Lo {
			bins = append(bins, bin{d.Lo[i], d.Hi[i], d.Where(i)})
		}
	}
	cov := &report.Coverage{Bins: len(bins), PMin: lv[len(lv)-1], PMax: lv[0]}
	lines := make([]bool, len(bins)) // some gas has line opacity in bin i
	pRange := func(log10P []float64) (float64, float64) {
		return math.Pow(10, log10P[0]), math.Pow(10, log10P[len(log10P)-1])
	}
	// classify sorts the bins into those outside a table (missing), those
	// where it is zero everywhere, and those where it has lines; where(lo,
	// hi) says whether a bin lies inside the table and the table is
	// non-zero somewhere in it.
	classify := func(tc report.TableCoverage, where func(lo, hi float64) (inside, nonzero bool)) {
		for i, b := range bins {
			switch inside, nonzero := where(b.lo, b.hi); {
			case !inside:
				tc.Missing = append(tc.Missing, report.Bin(b.lo, b.hi, b.where))
			case nonzero:
				lines[i] = true
			default:
				tc.Zero = append(tc.Zero, report.Bin(b.lo, b.hi, b.where))
			}
		}
		cov.Tables = append(cov.Tables, tc)
	}
	for _, t := range fc.XSec {
		tc := report.TableCoverage{Table: t.Gas + " cross-sections", Gas: t.Gas, Lines: true, Bins: len(bins), TMin: t.T[0], TMax: t.T[len(t.T)-1]}
		tc.PMin, tc.PMax = pRange(t.Log10P)
		// nonzero[k]: the table is non-zero at wavenumber k at some (P, T).
		n := len(t.Wavenumber)
		nonzero := make([]bool, n)
		for r := 0; r < len(t.Sigma); r += n {
			for k, v := range t.Sigma[r : r+n] {
				nonzero[k] = nonzero[k] || v != 0
			}
		}
		nu := t.Wavenumber
		classify(tc, func(lo, hi float64) (bool, bool) {
			a, c := 1/hi, 1/lo // the bin in wavenumber
			if !obs.Inside(a, c, nu[0], nu[n-1]) {
				return false, false
			}
			// The table points inside the bin and the two around it (the
			// interpolation reaches them).
			k0, k1 := 0, n-1
			for k0 < n-1 && nu[k0+1] < a {
				k0++
			}
			for k1 > 0 && nu[k1-1] > c {
				k1--
			}
			return true, slices.Contains(nonzero[k0:k1+1], true)
		})
	}
	for _, t := range fc.KTables {
		tc := report.TableCoverage{Table: t.Gas + " k-table", Gas: t.Gas, Lines: true, Bins: len(bins), TMin: t.T[0], TMax: t.T[len(t.T)-1]}
		tc.PMin, tc.PMax = pRange(t.Log10P)
		nb, ng := t.Bins(), len(t.G)
		nonzero := make([]bool, nb)
		for r := 0; r < len(t.K); r += nb * ng {
			for b := range nb {
				nonzero[b] = nonzero[b] || slices.ContainsFunc(t.K[r+b*ng:r+(b+1)*ng], func(v float32) bool { return v != 0 })
			}
		}
		classify(tc, func(lo, hi float64) (bool, bool) {
			if !obs.Inside(lo, hi, t.Lo[0], t.Hi[nb-1]) {
				return false, false
			}
			for k := range nb {
				if t.Hi[k] > lo && t.Lo[k] < hi && nonzero[k] {
					return true, true
				}
			}
			return true, false
		})
	}
	for _, t := range fc.CIA {
		name := t.Pair[0] + "-" + t.Pair[1] + " CIA"
		tc := report.TableCoverage{Table: name, TMin: t.T[0], TMax: t.T[len(t.T)-1]}
		cov.Tables = append(cov.Tables, tc)
	}
	if len(fc.XSec)+len(fc.KTables) > 0 {
		for i, b := range bins {
			if !lines[i] {
				cov.NoLines = append(cov.NoLines, report.Bin(b.lo, b.hi, b.where))
			}
		}
	}
	return cov
}

// paramBounds returns the prior boxes of the free parameters for the
// prior-edge check, with the edges that are physical limits or mean
// "absent" marked; bottomBar is the model's bottom pressure (bar).
func paramBounds(free []config.Param, bottomBar float64) []report.ParamBounds {
	var out []report.ParamBounds
	for _, p := range free {
		b := report.ParamBounds{Column: p.Name}
		switch pr := p.Prior.(type) {
		case priors.Uniform:
			b.Low, b.High = pr.Low, pr.High
		case priors.LogUniform:
			b.Low, b.High, b.Log = pr.Low, pr.High, true
		default:
			continue // unbounded or not a box: no edge to pile against
		}
		switch p.Sets {
		case config.QLog10VMR:
			// The lower edge means absent (an upper limit, the gas
			// verdict's business); 0 is a mixing ratio of 1.
			b.LowLimit, b.HighLimit = true, b.High >= 0
		case config.QCloudFraction:
			b.LowLimit, b.HighLimit = b.Low <= 0, b.High >= 1
		case config.QErrorInflationPM, config.QTInt:
			b.LowLimit = b.Low <= 0
		case config.QLog10HazeStrength:
			b.LowLimit = true // no haze: a limit, like an absent gas
		case config.QLog10CloudTop:
			// A cloud top at or below the bottom of the atmosphere is no
			// cloud: the data see no cloud deck.
			b.HighLimit = b.High >= math.Log10(bottomBar)
		case config.QCLR:
			continue
		}
		out = append(out, b)
	}
	return out
}

// Coverage returns what the opacity tables cover of the data and the
// model atmosphere (a copy; report.Write adds the fit's temperatures).
func (p *Problem) Coverage() *report.Coverage {
	c := *p.cover
	return &c
}
