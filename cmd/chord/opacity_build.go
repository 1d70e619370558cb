package main

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"github.com/urfave/cli/v2"

	"chord/forward/opacity"
	"chord/forward/opacity/build"
	"chord/forward/opacity/demo"
	"chord/forward/opacity/hitran"
	"chord/forward/opacity/lbl"
	"chord/forward/opacity/tablefile"
	"chord/internal/version"
)

// opacityBuildCommand returns "chord opacity build": line lists,
// partition sums and CIA files plus a grid specification to table files
// in a directory.
func opacityBuildCommand() *cli.Command {
	return &cli.Command{
		Name:      "build",
		Usage:     "build opacity table files from line lists and CIA files (or the demo set)",
		ArgsUsage: " ",
		Description: "Builds the table of one gas from the line lists given with --lines (HITRAN 160-character\n" +
			".par records, HITEMP's, with or without comma-separated broadener fields, CDSD-HITEMP's\n" +
			"127-character records, HITRAN's tab- or comma-separated downloads, .bz2 or .gz or plain; or one\n" +
			"ExoMol .def file whose .states and .trans chunk files lie beside it):\n" +
			"  a k-table <gas>.k.parquet on the bins of --wavelength-range-um with --resolving-power (edges on\n" +
			"  the grid exp(k/R) um) or of --bins-file (an observation file), at the pressures and temperatures\n" +
			"  of --pressure-range-bar with --pressure-points and --temperatures-k (or --temperature-range-k\n" +
			"  with --temperature-points); defaults: 1e-7 to 100 bar at 6 per decade; 100 to 3000 K in 19\n" +
			"  steps, clipped to the partition sums' range; streamed from the files in bounded memory; a build\n" +
			"  stopped by SIGINT (exit code 3) resumes where it stopped when the same command is run again;\n" +
			"  or, with --cross-sections or --wavenumber-range, a table of point cross-sections <gas>.parquet.\n" +
			"One CIA table file <A>-<B>.parquet per pair comes from the HITRAN CIA files given with --cia.\n" +
			"HITRAN line lists need HITRAN's molparam table (--molparam); partition sums come from --tips or\n" +
			"--partition files (the newest edition per isotopologue), otherwise from a rigid-rotor\n" +
			"approximation, with a warning. Existing files are not replaced unless --force is given. --demo\n" +
			"writes the demo tables (synthetic bands; demo, not for science) instead. Progress goes to\n" +
			"standard error.",
		Flags: []cli.Flag{
			&cli.StringFlag{Name: "output", Aliases: []string{"o"}, Usage: "output `DIR` for the table files (created if missing)", Required: true},
			&cli.BoolFlag{Name: "force", Usage: "replace existing table files"},
			&cli.BoolFlag{Name: "demo", Usage: "write the demo opacity tables (demo, not for science)"},
			&cli.StringSliceFlag{Name: "lines", Usage: "line-list `FILE` (HITRAN .par or .tsv, or an ExoMol .def); repeat for several files of one gas"},
			&cli.StringFlag{Name: "gas", Usage: "gas `NAME` of the table", DefaultText: "the HITRAN molecule of the lines, or the ExoMol formula"},
			&cli.StringFlag{Name: "molparam", Usage: "HITRAN molparam `FILE` (isotopologue masses, abundances, Q(296 K)); needed for HITRAN line lists"},
			&cli.StringFlag{Name: "tips", Usage: "TIPS partition-sum table `FILE` (header Temp(K) NAME_code ...)"},
			&cli.StringSliceFlag{Name: "partition", Usage: "two-column partition-sum file for one isotopologue, `[MOL/ISO=]FILE` (e.g. 1/1=q1.txt; without MOL/ISO= the file's header names it); repeatable, the newest edition per isotopologue is used"},
			&cli.StringSliceFlag{Name: "fields", Usage: "names of the comma-separated fields after the records of a HITRAN file, `FILE=NAME,NAME,...` (e.g. f.txt=delta_H2,err,ref); repeatable"},
			&cli.StringSliceFlag{Name: "broad", Usage: "ExoMol `FILE` <slug>__<H2|He|CO2|H2O>.broad of J-dependent widths; repeatable"},
			&cli.StringFlag{Name: "mixture", Usage: "broadening gas mixture `GAS:FRACTION,...` of the background (air, H2, He, CO2, H2O), e.g. H2:0.85,He:0.15", DefaultText: "air"},
			&cli.StringSliceFlag{Name: "cia", Usage: "HITRAN CIA `FILE`; repeat for several files and pairs (files of one pair are combined)"},
			&cli.StringFlag{Name: "pressure-range-bar", Usage: "pressure grid from `LO:HI` bar, log-spaced (with --pressure-points)", DefaultText: "1e-7:100"},
			&cli.IntFlag{Name: "pressure-points", Usage: "`N` pressures of --pressure-range-bar", DefaultText: "k-tables 55 (6 per decade), cross-section tables 13"},
			&cli.StringFlag{Name: "temperatures-k", Usage: "temperature grid, the list `T1,T2,...` in K, ascending",
				DefaultText: "k-tables 100,150,200,250,300,400,...,2600,3000 clipped to the partition sums; cross-section tables 200,300,400,500,600,800,...,2000"},
			&cli.StringFlag{Name: "temperature-range-k", Usage: "temperature grid from `LO:HI` K, evenly spaced (with --temperature-points; instead of --temperatures-k)"},
			&cli.IntFlag{Name: "temperature-points", Usage: "`N` temperatures of --temperature-range-k"},
			&cli.StringFlag{Name: "wavelength-range-um", Usage: "spectral range `LO:HI` in um, with --resolving-power: the k-table bins (edges on the grid exp(k/R) um), or with --cross-sections the log-spaced grid of a cross-section table"},
			&cli.Float64Flag{Name: "resolving-power", Usage: "resolving power `R` of the bins or grid of --wavelength-range-um"},
			&cli.StringFlag{Name: "bins-file", Usage: "k-table bins: the bin edges of an observation `FILE`"},
			&cli.BoolFlag{Name: "cross-sections", Usage: "build a table of point cross-sections on the grid of --wavelength-range-um instead of a k-table"},
			&cli.StringFlag{Name: "wavenumber-range", Usage: "cross-section table: uniform wavenumber grid from `LO:HI` cm^-1 (with --wavenumber-step)"},
			&cli.Float64Flag{Name: "wavenumber-step", Usage: "`STEP` in cm^-1 of --wavenumber-range"},
			&cli.StringFlag{Name: "quadrature", Value: "12,4@0.95", Usage: "k-table g quadrature: Gauss-Legendre `N[,N2,...@SPLIT,...]`, e.g. 16 or 12,4@0.95"},
			&cli.Float64Flag{Name: "wing-widths", Usage: "k-tables: cut each line at min(--cutoff, `N` Voigt half-widths)", DefaultText: "0, the --cutoff alone"},
			&cli.Float64Flag{Name: "weak-cut", Value: lbl.DefaultWeakCut, Usage: "k-tables: a line weaker than `F` times the strongest line within --weak-ref and whose peak is below F times the local absorption goes into a pseudo-continuum (0: every line profiled)"},
			&cli.Float64Flag{Name: "weak-ref", Usage: "k-tables: half-width of the neighbourhood of --weak-cut in `CM-1`", DefaultText: "1"},
			&cli.Float64Flag{Name: "fine-resolving-power", Usage: "k-tables: resolving power `R` of the fine grid", DefaultText: "a third of the Doppler half-width at each temperature"},
			&cli.IntFlag{Name: "window-lines", Usage: "k-tables: at most about `N` lines held at once", DefaultText: "2000000"},
			&cli.Float64Flag{Name: "cutoff", Value: lbl.DefaultWingCutoff, Usage: "line-wing cut-off in `CM-1` from the line centre"},
			&cli.Float64Flag{Name: "min-intensity", Usage: "skip lines weaker than `S` at the table temperature, cm^-1/(molecule cm^-2)", DefaultText: "0, every line kept"},
			&cli.Float64Flag{Name: "self-fraction", Usage: "volume mixing `RATIO` of the absorber for self-broadening", DefaultText: "0, dilute"},
			&cli.StringFlag{Name: "broadener", Usage: "background gas `NAME` for provenance, with --broadener-scale", DefaultText: "air"},
			&cli.Float64Flag{Name: "broadener-scale", Usage: "background half-width = `SCALE` x air half-width", DefaultText: "1"},
			&cli.Float64Flag{Name: "broadener-n", Usage: "temperature `EXPONENT` of the background half-width", DefaultText: "the lines' own"},
			&cli.BoolFlag{Name: "no-shift", Usage: "ignore the lines' pressure shifts"},
			&cli.Float64Flag{Name: "abundance", Usage: "ExoMol: weight intensities by this isotopologue `FRACTION`", DefaultText: "1"},
			&cli.Float64Flag{Name: "exomol-gamma", Usage: "ExoMol: Lorentz half-width in `CM-1/BAR` at 296 K instead of the .def default"},
			&cli.Float64Flag{Name: "exomol-n", Usage: "ExoMol: temperature `EXPONENT` of --exomol-gamma"},
			&cli.IntFlag{Name: "workers", Aliases: []string{"j"}, Usage: "`N` worker goroutines", DefaultText: "all cores"},
			&cli.BoolFlag{Name: "quiet", Aliases: []string{"q"}, Usage: "no progress output"},
		},
		Action: runOpacityBuild,
	}
}

