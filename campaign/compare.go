package campaign

import (
	"errors"
	"fmt"
	"path/filepath"

	"chord/report"
	"chord/retrieve"
)

// CompareDirs compares the run directories: their summary.json and the
// noise level of their observations.
func CompareDirs(dirs []string) (*report.Comparison, error) {
	if len(dirs) == 0 {
		return nil, errors.New("compare: give at least one run directory")
	}
	runs := make([]report.CompareRun, len(dirs))
	seen := map[string]bool{}
	for i, d := range dirs {
		s, err := report.ReadSummary(d)
		if err != nil {
			return nil, err
		}
		n, err := retrieve.RunNoisePPM(d)
		if err != nil {
			return nil, err
		}
		label := filepath.Clean(d)
		if seen[label] {
			return nil, fmt.Errorf("compare: run %s given twice", d)
		}
		seen[label] = true
		runs[i] = report.CompareRun{Label: label, NoisePPM: n, Summary: s}
	}
	return report.Compare(runs)
}

// PlotMarginalsDirs overlays the marginal posteriors of the parameters of
// cmp (those every run shares) of the run directories, to base.png and
// base.svg.
func PlotMarginalsDirs(base string, dirs []string, cmp *report.Comparison) error {
	runs := make([]report.MarginalRun, len(dirs))
	for i, d := range dirs {
		c, err := retrieve.ReadPosterior(d)
		if err != nil {
			return fmt.Errorf("run %s: %w", d, err)
		}
		runs[i] = report.MarginalRun{Label: filepath.Clean(d), Chain: c}
	}
	names := make([]string, len(cmp.Parameters))
	for i, p := range cmp.Parameters {
		names[i] = p.Name
	}
	return report.PlotMarginals(base, runs, names)
}
