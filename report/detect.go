package report

import (
	"encoding/json"
	"fmt"
	"io"
	"math"
	"slices"
	"strings"
)

// Detection of gases by evidence (chord detect, chord plan --detect).
//
// The full model is fitted once and, for each gas, the reduced model with
// the gas's log10 mixing ratio held at its uniform prior's lower edge
// (config.Config.Without), both by nested sampling on the same data. Then
//
//	ln B = ln Z(full) - ln Z(without gas),  error sqrt(e_full^2 + e_without^2),
//
// is the Bayes factor that the Savage-Dickey density ratio estimates from
// the full run alone (the reduced model is its nested model M0), without
// that estimate's ceiling: the evidence needs no samples near the prior
// edge. It is converted to a sigma with the calibration of Sellke, Bayarri
// & Berger (2001), as the Savage-Dickey verdicts are (SigmaFromLnB), and
// named by the convention of Benneke & Seager (2013, Table 2; Strength).
// A gas is called detected at DetectSigma or more when the prior edge
// means absent (AbsentLog10, AbsentDecades), the rule of ClassifyGas.

// EvidenceDetection is the detection of one gas by evidence.
type EvidenceDetection struct {
	Label   string `json:"label,omitempty"` // the plan level, or "" for one detection
	Gas     string `json:"gas"`
	Full    string `json:"full_run"`    // the run directories
	Reduced string `json:"reduced_run"` // without the gas
	// LnZFull and LnZReduced are the runs' log evidences with their errors.
	LnZFull       float64 `json:"ln_z_full"`
	LnZFullErr    float64 `json:"ln_z_full_error"`
	LnZReduced    float64 `json:"ln_z_without"`
	LnZReducedErr float64 `json:"ln_z_without_error"`
	// LnB is ln Z(full) - ln Z(without) with its error.
	LnB    float64 `json:"ln_b"`
	LnBErr float64 `json:"ln_b_error"`
	// Sigma is the Sellke-Bayarri-Berger significance of LnB (0 when the
	// data favour the reduced model).
	Sigma float64 `json:"sigma"`
	// Strength names LnB by Benneke & Seager (2013, Table 2).
	Strength string   `json:"strength"`
	Class    GasClass `json:"class"`
	// EdgeMeansAbsent is whether the prior's lower edge, at which the
	// reduced model holds the gas, is low enough to mean absent.
	EdgeMeansAbsent bool `json:"edge_means_absent"`
	// Finished is set when both runs finished their nested sampling.
	Finished bool `json:"finished"`
	// SavageDickey is the full run's one-run verdict on the gas, for
	// comparison ("" when it has none).
	SavageDickey string `json:"savage_dickey,omitempty"`
}

// DetectionTable is the result of DetectByEvidence (detection.json).
type DetectionTable struct {
	Detections []EvidenceDetection `json:"detections"`
	Notes      []string            `json:"notes,omitempty"`
	Cautions   []string            `json:"cautions,omitempty"`
	Demo       bool                `json:"demo_opacities"`
}

// DetectRun is a run of a detection: its directory (label) and summary.
type DetectRun struct {
	Dir     string
	Summary *Summary
}

