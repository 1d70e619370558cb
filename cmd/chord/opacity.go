package main

import (
	"fmt"
	"io"
	"math"
	"os"
	"sort"
	"strings"

	"github.com/urfave/cli/v2"

	"chord/forward/opacity"
	"chord/forward/opacity/lbl"
	"chord/forward/opacity/tablefile"
)

// opacityCommand returns "chord opacity", the parent of the opacity-table
// subcommands.
func opacityCommand() *cli.Command {
	return &cli.Command{
		Name:        "opacity",
		Usage:       "build and inspect opacity table files",
		Subcommands: []*cli.Command{opacityBuildCommand(), opacityInfoCommand()},
	}
}

// opacityInfoCommand returns "chord opacity info".
func opacityInfoCommand() *cli.Command {
	return &cli.Command{
		Name:      "info",
		Usage:     "describe an opacity table file: axes, ranges, units, provenance, size",
		ArgsUsage: "FILE",
		Description: "Reads and checks a table file (schema, every row, content checksum) and prints what it\n" +
			"holds in the units of chord's inputs (bar, K, cm^-1 and um, cm^2 per molecule); the file\n" +
			"itself stores SI units. Demo tables are labelled \"demo, not for science\".",
		Action: runOpacityInfo,
	}
}

func runOpacityInfo(c *cli.Context) error {
	if c.NArg() != 1 {
		return fmt.Errorf("opacity info: want one table file, got %d arguments", c.NArg())
	}
	path := c.Args().First()
	tab, err := tablefile.Read(path)
	if err != nil {
		return err
	}
	st, err := os.Stat(path)
	if err != nil {
		return err
	}
	w := c.App.Writer
	x, cia, meta := tab.XSec, tab.CIA, tab.Meta()
	fmt.Fprintf(w, "file:         %s (%s)\n", path, infoBytes(st.Size()))
	if opacity.IsDemo(meta) {
		fmt.Fprintf(w, "DEMO TABLE:   %s\n", opacity.DemoNote)
	}
	if tab.K != nil {
		if err := infoK(w, tab.K); err != nil {
			return fmt.Errorf("opacity info: %s: %w", path, err)
		}
	} else if x != nil {
		fmt.Fprintf(w, "table:        cross-sections of %s (kind %s, schema %s)\n", x.Gas, meta[tablefile.MetaKind], meta[tablefile.MetaSchemaVersion])
		fmt.Fprintf(w, "shape:        %d pressures x %d temperatures x %d wavenumbers = %d values (float32)\n",
			len(x.Log10P), len(x.T), len(x.Wavenumber), len(x.Sigma))
		lo, hi := x.Log10P[0], x.Log10P[len(x.Log10P)-1]
		fmt.Fprintf(w, "pressure:     %d points, %s .. %s bar\n", len(x.Log10P), infoNum(math.Pow(10, lo)/1e5), infoNum(math.Pow(10, hi)/1e5))
		infoAxis(w, "temperature:", x.T, "K")
		infoWavenumbers(w, x.Wavenumber)
		infoValues(w, "sigma", meta[tablefile.MetaUnitsSigma], infoFloat64s(x.Sigma))
	} else {
		fmt.Fprintf(w, "table:        collision-induced absorption of %s-%s (kind %s, schema %s)\n", cia.Pair[0], cia.Pair[1], meta[tablefile.MetaKind], meta[tablefile.MetaSchemaVersion])
		fmt.Fprintf(w, "shape:        %d temperatures x %d wavenumbers = %d values (float64)\n", len(cia.T), len(cia.Wavenumber), len(cia.K))
		infoAxis(w, "temperature:", cia.T, "K")
		infoWavenumbers(w, cia.Wavenumber)
		infoValues(w, "k", meta[tablefile.MetaUnitsK], cia.K)
	}
	fmt.Fprintf(w, "program:      %s\n", infoOrNone(meta[opacity.MetaProgramVersion]))
	src, err := opacity.ParseSources(meta[opacity.MetaSources])
	if err != nil {
		return fmt.Errorf("opacity info: %s: %w", path, err)
	}
	if len(src) == 0 {
		fmt.Fprintln(w, "sources:      (none recorded)")
	}
	for i, s := range src {
		label := "sources:"
		if i > 0 {
			label = ""
		}
		fmt.Fprintf(w, "%-13s %s  sha256 %s  (%s)\n", label, s.File, s.SHA256, infoBytes(s.Bytes))
	}
	if tab.K == nil {
		fmt.Fprintf(w, "build:        %s\n", infoOrNone(meta[opacity.MetaBuildSettings]))
	}
	fmt.Fprintf(w, "checksum:     content sha256 %s (verified)\n", meta[tablefile.MetaContentSHA256])
	var stored []string
	for _, k := range []string{tablefile.MetaUnitsLog10P, tablefile.MetaUnitsTemperature, tablefile.MetaUnitsWavenumber, tablefile.MetaUnitsWavelength,
		tablefile.MetaUnitsSigma, tablefile.MetaUnitsK, tablefile.MetaUnitsKCoeff} {
		if u := meta[k]; u != "" {
			stored = append(stored, strings.TrimPrefix(k, "units.")+" in "+u)
		}
	}
	fmt.Fprintf(w, "units:        shown in the units of chord's inputs (bar, K, cm^-1, um, cm^2 per molecule); the file stores SI: %s\n", strings.Join(stored, ", "))
	shown := map[string]bool{}
	for _, k := range []string{tablefile.MetaFormat, tablefile.MetaSchemaVersion, tablefile.MetaKind, tablefile.MetaGas, tablefile.MetaPair,
		tablefile.MetaShape, tablefile.MetaContentSHA256, opacity.MetaProgramVersion, opacity.MetaSources, opacity.MetaBuildSettings,
		opacity.MetaDemo, opacity.MetaDemoNote, tablefile.MetaUnitsLog10P, tablefile.MetaUnitsTemperature, tablefile.MetaUnitsWavenumber,
		tablefile.MetaUnitsSigma, tablefile.MetaUnitsK, tablefile.MetaUnitsWavelength, tablefile.MetaUnitsKCoeff} {
		shown[k] = true
	}
	shown[lbl.MetaWarnings] = tab.K != nil // infoK prints them
	var other []string
	for k := range meta {
		if !shown[k] {
			other = append(other, k)
		}
	}
	sort.Strings(other)
	for i, k := range other {
		label := "metadata:"
		if i > 0 {
			label = ""
		}
		fmt.Fprintf(w, "%-13s %s = %s\n", label, k, meta[k])
	}
	if opacity.IsDemo(meta) {
		fmt.Fprintf(w, "note:         this is a demo table (%s): its bands are synthetic\n", opacity.DemoNote)
	}
	return nil
}

