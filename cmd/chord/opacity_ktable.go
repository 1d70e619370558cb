package main

import (
	"errors"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"runtime/debug"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/urfave/cli/v2"

	"chord/forward/opacity"
	"chord/forward/opacity/build"
	"chord/forward/opacity/lbl"
	"chord/forward/opacity/tablefile"
	"chord/internal/version"
	"chord/obs"
)

// buildKTable builds and writes the k-table of the line lists, resuming a
// stopped build of the same settings and files from its checkpoint
// <out>/.<gas>.k.checkpoint.
func buildKTable(c *cli.Context, files []string, out string, force bool, progress io.Writer) error {
	src, mixture, err := lineSource(c, files)
	if err != nil {
		return err
	}
	lo, hi, err := kBins(c)
	if err != nil {
		return err
	}
	q, err := parseQuadrature(c.String("quadrature"))
	if err != nil {
		return err
	}
	quiet := progress == nil
	list, err := build.Open(src, lbl.Observer{Note: noteWriter(c, quiet)})
	if err != nil {
		return sourceError(err)
	}
	path, err := tablePath(out, list.Gas, ".k.parquet", force)
	if err != nil {
		return err
	}
	logP, err := buildPressures(c)
	if err != nil {
		return err
	}
	if logP == nil {
		logP = opacity.DefaultKLog10P()
	}
	temps, err := kTemperatures(c, list)
	if err != nil {
		return err
	}
	if n := len(logP) * len(temps) * len(lo) * len(q.G); n > maxBuildValues {
		return fmt.Errorf("opacity build: k-table of %d x %d x %d x %d = %d values (%.1f GB) is too large; at most %d",
			len(logP), len(temps), len(lo), len(q.G), n, float64(n)*4/1e9, maxBuildValues)
	}
	ctx, cancel, _ := session(c)
	defer cancel()
	s := lbl.KSettings{
		Log10P: logP, T: temps, Lo: lo, Hi: hi, Quadrature: q,
		Resolution: c.Float64("fine-resolving-power"),
		Lines: lbl.LineSettings{
			WingCutoff: c.Float64("cutoff"), WingWidths: c.Float64("wing-widths"),
			MinIntensity: c.Float64("min-intensity"),
			WeakCut:      c.Float64("weak-cut"), WeakRef: c.Float64("weak-ref"),
			SelfFraction: c.Float64("self-fraction"),
			Mixture:      mixture,
			Broadening: lbl.Broadening{
				Name: c.String("broadener"), Scale: c.Float64("broadener-scale"), N: c.Float64("broadener-n"),
			},
			NoPressureShift: c.Bool("no-shift"),
		},
		Workers:     c.Int("workers"),
		WindowLines: c.Int("window-lines"),
		Observer:    tableObserver(c, "k-table", list.Gas, quiet),
		Version:     version.Version,
	}
	// The fingerprint needs the sources as the build records them.
	srcMeta, err := opacity.SourcesMeta(list.Files...)
	if err != nil {
		return err
	}
	fp := s
	fp.Gas, fp.Sources = list.Gas, srcMeta
	cpPath := filepath.Join(out, "."+list.Gas+".k.checkpoint")
	cp, err := build.OpenCheckpoint(cpPath, build.Fingerprint(&fp))
	if err != nil {
		return err
	}
	defer cp.Close()
	if cp.Resumed > 0 && !quiet {
		fmt.Fprintf(progress, "resuming: %d spectral windows done in %s\n", cp.Resumed, cpPath)
	}
	s.Checkpoint = cp
	// The heap of a long build is the lines of one window and the
	// workers' fine grids, kept live throughout: a collection after 25 %
	// growth instead of Go's 100 % keeps it near that, as measured in
	// benchmarks/ (a 1e8-line list in 1.1 GB), at little cost (the lines
	// hold no pointers to trace).
	defer debug.SetGCPercent(debug.SetGCPercent(25))
	start := time.Now()
	t, err := list.KTable(ctx, s)
	if errors.Is(err, lbl.ErrStopped) {
		fmt.Fprintf(c.App.ErrWriter, "chord: interrupted; finished spectral windows are kept in %s.\n", cpPath)
		fmt.Fprintln(c.App.ErrWriter, "chord: run the same command again to resume the build.")
		return errInterrupted
	}
	if err != nil {
		return err
	}
	if err := tablefile.WriteK(path, t, force); err != nil {
		return err
	}
	if err := cp.Remove(); err != nil {
		return fmt.Errorf("opacity build: %s written, but its checkpoint could not be removed: %w", path, err)
	}
	if !quiet {
		fmt.Fprintf(progress, "wrote %s (%s)\n", path, time.Since(start).Round(time.Millisecond))
	}
	fmt.Fprintln(c.App.Writer, path)
	return nil
}

