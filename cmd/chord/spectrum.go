package main

import (
	"bytes"
	"errors"
	"fmt"
	"path/filepath"
	"strings"
	"time"

	"github.com/urfave/cli/v2"

	"chord/config"
	"chord/forward"
	"chord/forward/opacity"
	"chord/forward/opacity/build"
	"chord/forward/opacity/lbl"
	"chord/internal/atomicfile"
	"chord/report"
	"chord/retrieve"
)

// spectrumCommand returns the spectrum command.
func spectrumCommand() *cli.Command {
	return &cli.Command{
		Name:      "spectrum",
		Usage:     "compute one transmission spectrum from a model configuration",
		ArgsUsage: " ",
		Description: "Reads the [star], [planet], [atmosphere], [clouds], [opacity] and [spectrum]\n" +
			"sections of a TOML file and writes the transit depth as CSV. A binned spectrum is written\n" +
			"as an observation file (edge_low_um, edge_high_um, depth_ppm, and error_ppm with\n" +
			"--error-ppm), which chord fit reads as an observation and chord simulate and opacity\n" +
			"build as a bins or noise file; an unbinned one as wavelength_um, depth_ppm. Lines\n" +
			"starting with # are comments.",
		Flags: []cli.Flag{
			&cli.StringFlag{Name: "config", Aliases: []string{"c"}, Usage: "model configuration `FILE` (TOML)", Required: true},
			&cli.StringFlag{Name: "output", Aliases: []string{"o"}, Usage: "CSV `FILE` to write (\"-\" for standard output)", Required: true},
			&cli.Float64Flag{Name: "error-ppm", Usage: "state the error of every bin, `PPM` of transit depth, in an error_ppm column (binned spectra only)"},
			&cli.StringFlag{Name: "plot", Usage: "also draw the spectrum to `FILE`.png (and FILE.svg)"},
			&cli.StringFlag{Name: "by-gas", Usage: "also draw the spectrum with each gas removed in turn to `FILE`.png (and FILE.svg)"},
			demoCacheFlag(),
			&cli.StringSliceFlag{Name: "resolved", Usage: "compute the spectrum line by line instead (the reference the k-tables are checked against) from the line list of each gas, `GAS=FILE[,FILE...]`; repeatable, one per absorbing gas; needs [spectrum] bins"},
			&cli.Float64Flag{Name: "fine-resolving-power", Value: 1e6, Usage: "with --resolved: resolving power nu/dnu of the fine grid"},
			&cli.StringFlag{Name: "molparam", Usage: "with --resolved: HITRAN molparam `FILE` (isotopologue masses, abundances, Q(296 K))"},
			&cli.StringFlag{Name: "tips", Usage: "with --resolved: TIPS partition-sum table `FILE`"},
			&cli.StringSliceFlag{Name: "partition", Usage: "with --resolved: two-column partition-sum file of one isotopologue, `[MOL/ISO=]FILE`; repeatable, the newest edition per isotopologue is used"},
			&cli.StringFlag{Name: "mixture", Usage: "with --resolved: broadening gas mixture `GAS:FRACTION,...` (air, H2, He, CO2, H2O; default air)"},
			&cli.IntFlag{Name: "workers", Usage: "with --resolved: goroutines", DefaultText: "the number of CPUs"},
		},
		Action: runSpectrum,
	}
}