func infoAxis(w io.Writer, label string, x []float64, unit string) {
	fmt.Fprintf(w, "%-13s %d points, %s .. %s %s\n", label, len(x), infoNum(x[0]), infoNum(x[len(x)-1]), unit)
}

// infoWavenumbers prints the wavenumber axis (m^-1 in the file) in cm^-1
// and as wavelengths in um.
func infoWavenumbers(w io.Writer, nu []float64) {
	lo, hi := nu[0], nu[len(nu)-1]
	fmt.Fprintf(w, "wavenumber:   %d points, %s .. %s cm^-1\n", len(nu), infoNum(lo/100), infoNum(hi/100))
	wl := func(v float64) string {
		if v <= 0 {
			return "inf"
		}
		return infoNum(1e6 / v)
	}
	fmt.Fprintf(w, "wavelength:   %s .. %s um\n", wl(hi), wl(lo))
	if len(nu) > 1 {
		d := make([]float64, len(nu)-1)
		for i := range d {
			d[i] = nu[i+1] - nu[i]
		}
		sort.Float64s(d)
		fmt.Fprintf(w, "spacing:      %s .. %s cm^-1 (median %s cm^-1)\n", infoNum(d[0]/100), infoNum(d[len(d)-1]/100), infoNum(d[len(d)/2]/100))
	}
}

// userUnits maps the SI units of table values to the units of the trade
// (HITRAN's cross-sections in cm^2/molecule and CIA coefficients in
// cm^5/molecule^2) and the factor from the one to the other.
var userUnits = map[string]struct {
	unit   string
	factor float64
}{
	"m^2 molecule^-1": {"cm^2 molecule^-1", 1e4},
	"m^5 molecule^-2": {"cm^5 molecule^-2", 1e10},
}

// infoValues prints the range of the values v, stored in unit, in the
// user's unit (userUnits).
func infoValues(w io.Writer, name, unit string, v []float64) {
	scale := 1.0
	if u, ok := userUnits[unit]; ok {
		unit, scale = u.unit, u.factor
	}
	lo, hi, zeros := math.Inf(1), 0.0, 0
	for _, x := range v {
		if x == 0 {
			zeros++
			continue
		}
		lo, hi = min(lo, x), max(hi, x)
	}
	if zeros == len(v) {
		fmt.Fprintf(w, "values:       %s in %s: all zero\n", name, unit)
		return
	}
	fmt.Fprintf(w, "values:       %s in %s: non-zero %s .. %s; %d of %d zero\n", name, unit, infoNum(lo*scale), infoNum(hi*scale), zeros, len(v))
}

func infoFloat64s(x []float32) []float64 {
	y := make([]float64, len(x))
	for i, v := range x {
		y[i] = float64(v)
	}
	return y
}

func infoNum(v float64) string { return fmt.Sprintf("%.6g", v) }

func infoOrNone(s string) string {
	if strings.TrimSpace(s) == "" {
		return "(none recorded)"
	}
	return s
}

func infoBytes(n int64) string {
	switch {
	case n >= 1<<20:
		return fmt.Sprintf("%.1f MiB", float64(n)/(1<<20))
	case n >= 1<<10:
		return fmt.Sprintf("%.1f KiB", float64(n)/(1<<10))
	default:
		return fmt.Sprintf("%d bytes", n)
	}
}