// maxBuildValues bounds the size of a table this command builds (float32
// values; 1 GiB), so that a mistyped grid fails at once.
const maxBuildValues = 1 << 28

func runOpacityBuild(c *cli.Context) error {
	if c.NArg() > 0 {
		return fmt.Errorf("opacity build: unexpected argument %q (input files go with --lines and --cia)", c.Args().First())
	}
	out := c.String("output")
	force := c.Bool("force")
	var progress io.Writer = c.App.ErrWriter
	if c.Bool("quiet") {
		progress = nil
	}
	if c.Bool("demo") {
		if f, ok := firstSet(c, "lines", "cia", "molparam", "tips", "partition", "wavenumber-range", "wavelength-range-um", "gas", "bins-file"); ok {
			return fmt.Errorf("opacity build: --demo builds the fixed demo set; --%s cannot be used with it", f)
		}
		files, err := demo.Write(out, force, progress)
		if errors.Is(err, fs.ErrExist) {
			return fmt.Errorf("%w (use --force to replace it)", err)
		}
		if err != nil {
			return err
		}
		for _, f := range files {
			fmt.Fprintln(c.App.Writer, f)
		}
		if progress != nil {
			fmt.Fprintf(progress, "wrote %d demo table files to %s (%s)\n", len(files), out, opacity.DemoNote)
		}
		return nil
	}
	lineFiles, ciaFiles := c.StringSlice("lines"), c.StringSlice("cia")
	if len(lineFiles) == 0 && len(ciaFiles) == 0 {
		return errors.New("opacity build: nothing to build: give line lists (--lines), CIA files (--cia) or --demo")
	}
	kBins := c.IsSet("bins-file") || c.IsSet("wavelength-range-um") && !c.Bool("cross-sections")
	if kBins {
		if f, ok := firstSet(c, "wavenumber-range", "wavenumber-step"); ok {
			return fmt.Errorf("opacity build: --%s makes a cross-section table; k-table bins (--wavelength-range-um, --bins-file) are built without it", f)
		}
	} else if f, ok := firstSet(c, "quadrature", "wing-widths", "weak-cut", "weak-ref", "fine-resolving-power", "window-lines"); ok {
		return fmt.Errorf("opacity build: --%s applies to k-tables: give their bins with --wavelength-range-um and --resolving-power, or --bins-file", f)
	}
	var nu []float64
	if !kBins {
		var err error
		if nu, err = buildWavenumbers(c, len(lineFiles) > 0); err != nil {
			return err
		}
	}
	if err := os.MkdirAll(out, 0o755); err != nil {
		return fmt.Errorf("opacity build: %w", err)
	}
	if len(lineFiles) > 0 && kBins {
		if err := buildKTable(c, lineFiles, out, force, progress); err != nil {
			return err
		}
	} else if len(lineFiles) > 0 {
		if err := buildLineTable(c, lineFiles, nu, out, force, progress); err != nil {
			return err
		}
	}
	if len(ciaFiles) > 0 {
		if err := buildCIATables(c, ciaFiles, nu, out, force, progress); err != nil {
			return err
		}
	}
	return nil
}

