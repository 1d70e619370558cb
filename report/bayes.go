package report

import (
	"fmt"
	"math"
	"strings"
)

// Bayes factors from evidences, and how the trade states their strength.
//
// ln B = ln Z1 - ln Z2 between two runs of the same data, with the error
// sqrt(e1^2 + e2^2) of two independent nested-sampling estimates. Its
// significance is given twice:
//
//   - as a Gaussian sigma through the calibration of Sellke, Bayarri &
//     Berger (2001, Am. Stat. 55, 62), the same conversion as the
//     Savage-Dickey verdicts (SigmaFromLnB), with no ceiling;
//   - by the convention of Benneke & Seager (2013, ApJ 778, 153, Table 2),
//     which tabulates that calibration and names the strength of a
//     detection by the row reached: ln B >= 1 (2.1 sigma) a weak, >= 2.5
//     (2.7 sigma) a moderate and >= 5 (3.6 sigma) a strong detection; below
//     1 the data do not favour the more complex model significantly.

// StrengthRow is a row of Benneke & Seager's (2013) Table 2: a Bayes
// factor, its natural log, the p-value whose Sellke-Bayarri-Berger bound
// it is, the two-sided Gaussian significance of that p-value, and the
// name of the detection strength from that row on ("" for the rows in
// between).
type StrengthRow struct {
	B, LnB, P, Sigma float64
	Label            string
}

// BennekeSeager2013 is Table 2 of Benneke & Seager (2013, ApJ 778, 153),
// from memory: the rows are the Sellke-Bayarri-Berger calibration
// B = -1/(e p ln p) at round p-values, as printed (two significant
// digits), which the tests check against the formula.
var BennekeSeager2013 = []StrengthRow{
	{B: 2.5, LnB: 0.9, P: 0.05, Sigma: 2.0},
	{B: 2.9, LnB: 1.0, P: 0.04, Sigma: 2.1, Label: "weak detection"},
	{B: 8.0, LnB: 2.1, P: 0.01, Sigma: 2.6},
	{B: 12, LnB: 2.5, P: 0.006, Sigma: 2.7, Label: "moderate detection"},
	{B: 21, LnB: 3.0, P: 0.003, Sigma: 3.0},
	{B: 53, LnB: 4.0, P: 0.001, Sigma: 3.3},
	{B: 150, LnB: 5.0, P: 0.0003, Sigma: 3.6, Label: "strong detection"},
	{B: 43000, LnB: 11, P: 6e-7, Sigma: 5.0},
}

// Strength returns the Benneke & Seager (2013) name of the strength of
// the evidence ln B in favour of a model with something (a gas) over the
// model without it, with the table's threshold and sigma for that name:
// "strong detection", 5, 3.6 for ln B >= 5; "not significant" with the
// weak row's threshold and sigma (ln B < 1, below 2.1 sigma) otherwise.
func Strength(lnB float64) (label string, lnBMin, sigma float64) {
	label, lnBMin, sigma = "not significant", 1, 2.1
	for _, r := range BennekeSeager2013 {
		if r.Label != "" && lnB >= r.LnB {
			label, lnBMin, sigma = r.Label, r.LnB, r.Sigma
		}
	}
	return label, lnBMin, sigma
}

// StrengthText is Strength in words: "strong detection (ln B >= 5, 3.6
// sigma in Benneke & Seager 2013, Table 2)", or "not significant (ln B <
// 1, below 2.1 sigma in ...)".
func StrengthText(lnB float64) string {
	label, min, sigma := Strength(lnB)
	if lnB < min {
		return fmt.Sprintf("%s (ln B < %g, below %.1f sigma in Benneke & Seager 2013, Table 2)", label, min, sigma)
	}
	return fmt.Sprintf("%s (ln B >= %g, %.1f sigma in Benneke & Seager 2013, Table 2)", label, min, sigma)
}

// RunEvidence is the evidence of one run of a comparison.
type RunEvidence struct {
	Label    string  `json:"label"`
	LnZ      float64 `json:"ln_z"`
	LnZErr   float64 `json:"ln_z_error"`
	H        float64 `json:"information"`
	Finished bool    `json:"finished"`
}

