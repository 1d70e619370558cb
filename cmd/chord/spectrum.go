package main

import (
	"bytes"
	"errors"
	"fmt"
	"path/filepath"

	"github.com/urfave/cli/v2"

	"chord/config"
	"chord/internal/atomicfile"
	"chord/report"
)

// spectrumCommand returns the spectrum command.
func spectrumCommand() *cli.Command {
	return &cli.Command{
		Name:      "spectrum",
		Usage:     "compute one transmission spectrum from a model configuration",
		ArgsUsage: " ",
		Description: "Reads the [star], [planet], [atmosphere], [clouds], [opacity] and [spectrum]\n" +
			"sections of a TOML file and writes the transit depth as CSV (wavelength_um, depth,\n" +
			"and bin_lo_um, bin_hi_um when the spectrum is binned). Lines starting with # are comments.",
		Flags: []cli.Flag{
			&cli.StringFlag{Name: "config", Aliases: []string{"c"}, Usage: "model configuration `FILE` (TOML)", Required: true},
			&cli.StringFlag{Name: "output", Aliases: []string{"o"}, Usage: "CSV `FILE` to write (\"-\" for standard output)", Required: true},
			&cli.StringFlag{Name: "plot", Usage: "also draw the spectrum to `FILE`.png"},
			&cli.StringFlag{Name: "demo-cache", Usage: "`DIR` caching the demo opacity tables (default: the user cache directory)"},
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
	title := cfg.Planet.Name
	if title == "" {
		title = "model spectrum"
	}
	spec := &report.ModelSpectrum{Title: title, Demo: set.Demo, Wavelength: wl, Depth: depth, Lo: lo, Hi: hi}
	if err := writeSpectrumCSV(c, c.String("output"), spec); err != nil {
		return err
	}
	if p := c.String("plot"); p != "" {
		if filepath.Ext(p) != ".png" {
			return errors.New("spectrum: --plot needs a .png file name")
		}
		if err := spec.Plot(p); err != nil {
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