// buildLineTable builds and writes the cross-section table of the line lists.
func buildLineTable(c *cli.Context, files []string, nu []float64, out string, force bool, progress io.Writer) error {
	logP, temps, err := buildGrid(c, nu)
	if err != nil {
		return err
	}
	src, mixture, err := lineSource(c, files)
	if err != nil {
		return err
	}
	quiet := progress == nil
	lines, err := build.ReadLines(src, nu, c.Float64("cutoff"), lbl.Observer{Note: noteWriter(c, quiet)})
	if err != nil {
		return sourceError(err)
	}
	path, err := tablePath(out, lines.Gas, ".parquet", force)
	if err != nil {
		return err
	}
	settings := lbl.XSecSettings{
		Log10P: logP, T: temps, Wavenumber: nu,
		WingCutoff:   c.Float64("cutoff"),
		MinIntensity: c.Float64("min-intensity"),
		SelfFraction: c.Float64("self-fraction"),
		Mixture:      mixture,
		Broadening: lbl.Broadening{
			Name: c.String("broadener"), Scale: c.Float64("broadener-scale"), N: c.Float64("broadener-n"),
		},
		NoPressureShift: c.Bool("no-shift"),
		Workers:         c.Int("workers"),
		Observer:        tableObserver(c, "cross-sections", lines.Gas, quiet),
		Version:         version.Version,
	}
	start := time.Now()
	t, err := lines.Table(settings)
	if err != nil {
		return err
	}
	if err := tablefile.WriteXSec(path, t, force); err != nil {
		return err
	}
	if !quiet {
		fmt.Fprintf(progress, "wrote %s (%s)\n", path, time.Since(start).Round(time.Millisecond))
	}
	fmt.Fprintln(c.App.Writer, path)
	return nil
}

