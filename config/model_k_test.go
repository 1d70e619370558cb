package config

import (
	"errors"
	"math"
	"strings"
	"testing"

	"chord/forward"
	"chord/forward/opacity"
)

// rampKTable is a k-table of gas on bins exp(k/r) um over [lo, hi] um with
// k rising exponentially in g (a made-up band shape for configuration
// tests; the k-distribution physics is tested in forward).
func rampKTable(gas string, lo, hi, r float64) *opacity.KTable {
	q := opacity.DefaultQuadrature()
	b, _ := forward.ResolvingPowerBins(lo*forward.Micron, hi*forward.Micron, r)
	t := &opacity.KTable{Gas: gas, Log10P: []float64{-3, 8}, T: []float64{100, 3000}, Lo: b.Lo, Hi: b.Hi, G: q.G, W: q.W}
	for range 4 {
		for range b.Lo {
			for _, g := range q.G {
				t.K = append(t.K, float32(1e-27*math.Exp(8*g)))
			}
		}
	}
	return t
}

// TestForwardConfigK: a set with k-tables makes a per-bin model (no model
// grid), an unbinned [spectrum] takes the table's bins within its range,
// and configuration errors name the key.
func TestForwardConfigK(t *testing.T) {
	c, err := LoadModel(writeConfig(t, strings.Replace(greyConfig, "bin_edges_um = [0.6, 1.0, 2.0, 4.0]\n", "", 1)))
	if err != nil {
		t.Fatal(err)
	}
	set := &opacity.Set{K: map[string]*opacity.KTable{"H2O": rampKTable("H2O", 0.4, 6, 100)}}
	if got := c.TableKind(set); got != TableKindK {
		t.Fatalf("table kind %q with k-tables, want %q", got, TableKindK)
	}
	fc, err := c.ForwardConfig(set, nil)
	if err != nil {
		t.Fatal(err)
	}
	if fc.Wavelength != nil || len(fc.KTables) != 1 {
		t.Errorf("k mode: model grid %d points, %d k-tables; want none and 1", len(fc.Wavelength), len(fc.KTables))
	}
	// Bins of the table inside 0.5-5 um: k from ceil(100 ln 0.5) = -69 to
	// floor(100 ln 5) = 160, 229 bins (edges exp(k/100) um).
	if fc.Bins == nil || fc.Bins.Len() != 229 {
		t.Fatalf("unbinned k-mode spectrum: %v bins, want the table's 229 within 0.5-5 um", fc.Bins)
	}
	m, s, err := c.Build(set)
	if err != nil {
		t.Fatal(err)
	}
	d := make([]float64, m.OutputLen())
	if err := m.Transit(d, &s, m.NewWorkspace()); err != nil {
		t.Fatal(err)
	}
	// Coarser bins are merged from the table's; misaligned ones refused.
	coarse, _ := forward.ResolvingPowerBins(0.6*forward.Micron, 4*forward.Micron, 20)
	fc, err = c.ForwardConfig(set, &coarse)
	if err != nil {
		t.Fatal(err)
	}
	if m, err := forward.NewModel(fc); err != nil {
		t.Errorf("R = 20 bins from R = 100 tables: %v", err)
	} else if len(m.MergedK()) != 1 {
		t.Errorf("R = 20 bins from R = 100 tables: merged %v, want [H2O]", m.MergedK())
	}
	bad := forward.Bins{Lo: []float64{1.0003e-6}, Hi: []float64{1.5e-6}}
	if fc, err = c.ForwardConfig(set, &bad); err == nil {
		if _, err = forward.NewModel(fc); err == nil || !strings.Contains(err.Error(), "not a union of the table's bins") {
			t.Errorf("misaligned bin: %v", err)
		}
	}
	// A trace gas without a k-table; bad keys.
	if _, err := c.ForwardConfig(&opacity.Set{K: map[string]*opacity.KTable{"CO": rampKTable("CO", 0.4, 6, 100)}}, nil); !isKey(err, "atmosphere.gases") {
		t.Errorf("H2O without a k-table: %v, want a key error on atmosphere.gases", err)
	}
	for key, val := range map[string]string{"table_kind": `"cells"`, "overlap": `"average"`} {
		bad := strings.Replace(greyConfig, "[opacity]\n", "[opacity]\n"+key+" = "+val+"\n", 1)
		if _, err := LoadModel(writeConfig(t, bad)); !isKey(err, "opacity."+key) {
			t.Errorf("opacity.%s = %s: %v, want a key error", key, val, err)
		}
	}
}

func isKey(err error, key string) bool {
	var ke *KeyError
	return errors.As(err, &ke) && ke.Key == key
}
