// Package demo makes the demo opacity tables: synthetic line lists of
// eight gases at their real band centres, pushed through the line-by-line
// code, and synthetic CIA bands of H2-H2 and H2-He; it builds them, writes
// them as table files and keeps them in a cache directory. They exist so
// that chord runs without downloads, and every table says it is demo, not
// for science.
package demo

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"maps"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"chord/forward/opacity"
	"chord/forward/opacity/lbl"
	"chord/forward/opacity/tablefile"
)

// Version identifies the demo generator: its line lists, grid, build
// settings and CIA shapes. Change it whenever any of them changes, so
// cached demo tables are rebuilt. Callers put it in the cache directory
// name. Version 3: k-tables (correlated-k) instead of cross-sections.
// Version 4: line profiles summed on a hierarchy of grids (lbl, the
// multi-level evaluation), which moves the tables by about 1e-4.
const Version = "4"

// MetaVersion is the metadata key that carries Version in every
// demo table.
const MetaVersion = "demo_version"

// The demo grid: k-tables on bins of resolving power ResolvingPower with
// edges exp(k/R) um from 0.5 to 20 um (so the bins of any R that divides
// it are unions of table bins), 19 pressures log-spaced from 1e-7 to 100
// bar (1e-2 to 1e7 Pa, 2 per decade), 9 temperatures from 200 to 2000 K,
// and the default g quadrature. The fine grid the k-distributions are
// sorted from has resolving power FineResolvingPower: coarser than the
// Doppler rule of real tables (a few 1e6), so the demo lines are sampled,
// not resolved, which is fine for invented lines and lets the eight gases
// build in about a minute on two cores (docs/opacity-build.md, "demo").
const (
	ResolvingPower     = 200
	FineResolvingPower = 1e5
	demoLambdaMin      = 0.5e-6  // m
	demoLambdaMax      = 20e-6   // m
	demoNuMinCm        = 500.0   // cm^-1 (20 um), CIA grid
	demoNuMaxCm        = 20000.0 // cm^-1 (0.5 um)
	demoCIAResPower    = 500     // CIA bands are smooth: a coarser grid suffices
)

var (
	demoLog10P = demoLinspace(-2, 7, 19) // log10(P / Pa)
	demoT      = []float64{200, 300, 400, 500, 700, 1000, 1300, 1600, 2000}
	demoCIAT   = []float64{200, 300, 400, 600, 800, 1000, 1500, 2000, 2500, 3000}
)

// demoBins returns the bins of the demo k-tables.
func demoBins() (lo, hi []float64) {
	return opacity.AnchoredBins(demoLambdaMin*1e6, demoLambdaMax*1e6, ResolvingPower)
}

// Gases returns the names of the demo gases.
func Gases() []string {
	out := make([]string, len(demoGases))
	for i := range demoGases {
		out[i] = demoGases[i].Name
	}
	return out
}

// Lines returns the synthetic line list of a demo gas and the
// isotopologue data (mass, partition function) the line-by-line engine
// needs for it. The lines are demo, not for science.
func Lines(gas string) ([]lbl.Line, lbl.IsoData, error) {
	for i := range demoGases {
		g := &demoGases[i]
		if g.Name == gas {
			return g.lines(), lbl.IsoData{lbl.IsoKey{Mol: g.Mol, Iso: 1}: g.isotopologue()}, nil
		}
	}
	return nil, nil, fmt.Errorf("opacity: %q is not a demo gas (demo gases: %v)", gas, Gases())
}

// demoWavenumbers returns a grid from demoNuMinCm to demoNuMaxCm, log-spaced
// at resolving power r, in m^-1.
func demoWavenumbers(r float64) []float64 {
	n := int(math.Round(r*math.Log(demoNuMaxCm/demoNuMinCm))) + 1
	out := make([]float64, n)
	for i := range out {
		out[i] = 100 * demoNuMinCm * math.Exp(float64(i)/float64(n-1)*math.Log(demoNuMaxCm/demoNuMinCm))
	}
	return out
}

func demoLinspace(a, b float64, n int) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = a + (b-a)*float64(i)/float64(n-1)
	}
	return out
}