// buildGrid parses the pressure and temperature grids of a line table
// and refuses a table of more than maxBuildValues values on them and nu.
func buildGrid(c *cli.Context, nu []float64) (logP, temps []float64, err error) {
	if logP, err = buildPressures(c); err != nil {
		return nil, nil, err
	}
	if logP == nil { // 1e-7 to 100 bar, 13 points (in log10 Pa: -2 to 7)
		for i := range 13 {
			logP = append(logP, -2+0.75*float64(i))
		}
	}
	if temps, err = buildTemperatures(c); err != nil {
		return nil, nil, err
	}
	if temps == nil {
		temps = []float64{200, 300, 400, 500, 600, 800, 1000, 1200, 1400, 1600, 1800, 2000}
	}
	if n := len(logP) * len(temps) * len(nu); n > maxBuildValues {
		return nil, nil, fmt.Errorf("opacity build: grid of %d x %d x %d = %d values (%.1f GB) is too large; at most %d",
			len(logP), len(temps), len(nu), n, float64(n)*4/1e9, maxBuildValues)
	}
	return logP, temps, nil
}

// sourceFlags are the flags that set the fields of build.Source.
var sourceFlags = map[string]string{
	"Files": "lines", "Gas": "gas", "MolParam": "molparam", "TIPS": "tips", "Partition": "partition",
	"Abundance": "abundance", "Gamma": "exomol-gamma", "N": "exomol-n", "Fields": "fields", "Broad": "broad",
}

