package report

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"gonum.org/v1/gonum/stat"
)

// Coverage is what the opacity tables of a fit cover of its data and its
// atmosphere. The caller fills it from the tables the forward model uses
// (retrieve does, from cross-section tables, k-tables and CIA); the
// table-coverage check (checks.go) reads it.
type Coverage struct {
	Tables []TableCoverage `json:"tables"`
	Bins   int             `json:"data_bins"` // number of data bins
	// NoLines lists the data bins (as Bin strings) where no gas has any
	// line opacity: the model there is continuum only (CIA, Rayleigh,
	// grey, clouds, haze).
	NoLines []string `json:"bins_without_line_opacity,omitempty"`
	// PMin and PMax are the model atmosphere's pressure range (Pa).
	PMin float64 `json:"p_min_pa"`
	PMax float64 `json:"p_max_pa"`
	// TMin and TMax are the central 95% of the posterior's layer
	// temperatures (K): the 2.5th percentile of the samples' coldest
	// layer and the 97.5th of their hottest; filled by Write from the
	// model's temperatures (SampleView.Temperature), 0 when unknown.
	TMin float64 `json:"t_min_k,omitempty"`
	TMax float64 `json:"t_max_k,omitempty"`
}

// TableCoverage is one opacity table's coverage.
type TableCoverage struct {
	Table string `json:"table"` // e.g. "H2O cross-sections", "CO2 k-table", "H2-H2 CIA"
	Gas   string `json:"gas,omitempty"`
	// Lines is true for a gas's line opacity (cross-sections, k-tables),
	// false for continuum (CIA).
	Lines bool `json:"lines"`
	// Missing lists the data bins outside the table's wavelength range;
	// Zero those where the table is zero at every pressure and
	// temperature.
	Missing []string `json:"missing_bins,omitempty"`
	Zero    []string `json:"zero_bins,omitempty"`
	Bins    int      `json:"data_bins"` // number of data bins
	// The table's grid: temperature (K) and pressure (Pa; 0 for a table
	// without a pressure axis).
	TMin float64 `json:"t_min_k"`
	TMax float64 `json:"t_max_k"`
	PMin float64 `json:"p_min_pa,omitempty"`
	PMax float64 `json:"p_max_pa,omitempty"`
}

// setTemperatures records the central 95% of the samples' temperature
// ranges (coldest layers lo, hottest hi).
func (c *Coverage) setTemperatures(lo, hi []float64) {
	if len(lo) == 0 {
		return
	}
	lo, hi = slices.Clone(lo), slices.Clone(hi)
	slices.Sort(lo)
	slices.Sort(hi)
	c.TMin = stat.Quantile(0.025, stat.Empirical, lo, nil)
	c.TMax = stat.Quantile(0.975, stat.Empirical, hi, nil)
}

// checkCoverage runs the table-coverage check on cov.
func (s *Summary) checkCoverage(cov *Coverage) {
	list := func(b []string) string {
		if len(b) <= 4 {
			return strings.Join(b, ", ")
		}
		return strings.Join(b[:3], ", ") + fmt.Sprintf(", ... (%d in all) ", len(b)) + b[len(b)-1]
	}
	misfit := s.GoodnessOfFit != nil && !s.GoodnessOfFit.Fits
	if n := len(cov.NoLines); n > 0 && (misfit || float64(n) > NoLinesShare*float64(cov.Bins)) {
		why := "the model does not fit the data, and this may be why"
		if !misfit {
			why = fmt.Sprintf("more than %g of the data", NoLinesShare)
		}
		s.addCheck(CheckCoverage, fmt.Sprintf("no gas of the model has any line opacity in %d of %d data bin(s) (%s): %s. The model is continuum only there (collision-induced absorption, scattering, clouds, haze), so absorption features in those bins cannot be fitted; add opacity tables (gases) that cover them, or leave those bins out",
			n, cov.Bins, why, list(cov.NoLines)))
	}
	for _, t := range cov.Tables {
		if len(t.Missing) > 0 {
			s.addCheck(CheckCoverage, fmt.Sprintf("the %s table does not reach %d data bin(s): %s; the model assumes no %s absorption there. Use a table that covers the data",
				t.Table, len(t.Missing), list(t.Missing), t.Table))
		}
		if t.Lines && t.Bins > 0 && len(t.Zero) == t.Bins {
			s.addCheck(CheckCoverage, fmt.Sprintf("the %s table is zero in every data bin: the data cannot measure %s with it (its abundance follows the prior). Check the table's wavelength range and line list", t.Table, t.Gas))
		}
		if cov.TMax > 0 && (cov.TMin < t.TMin || cov.TMax > t.TMax) {
			s.addCheck(CheckCoverage, fmt.Sprintf("the fit's temperatures (central 95%% of the layers: %.0f-%.0f K) reach outside the %s table's %g-%g K; the table's edge values are used there, which misrepresents the opacity. Use a table that spans the temperatures, or narrow the temperature prior if those temperatures are not plausible",
				cov.TMin, cov.TMax, t.Table, t.TMin, t.TMax))
		}
		if t.PMax > 0 && (cov.PMin < t.PMin*(1-1e-9) || cov.PMax > t.PMax*(1+1e-9)) {
			s.addCheck(CheckCoverage, fmt.Sprintf("the model atmosphere (%s-%s bar) reaches outside the %s table's pressures %s-%s bar; the table's edge values are used there. Use a table that spans the atmosphere, or move atmosphere.top_pressure_bar and bottom_pressure_bar inside it",
				bar(cov.PMin), bar(cov.PMax), t.Table, bar(t.PMin), bar(t.PMax)))
		}
	}
	s.Coverage = cov
}

// bar formats a pressure (Pa) in bar.
func bar(p float64) string { return fmt.Sprintf("%.3g", p/1e5) }

// Bin describes a data bin for coverage lists: its edges (um) and where it
// was read.
func Bin(lo, hi float64, where string) string {
	return fmt.Sprintf("%.4g-%.4g um (%s)", lo*1e6, hi*1e6, where)
}

// finiteRange reports whether lo and hi are usable temperatures.
func finiteRange(lo, hi float64) bool {
	return lo > 0 && hi >= lo && !math.IsInf(hi, 0)
}