func runSpectrum(c *cli.Context) error {
	if c.NArg() > 0 {
		return fmt.Errorf("spectrum: unexpected argument %q", c.Args().First())
	}
	cfgPath := c.String("config")
	cfg, err := config.LoadModel(cfgPath)
	if err != nil {
		return err
	}
	for _, w := range cfg.Renamed {
		fmt.Fprintf(c.App.ErrWriter, "chord spectrum: warning: %s: %s\n", cfgPath, w)
	}
	if c.IsSet("resolved") {
		return runSpectrumResolved(c, cfgPath, cfg)
	}
	for _, f := range []string{"molparam", "tips", "partition", "mixture", "fine-resolving-power", "workers"} {
		if c.IsSet(f) {
			return fmt.Errorf("spectrum: --%s goes with --resolved", f)
		}
	}
	set, err := cfg.LoadOpacity(c.String("demo-cache"), c.App.ErrWriter)
	if err != nil {
		return fmt.Errorf("%s: %w", cfgPath, err)
	}
	m, s, err := cfg.Build(set)
	if err != nil {
		return fmt.Errorf("%s: %w", cfgPath, err)
	}
	depth := make([]float64, m.OutputLen())
	w := m.NewWorkspace()
	if err := m.Transit(depth, &s, w); err != nil {
		return fmt.Errorf("%s: %w", cfgPath, err)
	}
	for _, n := range retrieve.OpacityNotes(mustForwardConfig(cfg, set), m) {
		fmt.Fprintln(c.App.ErrWriter, "chord spectrum: note:", n)
	}
	if set.Demo {
		fmt.Fprintln(c.App.ErrWriter, "chord spectrum: computed with the demo opacity tables: not for science")
	}
	if w.Clamped {
		fmt.Fprintln(c.App.ErrWriter, "chord spectrum: warning: some layers lie outside an opacity table's pressure-temperature grid; edge values were used")
	}
	wl := m.Wavelength()
	var lo, hi []float64
	if m.Binned() {
		b, _ := cfg.ForwardConfig(set, nil) // the bins Build used
		lo, hi = b.Bins.Lo, b.Bins.Hi
		wl = make([]float64, len(lo))
		for i := range lo {
			wl[i] = 0.5 * (lo[i] + hi[i])
		}
	}
	byGas := func(spec *report.ModelSpectrum, p string) error {
		if len(m.Gases()) == 0 {
			return errors.New("spectrum: --by-gas: the atmosphere has no trace gas to remove ([atmosphere.gases] is empty)")
		}
		without, err := report.WithoutEachGas(m, s)
		if err != nil {
			return fmt.Errorf("%s: %w", cfgPath, err)
		}
		return spec.PlotByGas(p, without)
	}
	return writeSpectrum(c, cfg, set.Demo, wl, depth, lo, hi, byGas)
}

// mustForwardConfig returns the forward configuration Build used (it
// succeeded, so this does too).
func mustForwardConfig(cfg *config.ModelConfig, set *opacity.Set) forward.Config {
	fc, _ := cfg.ForwardConfig(set, nil)
	return fc
}

// writeSpectrum writes the spectrum's CSV and, with --plot, its PNG, and
// with --by-gas the plot byGas draws (nil: not available).
func writeSpectrum(c *cli.Context, cfg *config.ModelConfig, demo bool, wl, depth, lo, hi []float64,
	byGas func(spec *report.ModelSpectrum, path string) error) error {
	title := cfg.Planet.Name
	if title == "" {
		title = "model spectrum"
	}
	spec := &report.ModelSpectrum{Title: title, Demo: demo, Wavelength: wl, Depth: depth, Lo: lo, Hi: hi, ErrorPPM: c.Float64("error-ppm")}
	if c.IsSet("error-ppm") && !(spec.ErrorPPM > 0 && spec.ErrorPPM < 1e6) {
		return fmt.Errorf("spectrum: --error-ppm %g: must be positive, below 1e6 ppm", spec.ErrorPPM)
	}
	if err := writeSpectrumCSV(c, c.String("output"), spec); err != nil {
		return err
	}
	for _, flag := range []string{"plot", "by-gas"} {
		if p := c.String(flag); p != "" && filepath.Ext(p) != ".png" {
			return fmt.Errorf("spectrum: --%s %s: name the plot FILE.png (FILE.svg is written beside it)", flag, p)
		}
	}
	if p := c.String("plot"); p != "" {
		if err := spec.Plot(p); err != nil {
			return fmt.Errorf("spectrum: %w", err)
		}
	}
	if p := c.String("by-gas"); p != "" {
		if byGas == nil {
			return errors.New("spectrum: --by-gas goes with the tables' spectrum, not --resolved")
		}
		if err := byGas(spec, p); err != nil {
			return fmt.Errorf("spectrum: %w", err)
		}
	}
	return nil
}

// writeSpectrumCSV writes the spectrum's CSV to path, or to standard
// output for "-".
func writeSpectrumCSV(c *cli.Context, path string, s *report.ModelSpectrum) error {
	if path == "-" {
		return s.WriteCSV(c.App.Writer)
	}
	var b bytes.Buffer
	if err := s.WriteCSV(&b); err != nil {
		return err
	}
	if err := atomicfile.Write(path, b.Bytes(), true); err != nil {
		return fmt.Errorf("spectrum: %w", err)
	}
	return nil
}