// lineSource maps the flags of the line list to a build.Source and the
// broadening mixture.
func lineSource(c *cli.Context, files []string) (*build.Source, lbl.Mixture, error) {
	m, err := buildMixture(c)
	if err != nil {
		return nil, nil, err
	}
	src, err := sourceFlagsOf(c, files)
	return src, m, err
}

// sourceFlagsOf maps the flags of the files to a build.Source.
func sourceFlagsOf(c *cli.Context, files []string) (*build.Source, error) {
	src := &build.Source{
		Files: files, Gas: c.String("gas"),
		MolParam: c.String("molparam"), TIPS: c.String("tips"), Broad: c.StringSlice("broad"),
		Abundance: c.Float64("abundance"), Gamma: c.Float64("exomol-gamma"), N: c.Float64("exomol-n"),
	}
	for _, spec := range c.StringSlice("partition") {
		key, path, err := parseQSpec(spec)
		if err != nil {
			return nil, err
		}
		src.Partition = append(src.Partition, build.PartitionFile{Iso: key, Path: path})
	}
	for _, spec := range c.StringSlice("fields") {
		file, names, ok := strings.Cut(spec, "=")
		if !ok || file == "" || names == "" {
			return nil, fmt.Errorf("opacity build: --fields %q: want FILE=NAME,NAME,... (e.g. h2shift.txt=delta_H2,err,ref)", spec)
		}
		if src.Fields == nil {
			src.Fields = map[string][]string{}
		}
		src.Fields[file] = strings.Split(names, ",")
	}
	return src, nil
}

// buildMixture parses --mixture.
func buildMixture(c *cli.Context) (lbl.Mixture, error) {
	if !c.IsSet("mixture") {
		return nil, nil
	}
	m, err := lbl.ParseMixture(c.String("mixture"))
	if err != nil {
		return nil, fmt.Errorf("opacity build: --mixture: %w", err)
	}
	return m, nil
}

// sourceError names the flag of a build.OptionError.
func sourceError(err error) error {
	var oe *build.OptionError
	if errors.As(err, &oe) && sourceFlags[oe.Option] != "" {
		return fmt.Errorf("opacity build: --%s: %w", sourceFlags[oe.Option], oe.Err)
	}
	return err
}

// buildCIATables writes one CIA table file per pair of the CIA files, on
// the wavenumber grid nu (nil: the union of the files' wavenumbers).
func buildCIATables(c *cli.Context, files []string, nu []float64, out string, force bool, progress io.Writer) error {
	byPair := map[string][]string{}
	var pairs []string
	for _, f := range files {
		blocks, err := hitran.ReadCIAFile(f)
		if err != nil {
			return err
		}
		p := blocks[0].Pair
		name := p[0] + "-" + p[1]
		for _, b := range blocks[1:] {
			if b.Pair != p {
				return fmt.Errorf("opacity build: %s holds pairs %s and %s-%s; give one pair per file", f, name, b.Pair[0], b.Pair[1])
			}
		}
		if byPair[name] == nil {
			pairs = append(pairs, name)
		}
		byPair[name] = append(byPair[name], f)
	}
	for _, name := range pairs {
		path := filepath.Join(out, name+".parquet")
		if !force {
			if _, err := os.Lstat(path); err == nil {
				return fmt.Errorf("opacity build: %s exists; refusing to overwrite it (use --force)", path)
			}
		}
		t, err := hitran.LoadCIA(nu, byPair[name]...)
		if err != nil {
			return err
		}
		t.Meta[opacity.MetaProgramVersion] = version.Version
		if err := tablefile.WriteCIA(path, t, force); err != nil {
			return err
		}
		if progress != nil {
			fmt.Fprintf(progress, "wrote %s from %s\n", path, strings.Join(byPair[name], ", "))
		}
		fmt.Fprintln(c.App.Writer, path)
	}
	return nil
}

