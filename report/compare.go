package report

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"text/tabwriter"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Comparison of posterior widths between runs (chord compare, chord plan).
//
// For each free parameter common to all runs: the 68% width (84th minus
// 16th percentile) and the 95% width (97.5th minus 2.5th percentile) of its
// marginal posterior in every run, each as a ratio to the first run's, next
// to the run's noise level (NoiseLevel of its observation). In the
// linear-Gaussian regime a well-constrained parameter's width is
// proportional to the noise (the posterior covariance is (A^T N^-1 A)^-1,
// which scales with the noise variance; standard result), which the plot
// shows as a reference line. Gas verdicts (detected, constrained, upper
// limit) from the summaries are carried along, since the width of an upper
// limit is the width of the prior's unexcluded part, not a measurement.

// CompareRun is one run to compare.
type CompareRun struct {
	Label    string  // how the run is named in tables and plots (its directory)
	NoisePPM float64 // NoiseLevel of the run's observation (ppm)
	Summary  *Summary
}

// Comparison is the result of Compare, also written as JSON by WriteJSON.
type Comparison struct {
	Runs       []ComparedRun     `json:"runs"`
	Parameters []ParameterWidths `json:"parameters"`
	// Evidence lists the runs made by nested sampling with their ln Z, and
	// BayesFactors compares each pair of them that fits the same data
	// (bayes.go).
	Evidence     []RunEvidence      `json:"evidence,omitempty"`
	BayesFactors []BayesFactor      `json:"bayes_factors,omitempty"`
	Dropped      []DroppedParameter `json:"dropped,omitempty"`
	Notes        []string           `json:"notes,omitempty"`
	Cautions     []string           `json:"cautions,omitempty"`
	byName       map[string]*ParameterWidths
}

// ComparedRun names a run and its noise level.
type ComparedRun struct {
	Label    string  `json:"label"`
	NoisePPM float64 `json:"noise_ppm"`
}

// ParameterWidths holds one parameter's widths, one entry per run in the
// order of Comparison.Runs.
type ParameterWidths struct {
	Name  string     `json:"name"`
	Unit  string     `json:"unit,omitempty"`
	Width []RunWidth `json:"runs"`
}

// RunWidth is one parameter's posterior width in one run.
type RunWidth struct {
	Median  float64 `json:"median"`
	Width68 float64 `json:"width_68"`
	Width95 float64 `json:"width_95"`
	Ratio68 float64 `json:"ratio_68"` // Width68 over the first run's
	Ratio95 float64 `json:"ratio_95"`
	// Gas is the verdict for a gas's log mixing ratio ("detected, 4.1
	// sigma ..."), empty for other parameters.
	Gas   string   `json:"gas_verdict,omitempty"`
	Class GasClass `json:"gas_class,omitempty"`
}

// DroppedParameter is a parameter left out because some runs lack it.
type DroppedParameter struct {
	Name      string   `json:"name"`
	MissingIn []string `json:"missing_in"`
}

