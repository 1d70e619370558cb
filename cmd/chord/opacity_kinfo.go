package main

import (
	"encoding/json"
	"fmt"
	"io"
	"math"
	"sort"
	"strings"

	"chord/forward/opacity"
	"chord/forward/opacity/lbl"
	"chord/forward/opacity/tablefile"
)

// infoK prints a k-table's axes in the user's units (bar, um, K), its
// quadrature and what its build settings record: broadening mixture and
// fallbacks, partition-sum sources, cuts, lines kept and binned, and a
// warning when the fine grid was coarser than the Doppler rule at the
// table's lowest temperature.
func infoK(w io.Writer, t *opacity.KTable) error {
	meta := t.Meta
	fmt.Fprintf(w, "table:        k-distribution of %s (kind %s, schema %s)\n", t.Gas, meta[tablefile.MetaKind], meta[tablefile.MetaSchemaVersion])
	fmt.Fprintf(w, "shape:        %d pressures x %d temperatures x %d bins x %d g-points = %d values (float32)\n",
		len(t.Log10P), len(t.T), t.Bins(), len(t.G), len(t.K))
	lo, hi := t.Log10P[0], t.Log10P[len(t.Log10P)-1]
	perDecade := ""
	if len(t.Log10P) > 1 {
		perDecade = fmt.Sprintf(", %.3g points per decade", float64(len(t.Log10P)-1)/(hi-lo))
	}
	fmt.Fprintf(w, "pressure:     %s .. %s bar%s\n", infoNum(math.Pow(10, lo)/1e5), infoNum(math.Pow(10, hi)/1e5), perDecade)
	fmt.Fprintf(w, "temperature:  %d points: %s K\n", len(t.T), joinNums(t.T))
	r := make([]float64, t.Bins())
	for b := range r {
		r[b] = (t.Lo[b] + t.Hi[b]) / 2 / (t.Hi[b] - t.Lo[b])
	}
	sort.Float64s(r)
	fmt.Fprintf(w, "bins:         %d, %s .. %s um, resolving power %s .. %s\n", t.Bins(), infoNum(t.Lo[0]*1e6), infoNum(t.Hi[t.Bins()-1]*1e6), infoNum(r[0]), infoNum(r[len(r)-1]))
	fmt.Fprintf(w, "quadrature:   %d nodes, g %s .. %s (weights sum to 1)\n", len(t.G), infoNum(t.G[0]), infoNum(t.G[len(t.G)-1]))
	var bs map[string]any
	if v := meta[opacity.MetaBuildSettings]; v != "" {
		if err := json.Unmarshal([]byte(v), &bs); err != nil {
			return fmt.Errorf("metadata key %q: %w", opacity.MetaBuildSettings, err)
		}
	}
	str := func(k string) string {
		if v, ok := bs[k]; ok && v != nil {
			return fmt.Sprint(v)
		}
		return "(not recorded)"
	}
	num := func(k string) (float64, bool) {
		v, ok := bs[k].(float64)
		return v, ok
	}
	fmt.Fprintf(w, "broadening:   mixture %s; self fraction %s; air values scaled by %s\n", str("broadening_mixture"), str("self_fraction"), str("broadener_scale"))
	if fb, ok := bs["broadening_fallback_lines"].(map[string]any); ok && len(fb) > 0 {
		var parts []string
		for gas, n := range fb {
			parts = append(parts, fmt.Sprintf("%s %v", gas, n))
		}
		sort.Strings(parts)
		fmt.Fprintf(w, "fallback:     lines without their own parameters (air values used): %s\n", strings.Join(parts, ", "))
	}
	if part, ok := bs["partition_functions"].(map[string]any); ok {
		keys := make([]string, 0, len(part))
		for k := range part {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		for i, k := range keys {
			label := "partition:"
			if i > 0 {
				label = ""
			}
			fmt.Fprintf(w, "%-13s %s: %v\n", label, k, part[k])
		}
	}
	cut := "cut-off " + str("wing_cutoff_cm-1") + " cm^-1"
	if ww, _ := num("wing_cutoff_half_widths"); ww > 0 {
		cut += fmt.Sprintf(" or %g Voigt half-widths, whichever is nearer", ww)
	}
	if wc, _ := num("weak_line_cut"); wc > 0 {
		cut += fmt.Sprintf("; lines below %g of the strongest within %s cm^-1 into a pseudo-continuum", wc, str("weak_line_neighbourhood"))
	}
	if mi, _ := num("min_intensity"); mi > 0 {
		cut += fmt.Sprintf("; lines below %g dropped", mi)
	}
	fmt.Fprintf(w, "cuts:         %s\n", cut)
	prof, ok1 := num("line_evaluations_profiled")
	bin, ok2 := num("line_evaluations_binned")
	if n, ok := num("lines"); ok && ok1 && ok2 {
		share := ""
		if prof+bin > 0 {
			share = fmt.Sprintf(" (%.3g %% profiled, %.3g %% binned)", 100*prof/(prof+bin), 100*bin/(prof+bin))
		}
		fmt.Fprintf(w, "lines:        %.0f read; line x (P, T) evaluations: %.0f profiled, %.0f binned into the pseudo-continuum%s\n", n, prof, bin, share)
	}
	fmt.Fprintf(w, "fine grid:    %s\n", str("fine_grid"))
	if fr, ok := num("fine_resolution_lowest_t"); ok {
		if rule, ok := num("doppler_rule_lowest_t"); ok && fr < rule*(1-1e-9) {
			fmt.Fprintf(w, "WARNING:      the fine grid (resolving power %.4g) was coarser than a third of the Doppler half-width at %g K (%.4g):\n"+
				"              lines at low pressure are sampled, not resolved; rebuild without --fine-resolving-power\n", fr, t.T[0], rule)
		}
	}
	if v := meta[lbl.MetaWarnings]; v != "" {
		for i, line := range strings.Split(v, "\n") {
			label := "warnings:"
			if i > 0 {
				label = ""
			}
			fmt.Fprintf(w, "%-13s %s\n", label, line)
		}
	}
	infoValues(w, "k", meta[tablefile.MetaUnitsKCoeff], infoFloat64s(t.K))
	return nil
}

func joinNums(x []float64) string {
	s := make([]string, len(x))
	for i, v := range x {
		s[i] = infoNum(v)
	}
	return strings.Join(s, ", ")
}