// BayesFactor compares the evidences of two runs of the same data.
type BayesFactor struct {
	A      string  `json:"a"` // run labels
	B      string  `json:"b"`
	LnB    float64 `json:"ln_b"` // ln Z_A - ln Z_B
	LnBErr float64 `json:"ln_b_error"`
	// Favours is the label of the run of higher evidence; Sigma the
	// Sellke-Bayarri-Berger significance of |LnB| and Strength its Benneke
	// & Seager (2013) name (for nested models: the more complex one
	// against the simpler).
	Favours  string  `json:"favours"`
	Sigma    float64 `json:"sigma"`
	Strength string  `json:"strength"`
}

// bayesFactors fills c.Evidence and c.BayesFactors from the runs that
// have an evidence, pairing the runs of the same data; notes say which
// runs have none or fit other data.
func (c *Comparison) bayesFactors(runs []CompareRun) {
	var with []int
	for i, r := range runs {
		e := r.Summary.Evidence
		if e == nil {
			continue
		}
		with = append(with, i)
		c.Evidence = append(c.Evidence, RunEvidence{Label: r.Label, LnZ: e.LogZ, LnZErr: e.LogZErr, H: e.Information, Finished: e.Finished})
		if !e.Finished {
			c.Notes = append(c.Notes, fmt.Sprintf("run %s has not finished its nested sampling: its ln Z is an estimate that includes the live points", r.Label))
		}
	}
	if len(with) == 0 {
		return
	}
	for _, r := range runs {
		if r.Summary.Evidence == nil {
			c.Notes = append(c.Notes, fmt.Sprintf("run %s has no evidence (only nested sampling, sampler.method = \"nested\", computes it): no Bayes factor", r.Label))
		}
	}
	other := false // some pair fits different observations
	for a := 0; a < len(with); a++ {
		for b := a + 1; b < len(with); b++ {
			ra, rb := runs[with[a]], runs[with[b]]
			ea, eb := ra.Summary.Evidence, rb.Summary.Evidence
			if ea.Data != eb.Data || ea.Data == "" {
				other = true
				continue
			}
			lnB, err := LnB(ea.LogZ, ea.LogZErr, eb.LogZ, eb.LogZErr)
			bf := BayesFactor{A: ra.Label, B: rb.Label, LnB: lnB, LnBErr: err, Favours: ra.Label, Sigma: SigmaFromLnB(math.Abs(lnB))}
			if lnB < 0 {
				bf.Favours = rb.Label
			}
			label, _, _ := Strength(math.Abs(lnB))
			bf.Strength = strings.TrimSuffix(label, " detection") // the runs need not be nested models
			c.BayesFactors = append(c.BayesFactors, bf)
		}
	}
	if other {
		c.Notes = append(c.Notes, "evidences of runs that fit different observations are not comparable: Bayes factors are given only between runs of the same data")
	}
}

// writeEvidence writes the evidences and Bayes factors of the comparison.
func (c *Comparison) writeEvidence(b *strings.Builder) {
	if len(c.Evidence) == 0 {
		return
	}
	b.WriteString("\nevidence (nested sampling): ln Z with its statistical error sqrt(H/N); H the information in nats\n")
	var cells [][]string
	for _, e := range c.Evidence {
		fin := "yes"
		if !e.Finished {
			fin = "no"
		}
		cells = append(cells, []string{e.Label, fmt.Sprintf("%.2f", e.LnZ), fmt.Sprintf("± %.2f", e.LnZErr), fmt.Sprintf("%.1f", e.H), fin})
	}
	writeColumns(b, []string{"run", "ln Z", "error", "H", "finished"}, []int{alignLeft, alignRight, alignRight, alignRight, alignLeft}, cells)
	if len(c.BayesFactors) == 0 {
		return
	}
	b.WriteString("\nln Bayes factors between runs of the same data: ln B = ln Z(a) - ln Z(b), error sqrt(e_a^2 + e_b^2);\n")
	b.WriteString("sigma by Sellke, Bayarri & Berger (2001), strength by Benneke & Seager (2013, Table 2: weak >= 1, moderate >= 2.5, strong >= 5)\n")
	cells = cells[:0]
	for _, f := range c.BayesFactors {
		cells = append(cells, []string{f.A, f.B, fmt.Sprintf("%.2f", f.LnB), fmt.Sprintf("± %.2f", f.LnBErr), f.Favours, fmt.Sprintf("%.1f", f.Sigma), f.Strength})
	}
	writeColumns(b, []string{"a", "b", "ln B", "error", "favours", "sigma", "strength"}, []int{alignLeft, alignLeft, alignRight, alignRight, alignLeft, alignRight, alignLeft}, cells)
}
