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
