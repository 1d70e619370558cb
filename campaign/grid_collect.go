package campaign

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"path/filepath"
	"strings"

	"chord/internal/atomicfile"
	"chord/internal/table"
	"chord/report"
	"chord/retrieve"
)

// ErrNotDone is the error of collecting a grid whose points are not all
// done.
var ErrNotDone = errors.New("points are not done")

// GridCollection is what CollectGrid writes: the summary table and the
// width-against-noise comparisons.
type GridCollection struct {
	Rows int // rows of summary.csv (points x parameters)
	// Groups are the comparisons: the points that differ only in their
	// noise axis (observe.noise_ppm or observe.transits) are compared with
	// each other, one group per combination of the other axes; without a
	// noise axis every point is in one group.
	Groups []GridGroup
	Table  string // the comparisons as text (comparison.txt)
}

// GridGroup is one comparison of a grid.
type GridGroup struct {
	Fixed      string // the other axes' values, e.g. "clouds.cloud_top_bar=0.01"
	Points     []int
	Comparison *report.Comparison
	Plot       string // widths plot, "" when the group's noise levels are all equal
}

// CollectGrid reads every point's summary.json and writes
// GRIDDIR/summary.csv and summary.parquet (one row per point and
// parameter: the point's axis values, noise level, and the parameter's
// percentiles, widths, autocorrelation time and gas verdict), and the
// width-against-noise comparisons of chord compare (comparison.txt,
// comparison.json, widths.png or widths-gNN.png). A point without a summary
// is an error naming it, with its state.
func (g *Grid) CollectGrid() (*GridCollection, error) {
	st, err := g.Status()
	if err != nil {
		return nil, err
	}
	var missing []string
	for _, s := range st {
		if s.State != PointDone {
			missing = append(missing, fmt.Sprintf("%d (%s)", s.Index, s))
		}
	}
	if len(missing) > 0 {
		return nil, fmt.Errorf("grid: collect: %d of %d %w: %s", len(missing), len(g.Points), ErrNotDone, strings.Join(missing, ", "))
	}
	runs, n, err := g.writeSummaryTable()
	if err != nil {
		return nil, err
	}
	out := &GridCollection{Rows: n, Groups: g.noiseGroups()}
	txt, js, err := g.compareGroups(out.Groups, runs)
	if err != nil {
		return nil, err
	}
	out.Table = string(txt)
	jb, err := json.MarshalIndent(js, "", "  ")
	if err != nil {
		return nil, err
	}
	if err := atomicfile.Write(filepath.Join(g.Dir, "comparison.txt"), txt, true); err != nil {
		return nil, err
	}
	if err := atomicfile.Write(filepath.Join(g.Dir, "comparison.json"), append(jb, '\n'), true); err != nil {
		return nil, err
	}
	return out, nil
}

