package main

import (
	"cmp"
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

// opacityBuildCommand is the "build" subcommand of "chord opacity": line
// lists, partition sums and CIA files plus a grid specification to table
// files in a directory.
var opacityBuildCommand = &cli.Command{
	Name:      "build",
	Usage:     "build opacity table files from line lists and CIA files (or the demo set)",
	ArgsUsage: " ",
	Description: "Builds the table of one gas from the line lists given with --lines (HITRAN 160-character\n" +
		".par records, HITEMP's, with or without comma-separated broadener fields, CDSD-HITEMP's\n" +
		"127-character records, HITRAN's tab- or comma-separated downloads, .bz2 or .gz or plain; or one\n" +
		"ExoMol .def file whose .states and .trans chunk files lie beside it):\n" +
		"  a k-table <gas>.k.parquet on the bins of --bins (resolving power on the grid exp(k/R) um) or\n" +
		"  --bins-from (an observation file), at the pressures and temperatures of --pressure and\n" +
		"  --temperature (defaults: 1e-7 to 100 bar at 6 per decade; 100 to 3000 K in 19 steps, clipped to\n" +
		"  the partition sums' range), streamed from the files in bounded memory; a build stopped by\n" +
		"  SIGINT (exit code 3) resumes where it stopped when the same command is run again;\n" +
		"  or a table of point cross-sections <gas>.parquet on the grid of --wavenumber or --wavelength.\n" +
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
		&cli.StringFlag{Name: "gas", Usage: "gas `NAME` of the table (default: the HITRAN molecule of the lines, or the ExoMol formula)"},
		&cli.StringFlag{Name: "molparam", Usage: "HITRAN molparam `FILE` (isotopologue masses, abundances, Q(296 K)); needed for HITRAN line lists"},
		&cli.StringFlag{Name: "tips", Usage: "TIPS partition-sum table `FILE` (header Temp(K) NAME_code ...)"},
		&cli.StringSliceFlag{Name: "partition", Usage: "two-column partition-sum file for one isotopologue, `[MOL/ISO=]FILE` (e.g. 1/1=q1.txt; without MOL/ISO= the file's header names it); repeatable, the newest edition per isotopologue is used"},
		&cli.StringSliceFlag{Name: "fields", Usage: "names of the comma-separated fields after the records of a HITRAN file, `FILE=NAME,NAME,...` (e.g. f.txt=delta_H2,err,ref); repeatable"},
		&cli.StringSliceFlag{Name: "broad", Usage: "ExoMol `FILE` <slug>__<H2|He|CO2|H2O>.broad of J-dependent widths; repeatable"},
		&cli.StringFlag{Name: "mixture", Usage: "broadening gas mixture `GAS:FRACTION,...` of the background (air, H2, He, CO2, H2O), e.g. H2:0.85,He:0.15 (default air)"},
		&cli.StringSliceFlag{Name: "cia", Usage: "HITRAN CIA `FILE`; repeat for several files and pairs (files of one pair are combined)"},
		&cli.StringFlag{Name: "pressure", Usage: "pressure grid `LO:HI:N` in bar, N points log-spaced", DefaultText: "k-tables 1e-7:100:55, point tables 1e-7:100:13"},
		&cli.StringFlag{Name: "temperature", Usage: "temperature grid in K: `LIST` (T1,T2,...) or LO:HI:N evenly spaced",
			DefaultText: "k-tables 100,150,200,250,300,400,...,2600,3000 clipped to the partition sums; point tables 200,300,400,500,600,800,...,2000"},
		&cli.StringFlag{Name: "bins", Usage: "k-table bins `LO:HI:R`: wavelengths LO-HI um at resolving power R, edges exp(k/R) um"},
		&cli.StringFlag{Name: "bins-from", Usage: "k-table bins: the bin edges of an observation `FILE`"},
		&cli.StringFlag{Name: "quadrature", Value: "12,4@0.95", Usage: "k-table g quadrature: Gauss-Legendre `N[,N2,...@SPLIT,...]`, e.g. 16 or 12,4@0.95"},
		&cli.Float64Flag{Name: "wing-widths", Usage: "k-tables: cut each line at min(--cutoff, `N` Voigt half-widths) (0: --cutoff alone)"},
		&cli.Float64Flag{Name: "weak-cut", Value: lbl.DefaultWeakCut, Usage: "k-tables: a line weaker than `F` times the strongest line within --weak-ref and whose peak is below F times the local absorption goes into a pseudo-continuum (0: every line profiled)"},
		&cli.Float64Flag{Name: "weak-ref", Usage: "k-tables: half-width of the neighbourhood of --weak-cut in `CM-1` (0: 1)"},
		&cli.Float64Flag{Name: "resolution", Usage: "k-tables: resolving power `R` of the fine grid (0: a third of the Doppler half-width at each temperature)"},
		&cli.IntFlag{Name: "window-lines", Usage: "k-tables: at most about `N` lines held at once (0: 2000000)"},
		&cli.StringFlag{Name: "wavenumber", Usage: "wavenumber grid `LO:HI:STEP` in cm^-1"},
		&cli.StringFlag{Name: "wavelength", Usage: "wavelength grid `LO:HI:R` in um, log-spaced at resolving power R"},
		&cli.Float64Flag{Name: "cutoff", Value: lbl.DefaultWingCutoff, Usage: "line-wing cut-off in `CM-1` from the line centre"},
		&cli.Float64Flag{Name: "min-intensity", Usage: "skip lines weaker than `S` at the table temperature, cm^-1/(molecule cm^-2)"},
		&cli.Float64Flag{Name: "self-fraction", Usage: "volume mixing `RATIO` of the absorber for self-broadening (0: dilute)"},
		&cli.StringFlag{Name: "broadener", Usage: "background gas `NAME` for provenance, with --broadener-scale (default air)"},
		&cli.Float64Flag{Name: "broadener-scale", Usage: "background half-width = `SCALE` x air half-width (0: 1)"},
		&cli.Float64Flag{Name: "broadener-n", Usage: "temperature `EXPONENT` of the background half-width (0: the lines' own)"},
		&cli.BoolFlag{Name: "no-shift", Usage: "ignore the lines' pressure shifts"},
		&cli.Float64Flag{Name: "abundance", Usage: "ExoMol: weight intensities by this isotopologue `FRACTION` (0: 1)"},
		&cli.Float64Flag{Name: "exomol-gamma", Usage: "ExoMol: Lorentz half-width in `CM-1/BAR` at 296 K instead of the .def default"},
		&cli.Float64Flag{Name: "exomol-n", Usage: "ExoMol: temperature `EXPONENT` of --exomol-gamma"},
		&cli.IntFlag{Name: "workers", Aliases: []string{"j"}, Usage: "`N` worker goroutines (0: all cores)"},
		&cli.BoolFlag{Name: "quiet", Aliases: []string{"q"}, Usage: "no progress output"},
	},
	Action: runOpacityBuild,
}