// tablePath returns out/<gas><suffix> for a table of gas, refusing a gas
// name that cannot name a file, and an existing file unless force.
func tablePath(out, gas, suffix string, force bool) (string, error) {
	if err := checkTableName(gas); err != nil {
		return "", err
	}
	path := filepath.Join(out, gas+suffix)
	if !force {
		if _, err := os.Lstat(path); err == nil {
			return "", fmt.Errorf("opacity build: %s exists; refusing to overwrite it (use --force)", path)
		}
	}
	return path, nil
}

// checkTableName refuses gas names that cannot be file names.
func checkTableName(gas string) error {
	if gas == "" || strings.ContainsAny(gas, "/\\ \t") || gas == "." || gas == ".." {
		return fmt.Errorf("opacity build: gas name %q cannot name a table file; give --gas", gas)
	}
	return nil
}

// parseQSpec reads "MOL/ISO=FILE", or "FILE" (the zero key: the file's
// header names the isotopologue).
func parseQSpec(spec string) (lbl.IsoKey, string, error) {
	if !strings.Contains(spec, "=") {
		return lbl.IsoKey{}, spec, nil
	}
	k, path, ok := strings.Cut(spec, "=")
	ms, is, ok2 := strings.Cut(k, "/")
	mol, err1 := strconv.Atoi(ms)
	iso, err2 := strconv.Atoi(is)
	if !ok || !ok2 || err1 != nil || err2 != nil || path == "" {
		return lbl.IsoKey{}, "", fmt.Errorf("opacity build: --partition %q: want MOL/ISO=FILE, e.g. 1/1=q1.txt", spec)
	}
	return lbl.IsoKey{Mol: mol, Iso: iso}, path, nil
}

// spanWith reads the range flag rangeFlag (LO:HI) and the flag xFlag
// that gives its spacing, which go together; given is false when neither
// is set.
func spanWith(c *cli.Context, rangeFlag, xFlag string) (lo, hi, x float64, given bool, err error) {
	switch {
	case !c.IsSet(rangeFlag) && c.IsSet(xFlag):
		return 0, 0, 0, false, fmt.Errorf("opacity build: --%s goes with --%s", xFlag, rangeFlag)
	case !c.IsSet(rangeFlag):
		return 0, 0, 0, false, nil
	case !c.IsSet(xFlag):
		return 0, 0, 0, false, fmt.Errorf("opacity build: --%s needs --%s", rangeFlag, xFlag)
	}
	if lo, hi, err = parseSpan(rangeFlag, c.String(rangeFlag)); err != nil {
		return 0, 0, 0, false, fmt.Errorf("opacity build: %w", err)
	}
	switch v := c.Value(xFlag).(type) {
	case int:
		x = float64(v)
	case float64:
		x = v
	}
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return 0, 0, 0, false, fmt.Errorf("opacity build: --%s %g is not a number", xFlag, x)
	}
	return lo, hi, x, true, nil
}

// gridPoints returns the n grid values at(0), at(1), ... of the flag named
// name, refusing more than maxBuildValues of them.
func gridPoints(name string, n float64, at func(i float64) float64) ([]float64, error) {
	if n > maxBuildValues {
		return nil, fmt.Errorf("opacity build: --%s: %g points is too many", name, n)
	}
	out := make([]float64, int(n))
	for i := range out {
		out[i] = at(float64(i))
	}
	return out, nil
}

// buildPressures reads --pressure-range-bar LO:HI with --pressure-points
// N into log10 of Pa; without them, nil.
func buildPressures(c *cli.Context) ([]float64, error) {
	lo, hi, n, given, err := spanWith(c, "pressure-range-bar", "pressure-points")
	if err != nil || !given {
		return nil, err
	}
	if !(lo > 0) || !(hi >= lo) || n != math.Trunc(n) || n < 1 || (n == 1) != (lo == hi) || n > 1000 {
		return nil, fmt.Errorf("opacity build: --pressure-range-bar %s --pressure-points %g: want 0 < LO < HI (bar) and 2 <= N <= 1000 points, or LO = HI with N = 1", c.String("pressure-range-bar"), n)
	}
	a, b := math.Log10(lo*1e5), math.Log10(hi*1e5)
	return gridPoints("pressure-points", n, func(i float64) float64 {
		if n == 1 {
			return a
		}
		return a + (b-a)*i/(n-1)
	})
}

