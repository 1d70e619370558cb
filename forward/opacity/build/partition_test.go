package build_test

import (
	"context"
	"path/filepath"
	"strings"
	"testing"

	"chord/forward/opacity"
	"chord/forward/opacity/build"
	"chord/forward/opacity/lbl"
	"chord/internal/testenv"
)

// TestNewestPartition: given TIPS-2011, TIPS-2021 and TIPS-2025 sums for
// CO 26 (the last two named by their headers only), the build uses
// TIPS-2025 and says so in the table; a k-table above 1000 K from
// HITRAN lines (not HITEMP) warns that hot bands are missing, and one
// left on TIPS-2011 for CO 36 warns about that edition, naming it.
func TestNewestPartition(t *testing.T) {
	part := testenv.SharedData(t, "partition")
	co := filepath.Join(testenv.SharedData(t, "hitran-lines"), "CO_2100-2200_atmabs.par")
	var notes, warns []string
	src := &build.Source{Files: []string{co}, MolParam: filepath.Join(part, "molparam_hitran.txt"), TIPS: filepath.Join(part, "parsum2011_tips.dat"),
		Partition: []build.PartitionFile{{Path: filepath.Join(part, "q26_CO_26_tips2025_hapi.txt")}, {Path: filepath.Join(part, "q26_CO_26_tips2021_hapi.txt")}}}
	l, err := build.Open(src, lbl.Observer{Note: func(m string) { notes = append(notes, m) }})
	if err != nil {
		t.Fatal(err)
	}
	if got := l.Iso[lbl.IsoKey{Mol: 5, Iso: 1}].QSource; got != "TIPS-2025 (q26_CO_26_tips2025_hapi.txt)" {
		t.Errorf("CO 26 partition source %q", got)
	}
	if !strings.Contains(strings.Join(notes, "\n"), "keeping TIPS-2025 (q26_CO_26_tips2025_hapi.txt), not the older or equal TIPS-2021") {
		t.Errorf("notes %q", notes)
	}
	lo, hi := opacity.AnchoredBins(1e4/2190, 1e4/2110, 100)
	k, err := l.KTable(context.Background(), lbl.KSettings{Log10P: []float64{3}, T: []float64{800, 1500}, Lo: lo, Hi: hi, Resolution: 1e5,
		Observer: lbl.Observer{Warn: func(m string) { warns = append(warns, m) }}})
	if err != nil {
		t.Fatal(err)
	}
	all := strings.Join(warns, "\n")
	for _, want := range []string{"HITRAN line lists are complete only near room temperature", "CO_36 (CO (molecule 5) isotopologue 2): TIPS-2011 partition sums used up to 1500 K"} {
		if !strings.Contains(all, want) || !strings.Contains(k.Meta[lbl.MetaWarnings], want) {
			t.Errorf("warnings %q and table warnings %q lack %q", all, k.Meta[lbl.MetaWarnings], want)
		}
	}
	if !strings.Contains(k.Meta["build_settings"], `"5/1":"TIPS-2025 (q26_CO_26_tips2025_hapi.txt)"`) {
		t.Errorf("build settings do not record the edition: %s", k.Meta["build_settings"])
	}
}