// demoMeta returns the metadata every demo table carries.
func demoMeta() map[string]string {
	return map[string]string{
		opacity.MetaDemo:           "true",
		opacity.MetaDemoNote:       opacity.DemoNote,
		MetaVersion:                Version,
		opacity.MetaProgramVersion: "chord demo generator " + Version,
	}
}

// Build builds the demo tables in memory: one k-table per demo gas from
// its synthetic line list through lbl.BuildK (the demo grid above, 25
// cm^-1 wing cut-off, air broadening), and the demo CIA tables of H2-H2
// and H2-He. Progress lines go to progress (nil: none). Every table's Meta
// says "demo, not for science".
func Build(progress io.Writer) (*opacity.Set, error) {
	lo, hi := demoBins()
	set := &opacity.Set{K: map[string]*opacity.KTable{}, Demo: true}
	for _, gas := range Gases() {
		start := time.Now()
		lines, iso, err := Lines(gas)
		if err != nil {
			return nil, err
		}
		t, err := lbl.BuildK(lines, iso, &lbl.KSettings{
			Gas: gas, Log10P: demoLog10P, T: demoT, Lo: lo, Hi: hi, Resolution: FineResolvingPower,
		})
		if err != nil {
			return nil, fmt.Errorf("opacity: demo %s: %w", gas, err)
		}
		for k, v := range demoMeta() {
			t.Meta[k] = v
		}
		set.K[gas] = t
		if progress != nil {
			fmt.Fprintf(progress, "demo opacity %-4s %5d lines, %s\n", gas, len(lines), time.Since(start).Round(time.Millisecond))
		}
	}
	cnu := demoWavenumbers(demoCIAResPower)
	for _, c := range demoCIA {
		set.CIA = append(set.CIA, c.table(demoCIAT, cnu))
	}
	return set, nil
}

// Load returns the demo opacity tables, building them once and caching
// them as table files in cacheDir (callers pass, for example,
// os.UserCacheDir()/chord/demo-<Version>). A cache whose tables were
// made by another generator version, or that is incomplete or unreadable,
// is rebuilt. The tables are written to a fresh temporary directory next to
// cacheDir and renamed into place, so two processes building at once never
// see each other's partial files: the first rename wins and the other
// process uses its result. An existing cacheDir that holds anything but
// demo table files is never replaced (an error says so). The returned Set
// has Demo set and lists the cached files.
func Load(cacheDir string, progress io.Writer) (*opacity.Set, error) {
	if cacheDir == "" {
		return nil, errors.New("opacity: demo set: no cache directory given")
	}
	if s, err := loadDemoCache(cacheDir); err == nil {
		return s, nil
	}
	if err := checkReplaceable(cacheDir); err != nil {
		return nil, err
	}
	parent, base := filepath.Split(filepath.Clean(cacheDir))
	if parent == "" {
		parent = "."
	}
	if err := os.MkdirAll(parent, 0o755); err != nil {
		return nil, fmt.Errorf("opacity: demo set cache: %w", err)
	}
	if progress != nil {
		fmt.Fprintf(progress, "building the demo opacity tables (once; cached in %s)\n", cacheDir)
	}
	set, err := Build(progress)
	if err != nil {
		return nil, err
	}
	tmp, err := os.MkdirTemp(parent, "."+base+".tmp-*")
	if err != nil {
		return nil, fmt.Errorf("opacity: demo set cache: %w", err)
	}
	defer os.RemoveAll(tmp) // empty after a successful rename
	if err := writeSet(tmp, set, false); err != nil {
		return nil, err
	}
	if err := os.Chmod(tmp, 0o755); err != nil {
		return nil, fmt.Errorf("opacity: demo set cache: %w", err)
	}
	if err := publishDir(tmp, cacheDir); err != nil {
		return nil, err
	}
	s, err := loadDemoCache(cacheDir)
	if err != nil {
		return nil, fmt.Errorf("opacity: demo set cache %s just written does not load: %w", cacheDir, err)
	}
	return s, nil
}

