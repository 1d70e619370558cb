package benchmarks

import (
	"context"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"chord/campaign"
	"chord/retrieve"
	"chord/simulate"
)

// BenchmarkDemoNested fits the demo (the invented Ossery b of chord demo:
// its observation simulated with the demo's noise and seed, its retrieval
// configuration of six free parameters) by nested sampling with the
// defaults (400 live points, batch 16, tolerance 0.1 in ln Z) on two
// workers, the report included. One op is one whole fit: run it with
// -benchtime 1x. It reports the likelihood evaluations and ln Z with its
// error besides the wall time. Goal: under 5 minutes on two cores.
//
//	go test -run '^$' -bench DemoNested -benchtime 1x ./benchmarks/
func BenchmarkDemoNested(b *testing.B) {
	dir := b.TempDir()
	truth, err := campaign.DemoTruth()
	if err != nil {
		b.Fatal(err)
	}
	obs := filepath.Join(dir, campaign.DemoObservationFile)
	// The default demo cache: the tables are built once per machine.
	if err := simulate.ObserveModel(obs, truth, "", nil, campaign.DemoNoisePPM, true, campaign.DemoNoiseSeed); err != nil {
		b.Fatal(err)
	}
	text, err := os.ReadFile(filepath.Join("..", "campaign", "testdata", "demo", campaign.DemoConfigFile))
	if err != nil {
		b.Fatal(err)
	}
	s := string(text)
	s = s[:strings.Index(s, "[sampler]")] + "[sampler]\nmethod = \"nested\"\nseed = 20261201\nworkers = 2\n"
	cfg := filepath.Join(dir, "nested.toml")
	if err := os.WriteFile(cfg, []byte(s), 0o644); err != nil {
		b.Fatal(err)
	}
	n := 0
	var rep *retrieve.RunReport
	for b.Loop() {
		n++
		rep, err = retrieve.Fit(context.Background(), retrieve.FitOptions{ConfigPath: cfg, RunDir: filepath.Join(dir, "run"+strconv.Itoa(n))})
		if err != nil {
			b.Fatal(err)
		}
	}
	e := rep.Summary.Evidence
	b.ReportMetric(float64(e.Evaluations), "evaluations/op")
	b.ReportMetric(e.LogZ, "lnZ")
	b.ReportMetric(e.LogZErr, "lnZ-error")
	b.ReportMetric(float64(e.DeadPoints), "dead-points/op")
}
