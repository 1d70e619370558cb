package retrieve

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"chord/chains"
	"chord/config"
)

// A run whose run.toml uses the old key names (as the version before the
// renames wrote it) is reported and resumed: its keys are read under the
// new names and its configuration digest is unchanged. (That the digest
// is the one the earlier version computed is config's
// TestDigestTextKeepsOldSpellings.)
func TestRunWithOldKeyNamesResumes(t *testing.T) {
	ctx := context.Background()
	run, _ := fitGood(t, t.TempDir(), 40)
	rt := filepath.Join(run, RunFile)
	text, _ := os.ReadFile(rt)
	old := strings.NewReplacer("balance_gas =", "fill =", "balance_he_h2_ratio =", "he_h2_ratio =", "cloud_top_bar =", "top_pressure_bar =").Replace(string(text))
	if old == string(text) || !strings.Contains(old, "  top_pressure_bar = 0.01") {
		t.Fatalf("run.toml was not rewritten in the old spellings:\n%s", old)
	}
	os.WriteFile(rt, []byte(old), 0o644)
	if _, _, err := Report(run, ReportRunOptions{}); err != nil {
		t.Fatalf("report of a run with the old key names: %v", err)
	}
	rep, err := Resume(ctx, run, ResumeOptions{Stop: config.StopRule{Steps: 60}})
	if err != nil || rep.Outcome.Step != 60 {
		t.Fatalf("resume of a run with the old key names: %v", err)
	}
}

// The chains of a run started before the derived columns were renamed
// (fill_vmr, chi2) are continued under their stored names; a chain whose
// columns differ otherwise is refused before anything is written.
func TestMatchColumnsOfOlderChains(t *testing.T) {
	store := t.TempDir()
	cols := func(names ...string) []chains.Column {
		c := []chains.Column{{Name: "log_likelihood", Role: chains.RoleDerived, Source: 0}, {Name: "temperature_k", Role: chains.RoleParameter, Source: 0, Quantity: "temperature_k"}}
		for i, n := range names {
			c = append(c, chains.Column{Name: n, Role: chains.RoleDerived, Source: 1 + i, Quantity: "described as then"})
		}
		return c
	}
	stored := chains.Layout{Walkers: 2, Dim: 1, NumExtra: 3, Columns: cols("fill_vmr", "chi2")}
	w, err := chains.Create(store, stored)
	if err != nil {
		t.Fatal(err)
	}
	if err := w.WriteStep(1, []float64{1, 2}, []float64{-1, -2}, []float64{0, 0.5, 3, 0, 0.5, 4}); err != nil {
		t.Fatal(err)
	}
	part, err := w.Commit()
	if err != nil {
		t.Fatal(err)
	}
	now := chains.Layout{Walkers: 2, Dim: 1, NumExtra: 3, Columns: cols("balance_vmr", "chi_square_fitted")}
	if err := matchColumns("run", store, []chains.PartInfo{part}, &now); err != nil {
		t.Fatal(err)
	}
	if now.Columns[2].Name != "fill_vmr" || now.Columns[3].Name != "chi2" || now.Columns[3].Quantity != "described as then" {
		t.Errorf("continued columns %v, want the stored ones", now.Columns)
	}
	other := chains.Layout{Walkers: 2, Dim: 1, NumExtra: 3, Columns: cols("balance_vmr", "something_else")}
	if err := matchColumns("run", store, []chains.PartInfo{part}, &other); err == nil || !strings.Contains(err.Error(), "stored chains have the columns") {
		t.Errorf("different columns: %v", err)
	}
}