// writeSummaryTable writes summary.csv and summary.parquet, one row per
// point and parameter, and returns the points' summaries for comparison
// and the number of rows.
func (g *Grid) writeSummaryTable() ([]report.CompareRun, int, error) {
	cols := append([]table.Column{{Name: "point", Kind: 'i'}, {Name: "dir", Kind: 's'}}, g.axisCols()...)
	cols = append(cols, []table.Column{{Name: "noise_ppm", Kind: 'f'}, {Name: "steps", Kind: 'i'}, {Name: "samples", Kind: 'i'}, {Name: "converged", Kind: 'b'},
		{Name: "parameter", Kind: 's'}, {Name: "unit", Kind: 's'}, {Name: "median", Kind: 'f'}, {Name: "p16", Kind: 'f'}, {Name: "p84", Kind: 'f'}, {Name: "p2_5", Kind: 'f'}, {Name: "p97_5", Kind: 'f'},
		{Name: "width_68", Kind: 'f'}, {Name: "width_95", Kind: 'f'}, {Name: "mean", Kind: 'f'}, {Name: "std_dev", Kind: 'f'}, {Name: "max_posterior", Kind: 'f'},
		{Name: "tau", Kind: 'f'}, {Name: "ess", Kind: 'f'}, {Name: "gas_class", Kind: 's'}, {Name: "gas_verdict", Kind: 's'}}...)
	var rows [][]any
	runs := make([]report.CompareRun, len(g.Points))
	for i, p := range g.Points {
		s, err := report.ReadSummary(g.RunDir(i))
		if err != nil {
			return nil, 0, err
		}
		noise, err := retrieve.RunNoisePPM(g.RunDir(i))
		if err != nil {
			return nil, 0, err
		}
		runs[i] = report.CompareRun{Label: p.Name, NoisePPM: noise, Summary: s}
		for _, c := range s.Parameters {
			r := []any{int64(i), filepath.Join("points", p.Name)}
			r = append(r, p.Values...)
			class, verdict := "", ""
			if c.Gas != nil {
				class, verdict = c.Gas.Class.String(), c.Gas.Verdict
			}
			r = append(r, noise, int64(s.Steps), int64(s.Samples), s.Converged, c.Name, c.Unit,
				c.Median, c.P16, c.P84, c.P2_5, c.P97_5, c.P84-c.P16, c.P97_5-c.P2_5, c.Mean, c.StdDev, c.MaxPost,
				float64(c.Tau), float64(c.ESS), class, verdict)
			rows = append(rows, r)
		}
	}
	if err := table.Write(g.Dir, "summary", cols, rows, map[string]string{"chord.grid_identity": g.rec.Identity}); err != nil {
		return nil, 0, err
	}
	return runs, len(rows), nil
}

// noiseGroups groups the points that differ only in their noise axis
// (observe.noise_ppm or observe.transits), one group per combination of
// the other axes; without a noise axis every point is in one group.
func (g *Grid) noiseGroups() []GridGroup {
	var groups []GridGroup
	noiseAxis := -1
	for k, a := range g.rec.Axes {
		if a.Key == AxisNoisePPM || a.Key == AxisTransits {
			noiseAxis = k
		}
	}
	index := map[string]int{}
	for i := range g.Points {
		var fixed []string
		for k, a := range g.rec.Axes {
			if noiseAxis >= 0 && k != noiseAxis {
				fixed = append(fixed, a.Key+"="+table.FormatValue(g.Points[i].Values[k]))
			}
		}
		key := strings.Join(fixed, " ")
		gi, ok := index[key]
		if !ok {
			gi = len(groups)
			index[key] = gi
			groups = append(groups, GridGroup{Fixed: key})
		}
		groups[gi].Points = append(groups[gi].Points, i)
	}
	return groups
}

// jsonGroup is one group of comparison.json.
type jsonGroup struct {
	Fixed      string             `json:"fixed,omitempty"`
	Points     []int              `json:"points"`
	Comparison *report.Comparison `json:"comparison"`
}

// compareGroups compares the points of each group (runs: every point's
// summary), draws the widths plots and returns the comparisons as text
// and as JSON values.
func (g *Grid) compareGroups(groups []GridGroup, runs []report.CompareRun) ([]byte, []jsonGroup, error) {
	var txt bytes.Buffer
	var js []jsonGroup
	for gi := range groups {
		gr := &groups[gi]
		rs := make([]report.CompareRun, len(gr.Points))
		for j, i := range gr.Points {
			rs[j] = runs[i]
			rs[j].Label = g.Points[i].Name + " " + g.Settings(i)
		}
		c, err := report.Compare(rs)
		if err != nil {
			return nil, nil, err
		}
		gr.Comparison = c
		if len(groups) > 1 {
			fmt.Fprintf(&txt, "== group %d: %s\n", gi+1, gr.Fixed)
		}
		if err := c.WriteTable(&txt); err != nil {
			return nil, nil, err
		}
		txt.WriteString("\n")
		js = append(js, jsonGroup{Fixed: gr.Fixed, Points: gr.Points, Comparison: c})
		if distinctNoise(rs) {
			name := "widths.png"
			if len(groups) > 1 {
				name = fmt.Sprintf("widths-g%02d.png", gi+1)
			}
			gr.Plot = filepath.Join(g.Dir, name)
			if err := c.WritePlot(gr.Plot); err != nil {
				return nil, nil, err
			}
		}
	}
	return txt.Bytes(), js, nil
}
