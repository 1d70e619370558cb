package report

import (
	"fmt"
	"io"
	"math"
	"sort"
	"strings"
	"unicode/utf8"

	"chord/sampler"
)

// The layout of summary.txt, shared with report.html: one row per
// parameter with aligned columns, its numbers given to the decimals that
// two significant digits of its narrower 68% half-interval need, every
// interval as an offset from the median, the prior beside it, a short
// verdict, and the long explanations as numbered notes.

// IntervalConvention states how the intervals of the tables are given.
const IntervalConvention = "median, and the 68% (16th-84th percentile) and 95% (2.5th-97.5th percentile) intervals as offsets from it"

// UpperLimitNote explains the upper limits; printed only when there is one.
const UpperLimitNote = "Upper limit: a log10 mixing ratio whose posterior reaches its prior's lower edge (Savage-Dickey significance below 2 sigma) is reported by its 95th percentile, an upper limit, not as a measurement."

// tableRow is one parameter's row, formatted.
type tableRow struct {
	Name, Label, Unit                string
	Median, Lo68, Hi68, Lo95, Hi95   string
	Prior, Verdict, MaxPost          string
	Tau, ESS, RHat                   string
	Notes                            []int // footnote numbers of the verdict
	Class                            GasClass
	IsGas                            bool
	Detected, UpperLimit, SigmaBound bool
}

// footnotes numbers distinct notes in order of first use.
type footnotes struct {
	text []string
}

func (f *footnotes) add(s string) int {
	for i, t := range f.text {
		if t == s {
			return i + 1
		}
	}
	f.text = append(f.text, s)
	return len(f.text)
}

// shortVerdict is the verdict column of a gas: its class and significance
// (a lower bound rounded down), and the explanation of the verdict (the
// part of GasVerdict.Verdict after the first "; ") for a footnote.
func shortVerdict(g *GasVerdict) (short, note string) {
	short = verdictHead(g.Class, float64(g.Sigma), g.SigmaIsBound, g.Upper95)
	if _, rest, ok := strings.Cut(g.Verdict, "; "); ok {
		note = rest
	}
	if g.Class != UpperLimit && !g.SigmaIsBound && g.Sigma > 0 && !math.IsNaN(float64(g.LnB10)) {
		note = strings.TrimPrefix(note+fmt.Sprintf("; ln B = %.1f ± %.1f (Savage-Dickey)", float64(g.LnB10), float64(g.LnB10Err)), "; ")
	}
	return short, note
}

// floorTenth rounds a lower bound down to one decimal, so that the bound
// printed is still a bound (3.8656 prints as 3.8, not 3.9).
func floorTenth(x float64) string {
	return fmt.Sprintf("%.1f", math.Floor(x*10+1e-9)/10)
}

// rows formats the columns cs, adding their notes to fn.
func rows(cs []ColumnSummary, fn *footnotes) []tableRow {
	out := make([]tableRow, 0, len(cs))
	for _, c := range cs {
		dec := sigDigits(math.Min(c.Median-c.P16, c.P84-c.Median))
		f := func(x float64) string { return fmtFixed(x, dec) }
		r := tableRow{
			Name: c.Name, Unit: c.Unit, Prior: c.Prior,
			Median: f(c.Median),
			Lo68:   "-" + fmtFixed(c.Median-c.P16, dec), Hi68: "+" + fmtFixed(c.P84-c.Median, dec),
			Lo95: "-" + fmtFixed(c.Median-c.P2_5, dec), Hi95: "+" + fmtFixed(c.P97_5-c.Median, dec),
			MaxPost: f(c.MaxPost),
			Tau:     fmt.Sprintf("%.1f", float64(c.Tau)),
			ESS:     fmt.Sprintf("%.0f", float64(c.ESS)),
			RHat:    fmt.Sprintf("%.3f", float64(c.RHat)),
		}
		if !c.TauReliable {
			r.Tau = ">" + r.Tau
		}
		if r.Unit == "" {
			r.Unit = "-"
		}
		if r.Prior == "" {
			r.Prior = "-"
		}
		if c.Gas != nil {
			short, note := shortVerdict(c.Gas)
			r.Verdict, r.IsGas, r.Class = short, true, c.Gas.Class
			r.Detected, r.UpperLimit, r.SigmaBound = c.Gas.Class == Detected, c.Gas.Class == UpperLimit, bool(c.Gas.SigmaIsBound)
			if note != "" {
				r.Notes = append(r.Notes, fn.add(note))
			}
			if r.UpperLimit {
				r.Notes = append(r.Notes, fn.add(UpperLimitNote))
			}
			for _, n := range r.Notes {
				r.Verdict += fmt.Sprintf(" [%d]", n)
			}
		}
		out = append(out, r)
	}
	return out
}

// column alignment of writeColumns.
const (
	alignLeft = iota
	alignRight
)

// writeColumns writes a table with each column padded to its widest cell,
// text left-aligned and numbers right-aligned, two spaces apart.
func writeColumns(b *strings.Builder, header []string, align []int, cells [][]string) {
	w := make([]int, len(header))
	for _, row := range append([][]string{header}, cells...) {
		for i, c := range row {
			w[i] = max(w[i], utf8.RuneCountInString(c))
		}
	}
	for _, row := range append([][]string{header}, cells...) {
		var line strings.Builder
		for i, c := range row {
			pad := strings.Repeat(" ", w[i]-utf8.RuneCountInString(c))
			if i > 0 {
				line.WriteString("  ")
			}
			if align[i] == alignRight {
				line.WriteString(pad + c)
			} else if i < len(row)-1 {
				line.WriteString(c + pad)
			} else {
				line.WriteString(c)
			}
		}
		b.WriteString(strings.TrimRight(line.String(), " ") + "\n")
	}
}