// runSpectrumResolved computes the configuration's spectrum line by line
// (forward.Model.TransitResolved) from the --resolved line lists, on the
// [spectrum] bins; CIA, Rayleigh scattering, haze, the grey absorber and
// clouds as the configuration says (its tables of gases are not used).
func runSpectrumResolved(c *cli.Context, cfgPath string, cfg *config.ModelConfig) error {
	start := time.Now()
	if err := cfg.Validate(); err != nil {
		return fmt.Errorf("%s: %w", cfgPath, err)
	}
	bins, err := cfg.Bins()
	if err != nil {
		return fmt.Errorf("%s: %w", cfgPath, err)
	}
	if bins == nil {
		return fmt.Errorf("%s: spectrum: --resolved needs bins in [spectrum] (bin_edges_um, bin_centres_um with bin_widths_um, or bin_resolving_power)", cfgPath)
	}
	// CIA tables from the configuration's set (the demo's or a directory's).
	set := &opacity.Set{}
	if cfg.Opacity.Demo || cfg.Opacity.Dir != "" {
		if set, err = cfg.LoadOpacity(c.String("demo-cache"), c.App.ErrWriter); err != nil {
			return fmt.Errorf("%s: %w", cfgPath, err)
		}
	}
	fc, err := cfg.ForwardConfig(&opacity.Set{CIA: set.CIA}, bins)
	if err != nil {
		return fmt.Errorf("%s: %w", cfgPath, err)
	}
	fc.Wavelength, fc.XSec, fc.KTables = nil, nil, nil
	m, err := forward.NewModel(fc)
	if err != nil {
		return fmt.Errorf("%s: %w", cfgPath, err)
	}
	st, err := cfg.State(m)
	if err != nil {
		return fmt.Errorf("%s: %w", cfgPath, err)
	}
	lset := lbl.LineSettings{}
	if c.IsSet("mixture") {
		if lset.Mixture, err = lbl.ParseMixture(c.String("mixture")); err != nil {
			return fmt.Errorf("spectrum: --mixture: %w", err)
		}
	}
	// The fine grid's wavenumber span, for reading the lines that reach it.
	lmin, lmax := bins.Lo[0], bins.Hi[0]
	for i := range bins.Lo {
		lmin, lmax = min(lmin, bins.Lo[i]), max(lmax, bins.Hi[i])
	}
	nu := []float64{1 / lmax, 1 / lmin}
	srcs := map[string]forward.LineSource{}
	for _, spec := range c.StringSlice("resolved") {
		gas, files, ok := strings.Cut(spec, "=")
		if !ok || gas == "" || files == "" {
			return fmt.Errorf("spectrum: --resolved %q: want GAS=FILE[,FILE...]", spec)
		}
		if _, dup := srcs[gas]; dup {
			return fmt.Errorf("spectrum: --resolved: two line lists for %s", gas)
		}
		src := &build.Source{Files: strings.Split(files, ","), Gas: gas, MolParam: c.String("molparam"), TIPS: c.String("tips")}
		for _, q := range c.StringSlice("partition") {
			key, path, err := parseQSpec(q)
			if err != nil {
				return err
			}
			src.Partition = append(src.Partition, build.PartitionFile{Iso: key, Path: path})
		}
		lines, err := build.ReadLines(src, nu, lset.WingCutoff, lbl.Observer{})
		if err != nil {
			return fmt.Errorf("spectrum: --resolved %s: %w", gas, err)
		}
		ls, err := lbl.NewLineSet(gas, lines.Lines, lines.Iso, lset)
		if err != nil {
			return fmt.Errorf("spectrum: --resolved %s: %w", gas, err)
		}
		for _, w := range ls.Warnings {
			fmt.Fprintf(c.App.ErrWriter, "chord spectrum: warning: %s: %s\n", gas, w)
		}
		srcs[gas] = ls
		fmt.Fprintf(c.App.ErrWriter, "chord spectrum: %s: %d lines\n", gas, ls.Lines())
	}
	depth := make([]float64, m.OutputLen())
	opt := forward.ResolvedOptions{R: c.Float64("fine-resolving-power"), Workers: c.Int("workers")}
	if err := m.TransitResolved(depth, &st, srcs, opt); err != nil {
		return fmt.Errorf("%s: %w", cfgPath, err)
	}
	fmt.Fprintf(c.App.ErrWriter, "chord spectrum: resolved line by line at resolving power %g in %s\n", opt.R, time.Since(start).Round(time.Millisecond))
	wl := make([]float64, len(bins.Lo))
	for i := range wl {
		wl[i] = 0.5 * (bins.Lo[i] + bins.Hi[i])
	}
	return writeSpectrum(c, cfg, set.Demo, wl, depth, bins.Lo, bins.Hi, nil)
}