// publishDir renames the finished directory tmp to dst. When dst exists it
// is either a complete cache another process has just published (then tmp
// is dropped and dst kept) or a stale one, which is moved aside and
// replaced.
func publishDir(tmp, dst string) error {
	err := os.Rename(tmp, dst)
	if err == nil {
		return nil
	}
	if _, lerr := loadDemoCache(dst); lerr == nil {
		return nil // another process won the race with a good cache
	}
	if err := checkReplaceable(dst); err != nil {
		return err
	}
	stale := tmp + ".stale"
	if rerr := os.Rename(dst, stale); rerr != nil && !errors.Is(rerr, os.ErrNotExist) {
		return fmt.Errorf("opacity: demo set cache: replace %s: %w (first error: %v)", dst, rerr, err)
	}
	defer os.RemoveAll(stale)
	if err := os.Rename(tmp, dst); err != nil {
		if _, lerr := loadDemoCache(dst); lerr == nil {
			return nil
		}
		return fmt.Errorf("opacity: demo set cache: %w", err)
	}
	return nil
}

// checkReplaceable refuses to let a stale cache be replaced unless dir
// holds nothing but demo table files and the writer's temporary files, so
// that a cache directory pointed at the wrong place never deletes anything
// else. A missing dir is fine.
func checkReplaceable(dir string) error {
	ents, err := os.ReadDir(dir)
	if errors.Is(err, os.ErrNotExist) {
		return nil
	}
	if err != nil {
		return fmt.Errorf("opacity: demo set cache: %w", err)
	}
	names := map[string]bool{}
	for _, p := range demoFileNames("") {
		names[p] = true
	}
	for _, e := range ents {
		n := e.Name()
		if e.Type().IsRegular() && (names[n] || (strings.HasPrefix(n, ".") && strings.Contains(n, ".parquet.tmp-"))) {
			continue
		}
		return fmt.Errorf("opacity: demo set cache %s holds %q, which is not a demo table: refusing to replace the directory (choose an empty or new cache directory)", dir, n)
	}
	return nil
}

// writeSet writes the tables of s as table files <gas>.parquet and
// <A>-<B>.parquet in dir.
func writeSet(dir string, s *opacity.Set, overwrite bool) error {
	for _, gas := range slices.Sorted(maps.Keys(s.K)) {
		if err := tablefile.WriteK(filepath.Join(dir, gas+".parquet"), s.K[gas], overwrite); err != nil {
			return err
		}
	}
	for _, c := range s.CIA {
		if err := tablefile.WriteCIA(filepath.Join(dir, c.Pair[0]+"-"+c.Pair[1]+".parquet"), c, overwrite); err != nil {
			return err
		}
	}
	return nil
}

// Write builds the demo tables and writes them as table files
// <gas>.parquet and <A>-<B>.parquet into dir (created if missing), refusing
// to replace existing files unless overwrite is set; a refusal (an error
// matching fs.ErrExist) is found before anything is built or written. It
// returns the files written.
func Write(dir string, overwrite bool, progress io.Writer) ([]string, error) {
	files := demoFileNames(dir)
	if !overwrite {
		for _, p := range files {
			if _, err := os.Lstat(p); err == nil {
				return nil, &os.PathError{Op: "opacity: write demo table", Path: p, Err: fs.ErrExist}
			}
		}
	}
	set, err := Build(progress)
	if err != nil {
		return nil, err
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("opacity: %w", err)
	}
	if err := writeSet(dir, set, overwrite); err != nil {
		return nil, err
	}
	return files, nil
}

// demoFileNames returns the table files of the demo set in dir, in the
// order writeSet writes them.
func demoFileNames(dir string) []string {
	var out []string
	for _, gas := range slices.Sorted(slices.Values(Gases())) {
		out = append(out, filepath.Join(dir, gas+".parquet"))
	}
	for _, c := range demoCIA {
		out = append(out, filepath.Join(dir, c.Pair[0]+"-"+c.Pair[1]+".parquet"))
	}
	return out
}