// WriteText writes summary.txt, the same content as summary.json for
// people.
func (s *Summary) WriteText(w io.Writer) error {
	var b strings.Builder
	fmt.Fprintf(&b, "%s", s.Program)
	if s.RunID != "" {
		fmt.Fprintf(&b, ", run %s", s.RunID)
	}
	b.WriteString("\n")
	if s.DemoOpacities {
		b.WriteString("\n" + DemoWarning + "\n")
	}
	b.WriteString("\n")
	for _, kv := range s.overview() {
		fmt.Fprintf(&b, "%-12s %s\n", kv[0], kv[1])
	}
	fn := &footnotes{}
	par := rows(s.Parameters, fn)
	der := rows(s.Derived, fn)
	fmt.Fprintf(&b, "\nparameters: %s\n", IntervalConvention)
	header := []string{"name", "unit", "median", "-68%", "+68%", "-95%", "+95%", "prior", "verdict"}
	align := []int{alignLeft, alignLeft, alignRight, alignRight, alignRight, alignRight, alignRight, alignLeft, alignLeft}
	var cells [][]string
	for _, r := range par {
		cells = append(cells, []string{r.Name, r.Unit, r.Median, r.Lo68, r.Hi68, r.Lo95, r.Hi95, r.Prior, r.Verdict})
	}
	writeColumns(&b, header, align, cells)
	if len(der) > 0 {
		fmt.Fprintf(&b, "\nderived quantities\n")
		cells = cells[:0]
		for _, r := range der {
			cells = append(cells, []string{r.Name, r.Unit, r.Median, r.Lo68, r.Hi68, r.Lo95, r.Hi95})
		}
		writeColumns(&b, header[:7], align[:7], cells)
	}
	if s.Evidence == nil {
		b.WriteString("\ndiagnostics per parameter (tau: integrated autocorrelation time in steps, '>' when the chain is too short for it; ESS: effective samples)\n")
		cells = cells[:0]
		for _, r := range par {
			cells = append(cells, []string{r.Name, r.MaxPost, r.Tau, r.ESS, r.RHat})
		}
		writeColumns(&b, []string{"name", "max-posterior", "tau", "ESS", "R-hat"}, []int{alignLeft, alignRight, alignRight, alignRight, alignRight}, cells)
	}
	if len(fn.text) > 0 {
		b.WriteString("\nnotes\n")
		for i, t := range fn.text {
			fmt.Fprintf(&b, "[%d] %s\n", i+1, t)
		}
	}
	s.writeChecks(&b)
	if ws := s.warningsWithoutBanner(); len(ws) > 0 {
		b.WriteString("\nwarnings\n")
		for _, m := range ws {
			b.WriteString("  - " + m + "\n")
		}
	}
	for _, c := range s.Cautions {
		b.WriteString("\n" + c + "\n")
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// warningsWithoutBanner are the warnings less the demo banner, which the
// texts print once at the top.
func (s *Summary) warningsWithoutBanner() []string {
	var out []string
	for _, m := range s.Warnings {
		if m != DemoWarning {
			out = append(out, m)
		}
	}
	return out
}

// overviewEnsemble lists the facts of an ensemble chain.
func (s *Summary) overviewEnsemble() [][2]string {
	burn := fmt.Sprint(s.Burn)
	if s.BurnAuto {
		burn += fmt.Sprintf(" (auto: %g tau)", AutoBurnTaus)
	}
	out := [][2]string{{"chain", fmt.Sprintf("%d walkers x %d steps; burn-in %s; thinning %d; %d samples", s.Walkers, s.Steps, burn, s.Thin, s.Samples)}}
	if s.Stop != "" {
		out = append(out, [2]string{"stopped", s.Stop})
	}
	out = append(out, [2]string{"acceptance", fmt.Sprintf("mean %.3f (min %.3f, max %.3f)", s.Acceptance.Mean, s.Acceptance.Min, s.Acceptance.Max)})
	conv := "no"
	if s.Converged {
		conv = "yes"
	}
	out = append(out, [2]string{"autocorr.", fmt.Sprintf("largest tau %.1f steps; chain = %.1f tau; converged (>= %g tau): %s", float64(s.MaxTau), float64(s.ChainTaus), sampler.DefaultConvergedTaus, conv)})
	return append(out, [2]string{"best sample", fmt.Sprintf("step %d walker %d: log posterior %.3f, log likelihood %.3f", s.Best.Step, s.Best.Walker, s.Best.LogPosterior, s.Best.LogLikelihood)})
}

// overview lists the run-level facts as label and text.
func (s *Summary) overview() [][2]string {
	var out [][2]string
	if s.Evidence != nil {
		out = s.overviewNested()
	} else {
		out = s.overviewEnsemble()
	}
	if s.Best.DataPoints > 0 {
		out = append(out, [2]string{"", fmt.Sprintf("chi-square %.2f for %d data points and %d free parameters (reduced %.3f)", s.Best.ChiSquare, s.Best.DataPoints, s.Best.FreeParameters, float64(s.Best.ReducedChiSquare))})
	}
	if len(s.InvalidStates) > 0 {
		keys := make([]string, 0, len(s.InvalidStates))
		for k := range s.InvalidStates {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		var parts []string
		for _, k := range keys {
			parts = append(parts, fmt.Sprintf("%d %s", s.InvalidStates[k], k))
		}
		out = append(out, [2]string{"rejected", strings.Join(parts, ", ") + " (invalid physical states)"})
	}
	return out
}