// DetectByEvidence computes the detection of each gas from the full run
// and the reduced run without it (reduced, keyed by gas), labelling the
// rows with label. Every run must be a nested-sampling run of the same
// data, and each gas a free log10 mixing ratio of the full run with a
// uniform prior.
func (t *DetectionTable) DetectByEvidence(label string, full DetectRun, gases []string, reduced map[string]DetectRun) error {
	fe := full.Summary.Evidence
	if fe == nil {
		return fmt.Errorf("detect: run %s has no evidence (it was not made by nested sampling)", full.Dir)
	}
	t.Demo = t.Demo || full.Summary.DemoOpacities
	for _, g := range gases {
		r, ok := reduced[g]
		if !ok {
			return fmt.Errorf("detect: no run without %s", g)
		}
		re := r.Summary.Evidence
		switch {
		case re == nil:
			return fmt.Errorf("detect: run %s has no evidence (it was not made by nested sampling)", r.Dir)
		case re.Data != fe.Data:
			return fmt.Errorf("detect: runs %s and %s fit different observations", full.Dir, r.Dir)
		}
		par := slices.IndexFunc(full.Summary.Parameters, func(p ColumnSummary) bool { return p.Gas != nil && p.Gas.Gas == g })
		if par < 0 {
			return fmt.Errorf("detect: run %s has no free log10 mixing ratio of %s with a uniform prior", full.Dir, g)
		}
		p := full.Summary.Parameters[par]
		d := EvidenceDetection{
			Label: label, Gas: g, Full: full.Dir, Reduced: r.Dir,
			LnZFull: fe.LogZ, LnZFullErr: fe.LogZErr, LnZReduced: re.LogZ, LnZReducedErr: re.LogZErr,
			Finished: fe.Finished && re.Finished, SavageDickey: p.Gas.Verdict,
			EdgeMeansAbsent: p.Gas.EdgeMeansAbsent,
		}
		d.LnB, d.LnBErr = LnB(fe.LogZ, fe.LogZErr, re.LogZ, re.LogZErr)
		d.Sigma = SigmaFromLnB(d.LnB)
		d.Strength, _, _ = Strength(d.LnB)
		switch {
		case d.Sigma >= DetectSigma && d.EdgeMeansAbsent:
			d.Class = Detected
		case d.Sigma < UpperLimitSigma:
			d.Class = UpperLimit
		default:
			d.Class = Constrained
		}
		if !d.EdgeMeansAbsent {
			t.addNote(fmt.Sprintf("%s: the prior's lower edge (1e%g) is not low enough to mean absent, so ln B measures the evidence for a mixing ratio above it, not for the gas's presence; no detection is claimed", g, lowEdge(p.Prior)))
		}
		if !d.Finished {
			t.addNote(fmt.Sprintf("%s: a run of this detection has not finished its nested sampling; ln B is an estimate (resume the runs)", g))
		}
		fs := full.Summary
		if c := Caution(g, d.Class, fs.Atmosphere, fs.limbTemperature()); c != "" && !slices.Contains(t.Cautions, c) {
			t.Cautions = append(t.Cautions, c)
		}
		t.Detections = append(t.Detections, d)
	}
	return nil
}

func (t *DetectionTable) addNote(n string) {
	if !slices.Contains(t.Notes, n) {
		t.Notes = append(t.Notes, n)
	}
}

// lowEdge reads the lower edge of a "uniform(low, high)" prior's text, or
// NaN.
func lowEdge(prior string) float64 {
	var lo, hi float64
	if _, err := fmt.Sscanf(prior, "uniform(%g, %g)", &lo, &hi); err != nil {
		return math.NaN()
	}
	return lo
}

// WriteJSON writes the table as indented JSON.
func (t *DetectionTable) WriteJSON(w io.Writer) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(t)
}

// WriteText writes the table for people.
func (t *DetectionTable) WriteText(w io.Writer) error {
	var b strings.Builder
	if t.Demo {
		b.WriteString(DemoWarning + "\n\n")
	}
	b.WriteString("detection by evidence: ln B = ln Z(full) - ln Z(without the gas, held at its prior's lower edge),\n")
	b.WriteString("error sqrt(e_full^2 + e_without^2); sigma by Sellke, Bayarri & Berger (2001), no ceiling;\n")
	b.WriteString("strength by Benneke & Seager (2013, Table 2: weak >= 1, moderate >= 2.5, strong >= 5)\n\n")
	labels := slices.ContainsFunc(t.Detections, func(d EvidenceDetection) bool { return d.Label != "" })
	var header []string
	var align []int
	if labels {
		header, align = append(header, "level"), append(align, alignLeft)
	}
	header = append(header, "gas", "ln Z full", "ln Z without", "ln B", "error", "sigma", "strength", "verdict", "Savage-Dickey (full run)")
	align = append(align, alignLeft, alignRight, alignRight, alignRight, alignRight, alignRight, alignLeft, alignLeft, alignLeft)
	var cells [][]string
	for _, d := range t.Detections {
		var row []string
		if labels {
			row = append(row, d.Label)
		}
		sd, _, _ := strings.Cut(d.SavageDickey, "; ")
		if sd == "" {
			sd = "-"
		}
		row = append(row, d.Gas, fmt.Sprintf("%.2f", d.LnZFull), fmt.Sprintf("%.2f", d.LnZReduced), fmt.Sprintf("%.2f", d.LnB),
			fmt.Sprintf("± %.2f", d.LnBErr), fmt.Sprintf("%.1f", d.Sigma), d.Strength, d.Class.String(), sd)
		cells = append(cells, row)
	}
	writeColumns(&b, header, align, cells)
	for _, n := range t.Notes {
		b.WriteString("\nnote: " + n + "\n")
	}
	for _, c := range t.Cautions {
		b.WriteString("\n" + c + "\n")
	}
	_, err := io.WriteString(w, b.String())
	return err
}