// Compare lines up the runs' posterior widths. Parameters that are not in
// every run are dropped and listed (Comparison.Dropped, and a note); no
// parameter in common, fewer than one run, a run without a summary or a
// noise level <= 0 are errors.
func Compare(runs []CompareRun) (*Comparison, error) {
	if len(runs) == 0 {
		return nil, errors.New("compare: no runs given")
	}
	for _, r := range runs {
		if r.Summary == nil {
			return nil, fmt.Errorf("compare: run %s has no summary", r.Label)
		}
		if !(r.NoisePPM > 0) || math.IsInf(r.NoisePPM, 0) {
			return nil, fmt.Errorf("compare: run %s: noise level %g ppm, must be positive", r.Label, r.NoisePPM)
		}
	}
	c := &Comparison{byName: map[string]*ParameterWidths{}}
	for _, r := range runs {
		c.Runs = append(c.Runs, ComparedRun{Label: r.Label, NoisePPM: r.NoisePPM})
	}
	// Parameters in the first run's order, kept when every run has them.
	index := make([]map[string]ColumnSummary, len(runs))
	for i, r := range runs {
		index[i] = make(map[string]ColumnSummary, len(r.Summary.Parameters))
		for _, p := range r.Summary.Parameters {
			index[i][p.Name] = p
		}
	}
	var names []string
	seen := map[string]bool{}
	for _, r := range runs {
		for _, p := range r.Summary.Parameters {
			if !seen[p.Name] {
				seen[p.Name] = true
				names = append(names, p.Name)
			}
		}
	}
	for _, name := range names {
		var missing []string
		for i, r := range runs {
			if _, ok := index[i][name]; !ok {
				missing = append(missing, r.Label)
			}
		}
		if len(missing) > 0 {
			c.Dropped = append(c.Dropped, DroppedParameter{Name: name, MissingIn: missing})
			continue
		}
		pw := ParameterWidths{Name: name, Unit: index[0][name].Unit}
		for i := range runs {
			p := index[i][name]
			w := RunWidth{Median: p.Median, Width68: p.P84 - p.P16, Width95: p.P97_5 - p.P2_5}
			if p.Gas != nil {
				w.Gas, w.Class = p.Gas.Verdict, p.Gas.Class
			}
			pw.Width = append(pw.Width, w)
		}
		for i := range pw.Width {
			pw.Width[i].Ratio68 = pw.Width[i].Width68 / pw.Width[0].Width68
			pw.Width[i].Ratio95 = pw.Width[i].Width95 / pw.Width[0].Width95
		}
		c.Parameters = append(c.Parameters, pw)
	}
	if len(c.Parameters) == 0 {
		return nil, fmt.Errorf("compare: the runs have no free parameter in common (%s)", strings.Join(names, ", "))
	}
	for i := range c.Parameters {
		c.byName[c.Parameters[i].Name] = &c.Parameters[i]
	}
	// Each run's summary holds the cautions its detections call for, with
	// the context of its atmosphere (Caution).
	for _, r := range runs {
		for _, m := range r.Summary.Cautions {
			if !slices.Contains(c.Cautions, m) {
				c.Cautions = append(c.Cautions, m)
			}
		}
	}
	for _, d := range c.Dropped {
		c.Notes = append(c.Notes, fmt.Sprintf("parameter %s dropped: not in run(s) %s", d.Name, strings.Join(d.MissingIn, ", ")))
	}
	for _, r := range runs {
		if r.Summary.DemoOpacities {
			c.Notes = append(c.Notes, DemoWarning)
			break
		}
	}
	for _, r := range runs {
		if !r.Summary.Converged && r.Summary.Evidence == nil {
			c.Notes = append(c.Notes, fmt.Sprintf("run %s is not converged: its widths are not final", r.Label))
		}
	}
	c.bayesFactors(runs)
	return c, nil
}

// Parameter returns the widths of the named parameter, or nil.
func (c *Comparison) Parameter(name string) *ParameterWidths { return c.byName[name] }

// WriteJSON writes the comparison as indented JSON.
func (c *Comparison) WriteJSON(w io.Writer) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(c)
}

