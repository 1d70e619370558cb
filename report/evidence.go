package report

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"

	"chord/chains"
)

// Evidence of a nested-sampling run (Skilling 2006, Bayesian Analysis 1,
// 833; docs/evidence.md).
//
// A nested run's summary is made from equally weighted posterior samples
// (chains.ReadEqualWeight: the dead points resampled by their weights, as
// many as the weights' Kish effective size). They are independent draws
// as far as the resampling goes, so the summary has no autocorrelation
// time, acceptance or R-hat; it has the evidence instead.

// Evidence is what a nested-sampling run adds to its summary (the
// "evidence" object of summary.json).
type Evidence struct {
	// LogZ is the natural log of the evidence, with its statistical error
	// sqrt(H/N) (Skilling 2006, sect. 9) and the information H (nats).
	LogZ        float64 `json:"ln_z"`
	LogZErr     float64 `json:"ln_z_error"`
	Information float64 `json:"information"`
	LivePoints  int     `json:"live_points"`
	DeadPoints  int     `json:"dead_points"` // final live points included once finished
	Evaluations int64   `json:"evaluations"` // likelihood evaluations, initial points included
	// EffectiveSize is Kish's effective size of the dead points' weights,
	// the number of equal-weight samples drawn.
	EffectiveSize float64 `json:"effective_size"`
	// Finished is set when the live points could raise ln Z by less than
	// Tolerance and were added; otherwise ln Z and the posterior count
	// the live points as the final ones would be.
	Finished  bool    `json:"finished"`
	Tolerance float64 `json:"evidence_tolerance"`
	// Method is the sampler's exact description of the settings that
	// shaped the run.
	Method string `json:"method"`
	// Seed is the run's seed; the equal-weight samples are drawn with
	// ResampleRNG(Seed).
	Seed uint64 `json:"seed"`
	// Data identifies the observations fitted (the SHA-256 of their files'
	// digests): Bayes factors compare runs of the same data only.
	Data string `json:"data_sha256"`
}

// MinNestedSamples is the fewest equal-weight samples a nested run's
// summary is made from: early in a run one point carries almost all the
// weight, and intervals from fewer samples would be noise.
const MinNestedSamples = 10

// ErrFewSamples is wrapped by the error of a report of a nested run that
// has not got far enough for MinNestedSamples equal-weight samples.
var ErrFewSamples = errors.New("too few equal-weight samples for a summary")

// Methods of a summary (Summary.Method).
const (
	MethodEnsemble = "ensemble"
	MethodNested   = "nested"
)

// ResampleRNG is the generator that draws the equal-weight samples of a
// nested run with seed: fixed, so that a report is reproducible and
// chord compare --marginals reads the samples the summary was made from.
func ResampleRNG(seed uint64) *rand.Rand {
	return rand.New(rand.NewPCG(seed, 0x65717561_6c776774)) // "equalwgt"
}

// EqualWeightSamples reads the equal-weight posterior samples of the
// nested run whose chain store is dir, with the live points of a run that
// has not finished (live; nil for a finished run): chains.ReadEqualWeight
// with ResampleRNG(seed).
func EqualWeightSamples(dir string, parts []chains.PartInfo, live *chains.Points, seed uint64) (*chains.Chain, error) {
	return chains.ReadEqualWeight(dir, parts, live, ResampleRNG(seed))
}

// LnB is a log Bayes factor ln Z1 - ln Z2 with its error
// sqrt(e1^2 + e2^2), the two runs' errors being independent.
func LnB(z1, e1, z2, e2 float64) (lnB, err float64) {
	return z1 - z2, math.Hypot(e1, e2)
}

// overviewNested lists the run-level facts of a nested run.
func (s *Summary) overviewNested() [][2]string {
	e := s.Evidence
	fin := fmt.Sprintf("yes (the live points could add less than %g to ln Z)", e.Tolerance)
	if !e.Finished {
		fin = "no: ln Z and the posterior count the live points as the final ones would be (an estimate); resume the run"
	}
	out := [][2]string{
		{"sampler", fmt.Sprintf("nested sampling, %d live points; %d dead points, %d likelihood evaluations", e.LivePoints, e.DeadPoints, e.Evaluations)},
		{"evidence", fmt.Sprintf("ln Z = %.2f ± %.2f (statistical error sqrt(H/N)); information H = %.1f nats", e.LogZ, e.LogZErr, e.Information)},
		{"finished", fin},
		{"samples", fmt.Sprintf("%d equal-weight posterior samples (the weights' effective size)", s.Samples)},
	}
	if s.Stop != "" {
		out = append(out, [2]string{"stopped", s.Stop})
	}
	out = append(out, [2]string{"best sample", fmt.Sprintf("sample %d: log posterior %.3f, log likelihood %.3f", s.Best.Step, s.Best.LogPosterior, s.Best.LogLikelihood)})
	return out
}

// adviseEvidence adds, for each gas whose Savage-Dickey significance is
// only a lower bound (no samples near the prior edge), how to get the
// evidence-based number: chord detect fits the model with and without
// the gas by nested sampling.
func (s *Summary) adviseEvidence(configFile string) {
	if configFile == "" {
		configFile = "CONFIG"
	}
	var gases []string
	for _, p := range s.Parameters {
		if g := p.Gas; g != nil && g.SigmaIsBound && g.Class != UpperLimit && g.Class != Undetermined {
			gases = append(gases, g.Gas)
		}
	}
	if len(gases) == 0 {
		return
	}
	var flags string
	for _, g := range gases {
		flags += " --gas " + g
	}
	s.Warnings = append(s.Warnings, fmt.Sprintf("note: the Savage-Dickey significance of %s is only a lower bound (too few samples near the prior's lower edge to measure the density there). "+
		"The evidence gives the number without that ceiling: chord detect -c %s -o DETECTDIR%s fits the model with and without each gas by nested sampling and reports ln B, its sigma and its strength (docs/evidence.md)",
		joinAnd(gases), configFile, flags))
}

// joinAnd joins words as "a", "a and b", "a, b and c".
func joinAnd(w []string) string {
	switch len(w) {
	case 0:
		return ""
	case 1:
		return w[0]
	}
	out := w[0]
	for _, x := range w[1 : len(w)-1] {
		out += ", " + x
	}
	return out + " and " + w[len(w)-1]
}