// buildTemperatures reads --temperatures-k T1,T2,... or
// --temperature-range-k LO:HI with --temperature-points N (K); without
// them, nil.
func buildTemperatures(c *cli.Context) ([]float64, error) {
	lo, hi, n, given, err := spanWith(c, "temperature-range-k", "temperature-points")
	if err != nil {
		return nil, err
	}
	if given && c.IsSet("temperatures-k") {
		return nil, errors.New("opacity build: give --temperatures-k or --temperature-range-k, not both")
	}
	if given {
		if !(lo > 0) || !(hi > lo) || n != math.Trunc(n) || n < 2 || n > 1000 {
			return nil, fmt.Errorf("opacity build: --temperature-range-k %s --temperature-points %g: want 0 < LO < HI (K) and 2 <= N <= 1000", c.String("temperature-range-k"), n)
		}
		return gridPoints("temperature-points", n, func(i float64) float64 { return lo + (hi-lo)*i/(n-1) })
	}
	if !c.IsSet("temperatures-k") {
		return nil, nil
	}
	s := c.String("temperatures-k")
	var out []float64
	for _, x := range strings.Split(s, ",") {
		v, err := strconv.ParseFloat(strings.TrimSpace(x), 64)
		if err != nil || !(v > 0) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("opacity build: --temperatures-k %q: %q is not a positive temperature in K", s, x)
		}
		if len(out) > 0 && !(v > out[len(out)-1]) {
			return nil, fmt.Errorf("opacity build: --temperatures-k %q: temperatures must be strictly ascending (%g after %g)", s, v, out[len(out)-1])
		}
		out = append(out, v)
	}
	return out, nil
}

// buildWavenumbers reads the wavenumber grid (m^-1) of a cross-section
// table from --wavenumber-range LO:HI with --wavenumber-step (cm^-1) or
// --wavelength-range-um LO:HI with --resolving-power. Without either it
// returns nil, which is an error when a line table is to be built.
func buildWavenumbers(c *cli.Context, needed bool) ([]float64, error) {
	wlo, whi, step, wn, err := spanWith(c, "wavenumber-range", "wavenumber-step")
	if err != nil {
		return nil, err
	}
	llo, lhi, r, wl, err := spanWith(c, "wavelength-range-um", "resolving-power")
	if err != nil {
		return nil, err
	}
	switch {
	case wn && wl:
		return nil, errors.New("opacity build: give --wavenumber-range or --wavelength-range-um, not both")
	case wn:
		if !(wlo > 0) || !(whi > wlo) || !(step > 0) {
			return nil, fmt.Errorf("opacity build: --wavenumber-range %s --wavenumber-step %g: want 0 < LO < HI and STEP > 0 (cm^-1)", c.String("wavenumber-range"), step)
		}
		n := math.Floor((whi-wlo)/step+1e-9) + 1
		return gridPoints("wavenumber-step", n, func(i float64) float64 { return 100 * (wlo + step*i) })
	case wl:
		if !(llo > 0) || !(lhi > llo) || !(r > 0) {
			return nil, fmt.Errorf("opacity build: --wavelength-range-um %s --resolving-power %g: want 0 < LO < HI (um) and R > 0", c.String("wavelength-range-um"), r)
		}
		n := max(2, math.Round(r*math.Log(lhi/llo))+1)
		// Ascending wavenumber: from 1/hi to 1/lo, log-spaced.
		a, b := 1e6/lhi, 1e6/llo
		return gridPoints("resolving-power", n, func(i float64) float64 { return a * math.Exp(i/(n-1)*math.Log(b/a)) })
	case needed:
		return nil, errors.New("opacity build: line lists need bins or a grid: --wavelength-range-um LO:HI with --resolving-power R (a k-table; add --cross-sections for a cross-section table), --bins-file FILE, or --wavenumber-range LO:HI with --wavenumber-step STEP (cm^-1)")
	}
	return nil, nil
}