// WriteTable writes the comparison for people: one row per parameter and
// run.
func (c *Comparison) WriteTable(w io.Writer) error {
	var b strings.Builder
	b.WriteString("posterior widths: 68% = 84th-16th percentile, 95% = 97.5th-2.5th; ratios to the first run\n\n")
	tw := tabwriter.NewWriter(&b, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "parameter\tunit\trun\tnoise ppm\tmedian\t68% width\tratio\t95% width\tratio\tverdict")
	for _, p := range c.Parameters {
		unit := p.Unit
		if unit == "" {
			unit = "-"
		}
		for i, r := range p.Width {
			verdict := r.Gas
			if verdict == "" {
				verdict = "-"
			}
			fmt.Fprintf(tw, "%s\t%s\t%s\t%.4g\t%.4g\t%.3g\t%.2f\t%.3g\t%.2f\t%s\n",
				p.Name, unit, c.Runs[i].Label, c.Runs[i].NoisePPM, r.Median, r.Width68, r.Ratio68, r.Width95, r.Ratio95, verdict)
		}
	}
	tw.Flush()
	c.writeEvidence(&b)
	for _, n := range c.Notes {
		b.WriteString("\nnote: " + n + "\n")
	}
	for _, m := range c.Cautions {
		b.WriteString("\n" + m + "\n")
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// WritePlot draws the 68% width against the noise level, one panel per
// parameter on log-log axes, with the line width proportional to noise
// through the first run for reference, and writes it as PNG and SVG (path
// with its extension replaced by .png and .svg).
// Upper limits are drawn as open triangles (their width is not a
// measurement). It needs at least two runs with different noise levels.
func (c *Comparison) WritePlot(path string) error {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, r := range c.Runs {
		lo, hi = math.Min(lo, r.NoisePPM), math.Max(hi, r.NoisePPM)
	}
	if !(hi > lo) {
		return fmt.Errorf("compare: plot %s: the runs have one noise level (%g ppm); widths against noise need at least two", path, lo)
	}
	n := len(c.Parameters)
	cols := int(math.Ceil(math.Sqrt(float64(n))))
	rows := (n + cols - 1) / cols
	plots := make([][]*plot.Plot, rows)
	for i := range plots {
		plots[i] = make([]*plot.Plot, cols)
	}
	for k, p := range c.Parameters {
		pl, err := widthPanel(p, c.Runs, lo, hi)
		if err != nil {
			return fmt.Errorf("compare: plot %s: %w", path, err)
		}
		plots[k/cols][k%cols] = pl
	}
	const tile = 3 * vg.Inch
	fig := figure{w: vg.Length(cols) * tile, h: vg.Length(rows) * tile, draw: func(dc draw.Canvas) error {
		t := draw.Tiles{Rows: rows, Cols: cols, PadTop: 4, PadBottom: 4, PadLeft: 4, PadRight: 8, PadX: 12, PadY: 12}
		canvases := plot.Align(plots, t, dc)
		for i := range plots {
			for j, pl := range plots[i] {
				if pl != nil {
					pl.Draw(canvases[i][j])
				}
			}
		}
		return nil
	}}
	if err := fig.save(pathBase(path)); err != nil {
		return fmt.Errorf("compare: plot %s: %w", path, err)
	}
	return nil
}

func widthPanel(p ParameterWidths, runs []ComparedRun, lo, hi float64) (*plot.Plot, error) {
	pl := plot.New()
	pl.Title.Text = p.Name
	pl.X.Label.Text = "noise (ppm)"
	pl.Y.Label.Text = "68% width"
	if p.Unit != "" {
		pl.Y.Label.Text += " (" + p.Unit + ")"
	}
	pl.X.Scale, pl.Y.Scale = plot.LogScale{}, plot.LogScale{}
	pl.X.Tick.Marker, pl.Y.Tick.Marker = logTicks{}, logTicks{}
	var meas, lim plotter.XYs
	for i, r := range p.Width {
		if !(r.Width68 > 0) {
			continue // a zero width (fixed or stuck) has no place on log axes
		}
		pt := plotter.XY{X: runs[i].NoisePPM, Y: r.Width68}
		if r.Class == UpperLimit {
			lim = append(lim, pt)
		} else {
			meas = append(meas, pt)
		}
	}
	if w0 := p.Width[0].Width68; w0 > 0 {
		ref := plotter.XYs{{X: lo, Y: w0 * lo / runs[0].NoisePPM}, {X: hi, Y: w0 * hi / runs[0].NoisePPM}}
		l, err := plotter.NewLine(ref)
		if err != nil {
			return nil, err
		}
		l.Dashes = []vg.Length{vg.Points(4), vg.Points(3)}
		pl.Add(l)
		pl.Legend.Add("width proportional to noise", l)
	}
	if len(meas) > 0 {
		s, err := plotter.NewScatter(meas)
		if err != nil {
			return nil, err
		}
		s.GlyphStyle.Shape = draw.CircleGlyph{}
		s.GlyphStyle.Radius = vg.Points(3)
		pl.Add(s)
	}
	if len(lim) > 0 {
		s, err := plotter.NewScatter(lim)
		if err != nil {
			return nil, err
		}
		s.GlyphStyle.Shape = draw.TriangleGlyph{}
		s.GlyphStyle.Radius = vg.Points(3)
		pl.Add(s)
		pl.Legend.Add("upper limit", s)
	}
	pl.Legend.Top = true
	pl.Legend.Left = true
	// Some room around the points, so none sits on a frame.
	pl.X.Min, pl.X.Max = lo/1.25, hi*1.25
	ylo, yhi := math.Inf(1), math.Inf(-1)
	for _, xy := range append(meas, lim...) {
		ylo, yhi = math.Min(ylo, xy.Y), math.Max(yhi, xy.Y)
	}
	if ylo <= yhi {
		pl.Y.Min, pl.Y.Max = ylo/1.6, yhi*1.6
	}
	return pl, nil
}

// ReadSummary reads a run directory's summary.json.
func ReadSummary(dir string) (*Summary, error) {
	path := filepath.Join(dir, "summary.json")
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("run %s: %w", dir, err)
	}
	var s Summary
	if err := json.Unmarshal(b, &s); err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return &s, nil
}