// loadDemoCache loads a demo cache directory and checks that it is
// complete and was made by this generator version.
func loadDemoCache(dir string) (*opacity.Set, error) {
	s, err := tablefile.LoadDir(dir)
	if err != nil {
		return nil, err
	}
	for _, g := range demoGases {
		t := s.K[g.Name]
		if t == nil {
			return nil, fmt.Errorf("opacity: demo cache %s: no table for %s", dir, g.Name)
		}
		if v := t.Meta[MetaVersion]; v != Version || !opacity.IsDemo(t.Meta) {
			return nil, fmt.Errorf("opacity: demo cache %s: %s table is from demo generator %q, want %q", dir, g.Name, v, Version)
		}
	}
	if len(s.K) != len(demoGases) || len(s.XSec) != 0 || len(s.CIA) != len(demoCIA) {
		return nil, fmt.Errorf("opacity: demo cache %s: %d gases (k-tables) and %d CIA pairs, want %d and %d",
			dir, len(s.K), len(s.CIA), len(demoGases), len(demoCIA))
	}
	for _, c := range s.CIA {
		if c.Meta[MetaVersion] != Version || !opacity.IsDemo(c.Meta) {
			return nil, fmt.Errorf("opacity: demo cache %s: CIA %s-%s is from demo generator %q, want %q", dir, c.Pair[0], c.Pair[1], c.Meta[MetaVersion], Version)
		}
	}
	s.Demo = true
	return s, nil
}

// demoCIABand is one band of a demo CIA spectrum:
//
//	k(nu, T) = Peak (300/T)^(1/2) exp(-|nu - Nu0| / (Width (T/300)^(1/2)))
//
// in cm^5 molecule^-2: a cusp at the band centre with exponential wings
// that widen with temperature while the band integral stays fixed. Real
// collision-induced bands have roughly exponential far wings (fact of the
// trade); the shape is otherwise a demo choice.
type demoCIABand struct {
	Nu0, Peak, Width float64 // cm^-1, cm^5 molecule^-2 at 300 K, cm^-1 at 300 K
}

type demoCIAPair struct {
	Pair  [2]string
	Bands []demoCIABand
}

// demoCIA are the demo CIA pairs. Band centres are the H2 transitions that
// carry collision-induced absorption (Herzberg 1950; rotational S(0) 354
// and S(1) 587 cm^-1, fundamental Q(1) near 4155 and S(1) near 4713 cm^-1,
// first overtone near 8100 cm^-1, second overtone near 12000 cm^-1),
// written from memory. Peak values at 300 K are rough, from memory, of
// the order of the laboratory values (about 1e-45 cm^5 molecule^-2 in the
// rotational band, i.e. about 1e-6 cm^-1 amagat^-2).
var demoCIA = []demoCIAPair{
	{Pair: [2]string{"H2", "H2"}, Bands: []demoCIABand{
		{Nu0: 354, Peak: 1.5e-45, Width: 150},
		{Nu0: 587, Peak: 2.5e-45, Width: 200},
		{Nu0: 4155, Peak: 4e-46, Width: 200},
		{Nu0: 4713, Peak: 2e-46, Width: 250},
		{Nu0: 8100, Peak: 8e-48, Width: 300},
		{Nu0: 12000, Peak: 2e-49, Width: 400},
	}},
	{Pair: [2]string{"H2", "He"}, Bands: []demoCIABand{
		{Nu0: 0, Peak: 1.5e-45, Width: 300},
		{Nu0: 587, Peak: 8e-46, Width: 250},
		{Nu0: 4155, Peak: 2e-46, Width: 300},
		{Nu0: 8100, Peak: 4e-48, Width: 400},
	}},
}

// table evaluates the demo CIA pair on a (T, wavenumber in m^-1) grid.
func (p *demoCIAPair) table(temps, nu []float64) *opacity.CIATable {
	t := &opacity.CIATable{
		Pair:       p.Pair,
		T:          append([]float64(nil), temps...),
		Wavenumber: append([]float64(nil), nu...),
		K:          make([]float64, len(temps)*len(nu)),
		Meta:       demoMeta(),
	}
	t.Meta[opacity.MetaBuildSettings] = "demo CIA: exponential-wing bands at the H2 band centres (demo.go); " + opacity.DemoNote
	for it, T := range temps {
		fillDemoCIA(t.Row(it), p.Bands, T, nu)
	}
	return t
}

// fillDemoCIA evaluates the bands at temperature T into row (m^5) on the
// wavenumbers nu (m^-1).
func fillDemoCIA(row []float64, bands []demoCIABand, T float64, nu []float64) {
	s := math.Sqrt(T / 300)
	for k, v := range nu {
		cm := v / 100
		sum := 0.0
		for _, b := range bands {
			sum += b.Peak / s * math.Exp(-math.Abs(cm-b.Nu0)/(b.Width*s))
		}
		row[k] = sum * 1e-10 // cm^5 -> m^5
	}
}
