package main

import (
	"bufio"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"

	"github.com/urfave/cli/v2"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"chord/config"
	"chord/forward"
	"chord/internal/version"
)

func init() {
	commands = append(commands, &cli.Command{
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
	})
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
	if err := writeSpectrumCSV(c, c.String("output"), title, set.Demo, wl, depth, lo, hi); err != nil {
		return err
	}
	if p := c.String("plot"); p != "" {
		if err := plotSpectrum(p, title, set.Demo, wl, depth, lo, hi); err != nil {
			return err
		}
	}
	return nil
}

func writeSpectrumCSV(c *cli.Context, path, title string, demo bool, wl, depth, lo, hi []float64) (err error) {
	out := c.App.Writer
	var f *os.File
	if path != "-" {
		if f, err = os.Create(path); err != nil {
			return fmt.Errorf("spectrum: %w", err)
		}
		defer func() {
			if cerr := f.Close(); cerr != nil && err == nil {
				err = fmt.Errorf("spectrum: %w", cerr)
			}
		}()
		out = f
	}
	bw := bufio.NewWriter(out)
	fmt.Fprintf(bw, "# chord %s spectrum: %s; depth is the transit depth (fraction of the stellar disc)\n", version.Version, title)
	if demo {
		fmt.Fprintln(bw, "# demo opacity tables: not for science")
	}
	if lo != nil {
		fmt.Fprintln(bw, "wavelength_um,depth,bin_lo_um,bin_hi_um")
	} else {
		fmt.Fprintln(bw, "wavelength_um,depth")
	}
	g := func(v float64) string { return strconv.FormatFloat(v, 'g', 10, 64) }
	for i := range depth {
		if lo != nil {
			fmt.Fprintf(bw, "%s,%s,%s,%s\n", g(wl[i]/forward.Micron), g(depth[i]), g(lo[i]/forward.Micron), g(hi[i]/forward.Micron))
		} else {
			fmt.Fprintf(bw, "%s,%s\n", g(wl[i]/forward.Micron), g(depth[i]))
		}
	}
	if err := bw.Flush(); err != nil {
		return fmt.Errorf("spectrum: %s: %w", path, err)
	}
	return nil
}

func plotSpectrum(path, title string, demo bool, wl, depth, lo, hi []float64) error {
	if filepath.Ext(path) != ".png" {
		return errors.New("spectrum: --plot needs a .png file name")
	}
	p := plot.New()
	p.Title.Text = title
	if demo {
		p.Title.Text += " (demo opacities: not for science)"
	}
	p.X.Label.Text = "wavelength [um]"
	p.Y.Label.Text = "transit depth [ppm]"
	p.X.Scale = plot.LogScale{}
	p.X.Tick.Marker = plot.LogTicks{Prec: -1}
	pts := make(plotter.XYs, 0, 2*len(depth))
	for i := range depth {
		if lo != nil { // bins as steps
			pts = append(pts, plotter.XY{X: lo[i] / forward.Micron, Y: depth[i] * 1e6}, plotter.XY{X: hi[i] / forward.Micron, Y: depth[i] * 1e6})
			continue
		}
		pts = append(pts, plotter.XY{X: wl[i] / forward.Micron, Y: depth[i] * 1e6})
	}
	for _, q := range pts {
		if math.IsNaN(q.Y) || math.IsInf(q.Y, 0) {
			return errors.New("spectrum: plot: depth is not finite")
		}
	}
	l, err := plotter.NewLine(pts)
	if err != nil {
		return fmt.Errorf("spectrum: plot: %w", err)
	}
	l.Width = vg.Points(1)
	p.Add(l, plotter.NewGrid())
	if err := p.Save(9*vg.Inch, 5*vg.Inch, path); err != nil {
		return fmt.Errorf("spectrum: plot: %w", err)
	}
	return nil
}