func init() {
	opacityCommand.Subcommands = append(opacityCommand.Subcommands, opacityBuildCommand)
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
		if f, ok := firstSet(c, "lines", "cia", "molparam", "tips", "partition", "wavenumber", "wavelength", "gas", "bins", "bins-from"); ok {
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
	kBins := c.IsSet("bins") || c.IsSet("bins-from")
	if kBins {
		if f, ok := firstSet(c, "wavenumber", "wavelength"); ok {
			return fmt.Errorf("opacity build: --%s makes a point cross-section table; k-table bins (--bins, --bins-from) are built without it", f)
		}
	} else if f, ok := firstSet(c, "quadrature", "wing-widths", "weak-cut", "weak-ref", "resolution", "window-lines"); ok {
		return fmt.Errorf("opacity build: --%s applies to k-tables: give their bins with --bins or --bins-from", f)
	}
	nu, err := buildWavenumbers(c.String("wavenumber"), c.String("wavelength"), len(lineFiles) > 0 && !kBins)
	if err != nil {
		return err
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
	if logP, err = buildPressures(cmp.Or(c.String("pressure"), "1e-7:100:13")); err != nil {
		return nil, nil, err
	}
	if temps, err = buildTemperatures(cmp.Or(c.String("temperature"), "200,300,400,500,600,800,1000,1200,1400,1600,1800,2000")); err != nil {
		return nil, nil, err
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

// parseRange reads "LO:HI:N" (three numbers) for the flag named name.
func parseRange(name, s string) (lo, hi, n float64, err error) {
	f := strings.Split(s, ":")
	if len(f) != 3 {
		return 0, 0, 0, fmt.Errorf("opacity build: --%s %q: want LO:HI:N", name, s)
	}
	var v [3]float64
	for i, x := range f {
		if v[i], err = strconv.ParseFloat(strings.TrimSpace(x), 64); err != nil || math.IsNaN(v[i]) || math.IsInf(v[i], 0) {
			return 0, 0, 0, fmt.Errorf("opacity build: --%s %q: %q is not a number", name, s, x)
		}
	}
	return v[0], v[1], v[2], nil
}

// gridPoints returns the n grid values at(0), at(1), ... of the flag named
// name (given as s), refusing more than maxBuildValues of them.
func gridPoints(name, s string, n float64, at func(i float64) float64) ([]float64, error) {
	if n > maxBuildValues {
		return nil, fmt.Errorf("opacity build: --%s %q: %g points is too many", name, s, n)
	}
	out := make([]float64, int(n))
	for i := range out {
		out[i] = at(float64(i))
	}
	return out, nil
}

// buildPressures parses "--pressure LO:HI:N" (bar) into log10 of Pa.
func buildPressures(s string) ([]float64, error) {
	lo, hi, n, err := parseRange("pressure", s)
	if err != nil {
		return nil, err
	}
	if !(lo > 0) || !(hi >= lo) || n != math.Trunc(n) || n < 1 || (n == 1) != (lo == hi) || n > 1000 {
		return nil, fmt.Errorf("opacity build: --pressure %q: want 0 < LO < HI (bar) and 2 <= N <= 1000 points, or LO = HI with N = 1", s)
	}
	a, b := math.Log10(lo*1e5), math.Log10(hi*1e5)
	return gridPoints("pressure", s, n, func(i float64) float64 {
		if n == 1 {
			return a
		}
		return a + (b-a)*i/(n-1)
	})
}

// buildTemperatures parses "--temperature T1,T2,..." or "LO:HI:N" (K).
func buildTemperatures(s string) ([]float64, error) {
	if strings.Contains(s, ":") {
		lo, hi, n, err := parseRange("temperature", s)
		if err != nil {
			return nil, err
		}
		if !(lo > 0) || !(hi > lo) || n != math.Trunc(n) || n < 2 || n > 1000 {
			return nil, fmt.Errorf("opacity build: --temperature %q: want 0 < LO < HI (K) and 2 <= N <= 1000", s)
		}
		return gridPoints("temperature", s, n, func(i float64) float64 { return lo + (hi-lo)*i/(n-1) })
	}
	var out []float64
	for _, x := range strings.Split(s, ",") {
		v, err := strconv.ParseFloat(strings.TrimSpace(x), 64)
		if err != nil || !(v > 0) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("opacity build: --temperature %q: %q is not a positive temperature in K", s, x)
		}
		if len(out) > 0 && !(v > out[len(out)-1]) {
			return nil, fmt.Errorf("opacity build: --temperature %q: temperatures must be strictly ascending (%g after %g)", s, v, out[len(out)-1])
		}
		out = append(out, v)
	}
	return out, nil
}

// buildWavenumbers parses the wavenumber grid (m^-1) from "--wavenumber
// LO:HI:STEP" (cm^-1) or "--wavelength LO:HI:R" (um). Without either it
// returns nil, which is an error when a line table is to be built.
func buildWavenumbers(wn, wl string, needed bool) ([]float64, error) {
	switch {
	case wn != "" && wl != "":
		return nil, errors.New("opacity build: give --wavenumber or --wavelength, not both")
	case wn != "":
		lo, hi, step, err := parseRange("wavenumber", wn)
		if err != nil {
			return nil, err
		}
		if !(lo > 0) || !(hi > lo) || !(step > 0) {
			return nil, fmt.Errorf("opacity build: --wavenumber %q: want 0 < LO < HI and STEP > 0 (cm^-1)", wn)
		}
		n := math.Floor((hi-lo)/step+1e-9) + 1
		return gridPoints("wavenumber", wn, n, func(i float64) float64 { return 100 * (lo + step*i) })
	case wl != "":
		lo, hi, r, err := parseRange("wavelength", wl)
		if err != nil {
			return nil, err
		}
		if !(lo > 0) || !(hi > lo) || !(r > 0) {
			return nil, fmt.Errorf("opacity build: --wavelength %q: want 0 < LO < HI (um) and R > 0", wl)
		}
		n := max(2, math.Round(r*math.Log(hi/lo))+1)
		// Ascending wavenumber: from 1/hi to 1/lo, log-spaced.
		a, b := 1e6/hi, 1e6/lo
		return gridPoints("wavelength", wl, n, func(i float64) float64 { return a * math.Exp(i/(n-1)*math.Log(b/a)) })
	case needed:
		return nil, errors.New("opacity build: line lists need a wavenumber grid: --wavenumber LO:HI:STEP (cm^-1) or --wavelength LO:HI:R (um)")
	}
	return nil, nil
}