// kBins returns the k-table bins (m) of --wavelength-range-um LO:HI with
// --resolving-power R, the anchored grid lambda_k = exp(k/R) um with every
// edge inside [LO, HI] um (so that the bins of R and of 10 R nest, and R =
// 100 bins are unions of R = 1000 table bins), or of the observation file
// of --bins-file.
func kBins(c *cli.Context) (lo, hi []float64, err error) {
	if c.IsSet("wavelength-range-um") && c.IsSet("bins-file") {
		return nil, nil, errors.New("opacity build: give --wavelength-range-um or --bins-file, not both")
	}
	if c.IsSet("bins-file") {
		d, err := obs.ReadDataset(c.String("bins-file"))
		if err != nil {
			return nil, nil, fmt.Errorf("opacity build: --bins-file: %w", err)
		}
		idx := make([]int, d.Len())
		for i := range idx {
			idx[i] = i
		}
		slices.SortFunc(idx, func(a, b int) int { return cmpF(d.Lo[a], d.Lo[b]) })
		for n, i := range idx {
			if n > 0 && d.Lo[i] < hi[n-1] {
				return nil, nil, fmt.Errorf("opacity build: --bins-file %s: bins at %s and %s overlap; a k-table's bins must not (build on the anchored grid with --wavelength-range-um and --resolving-power, and let the fit merge them)",
					d.Path, d.Where(idx[n-1]), d.Where(i))
			}
			lo, hi = append(lo, d.Lo[i]), append(hi, d.Hi[i])
		}
		return lo, hi, nil
	}
	a, b, r, _, err := spanWith(c, "wavelength-range-um", "resolving-power")
	if err != nil {
		return nil, nil, err
	}
	what := fmt.Sprintf("--wavelength-range-um %s --resolving-power %g", c.String("wavelength-range-um"), r)
	if !(a > 0) || !(b > a) || !(r > 0) || r > 1e6 {
		return nil, nil, fmt.Errorf("opacity build: %s: want 0 < LO < HI (um) and 0 < R <= 1e6", what)
	}
	if n := r * math.Log(b/a); n > maxBuildValues/16 {
		return nil, nil, fmt.Errorf("opacity build: %s: %.0f bins is too many", what, n)
	}
	lo, hi = opacity.AnchoredBins(a, b, r)
	if len(lo) == 0 {
		return nil, nil, fmt.Errorf("opacity build: %s: no bin of the grid exp(k/%g) um lies inside %g-%g um", what, r, a, b)
	}
	return lo, hi, nil
}

func cmpF(a, b float64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// kTemperatures returns --temperature, or DefaultKT clipped to the range
// every isotopologue of the gas's molecule with a partition table covers.
func kTemperatures(c *cli.Context, l *build.List) ([]float64, error) {
	if t, err := buildTemperatures(c); t != nil || err != nil {
		return t, err
	}
	lo, hi := 0.0, math.Inf(1)
	mol := lbl.MoleculeID(l.Gas)
	for k, d := range l.Iso {
		if d.Q != nil && (k.Mol == mol || len(l.Iso) == 1) {
			a, b := d.Q.Range()
			lo, hi = max(lo, a), min(hi, b)
		}
	}
	var out []float64
	for _, t := range opacity.DefaultKT() {
		if t >= lo && t <= hi {
			out = append(out, t)
		}
	}
	if len(out) < 2 {
		return nil, fmt.Errorf("opacity build: the partition sums of %s cover %g-%g K, too little of the default temperatures; give --temperatures-k", l.Gas, lo, hi)
	}
	return out, nil
}

// parseQuadrature reads "N" or "N1,N2,...@S1,..." (Gauss-Legendre parts
// with split points in g).
func parseQuadrature(spec string) (opacity.Quadrature, error) {
	ns, splits, _ := strings.Cut(spec, "@")
	var n []int
	for _, f := range strings.Split(ns, ",") {
		v, err := strconv.Atoi(strings.TrimSpace(f))
		if err != nil || v < 1 || v > 1000 {
			return opacity.Quadrature{}, fmt.Errorf("opacity build: --quadrature %q: %q is not a number of nodes (1-1000)", spec, f)
		}
		n = append(n, v)
	}
	var sp []float64
	if splits != "" {
		for _, f := range strings.Split(splits, ",") {
			v, err := strconv.ParseFloat(strings.TrimSpace(f), 64)
			if err != nil {
				return opacity.Quadrature{}, fmt.Errorf("opacity build: --quadrature %q: split %q is not a number", spec, f)
			}
			sp = append(sp, v)
		}
	}
	q, err := opacity.GaussLegendre(n, sp...)
	if err != nil {
		return opacity.Quadrature{}, fmt.Errorf("opacity build: --quadrature %q: %w", spec, err)
	}
	return q, nil
}
