package campaign

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"slices"

	"chord/config"
	"chord/forward/opacity"
	"chord/report"
	"chord/sampler"
)

// Planning with evidence (chord plan --detect GAS,...): at each level the
// plan also fits, for each gas, the reduced model without it
// (<level>/without-<gas>, by nested sampling like the level's own fit) and
// reports the detection by evidence, ln B with its sigma and strength
// (report.DetectionTable), per level and gas in detection.txt and
// detection.json. On the noise-free observations a plan writes by default
// this is the expected significance at that noise level: the posterior
// and the evidence of noise-free data are those of a typical noise draw
// without its luck (the usual choice for forecasts).

// checkPlanDetect checks that a plan can detect the gases: the scenario's
// fits are nested sampling, and each gas has a free log10 mixing ratio of
// uniform prior.
func checkPlanDetect(path string, c *config.Config, gases []string) error {
	if len(gases) == 0 {
		return nil
	}
	if c.Sampler.Method != config.MethodNested {
		return fmt.Errorf("plan: %s: detection by evidence compares the evidences of nested-sampling fits: set method = \"nested\" in the scenario's [sampler] (and remove walkers and move)", path)
	}
	cp := *c
	cp.Parameters = slices.Clone(c.Parameters)
	if err := cp.Without(gases); err != nil {
		return fmt.Errorf("plan: %s: %w", path, err)
	}
	return nil
}

// detectLevel fits the reduced models of level l (whose full fit is the
// plan's last level) and adds its detections to rep.Detections; stopped
// is set when a fit was interrupted.
func (rep *PlanReport) detectLevel(ctx context.Context, l *planLevel, spec *PlanSpec, set *opacity.Set, opt PlanOptions, log io.Writer) (stopped bool, err error) {
	full := rep.Levels[len(rep.Levels)-1].Report
	if full.Summary == nil {
		return false, fmt.Errorf("%s stopped before it could be summarised; run the plan again to resume it", l.run)
	}
	runs := map[string]report.DetectRun{}
	f := fitSettings{spec.stop(), opt.Workers, opt.DemoCache, opt.Progress, log}
	for _, g := range spec.Detect {
		run := DetectRunDir(l.dir, g)
		r, err := detectFit(ctx, "chord plan", l.cfg, run, []string{g}, set, f)
		if err != nil {
			return false, err
		}
		if r.Outcome != nil && r.Outcome.Stop == sampler.StopCanceled {
			return true, nil
		}
		if r.Summary == nil {
			return false, fmt.Errorf("%s stopped before it could be summarised; run the plan again to resume it", run)
		}
		runs[g] = report.DetectRun{Dir: run, Summary: r.Summary}
	}
	if rep.Detections == nil {
		rep.Detections = &report.DetectionTable{}
	}
	return false, rep.Detections.DetectByEvidence(l.name, report.DetectRun{Dir: l.run, Summary: full.Summary}, spec.Detect, runs)
}

// writeDetections writes the plan's detections (detection.txt and
// detection.json) and adds them to its table.
func (rep *PlanReport) writeDetections() error {
	if rep.Detections == nil {
		return nil
	}
	text, err := writeDetection(rep.Dir, rep.Detections)
	if err != nil {
		return err
	}
	var b bytes.Buffer
	b.WriteString(rep.Table)
	b.WriteString("\n")
	b.WriteString(text)
	rep.Table = b.String()
	return nil
}
