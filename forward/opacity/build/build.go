// Package build makes a gas's cross-section table from its line-list
// files: it tells HITRAN from ExoMol files, reads the isotopologue data and
// partition sums that go with them, checks that the lines are of one
// molecule, names the gas, chooses between point values and cell means,
// and records provenance, leaving the physics to package lbl.
package build

import (
	"errors"
	"fmt"
	"sort"
	"strings"
	"time"

	"chord/forward/opacity"
	"chord/forward/opacity/exomol"
	"chord/forward/opacity/hitran"
	"chord/forward/opacity/lbl"
)

// Source names the files of one gas's line list and what goes with them.
type Source struct {
	// Files are the line lists: HITRAN files (160-character records or
	// HITRANonline's tab-separated download; overlapping files share their
	// common lines), or one ExoMol .def file whose .states and .trans
	// files lie beside it. A file is ExoMol's when its name ends in ".def".
	Files []string
	// Gas names the table; "" means the HITRAN molecule of the lines, or
	// the molecule of the ExoMol isotopologue formula.
	Gas string

	// MolParam is HITRAN's molparam table (masses, abundances, Q(296 K));
	// HITRAN line lists need it.
	MolParam string
	// TIPS is a TIPS partition-sum table for the molparam isotopologues;
	// "" for none.
	TIPS string
	// Partition lists two-column partition-sum files of single
	// isotopologues, which replace TIPS sums. Isotopologues without a
	// table get lbl's rigid-rotor approximation, with a warning.
	Partition []PartitionFile

	// Abundance, Gamma and N are exomol.Options for ExoMol line lists:
	// the weight of the intensities (0: 1) and the Lorentz half-width
	// (cm^-1/bar at 296 K) and its temperature exponent in place of the
	// .def file's (Gamma 0: the file's).
	Abundance, Gamma, N float64
}

// PartitionFile is a two-column partition-sum file of one isotopologue.
type PartitionFile struct {
	Iso  lbl.IsoKey
	Path string
}

// OptionError is an error in one field of a Source, named as the field
// is (for example "MolParam"), so that a command can name its own flag.
type OptionError struct {
	Option string
	Err    error
}

func (e *OptionError) Error() string {
	return fmt.Sprintf("opacity: line list: %s: %v", e.Option, e.Err)
}

func (e *OptionError) Unwrap() error { return e.Err }

func optionErrorf(option, format string, a ...any) error {
	return &OptionError{Option: option, Err: fmt.Errorf(format, a...)}
}

// Lines is a gas's line list read from its files, with what the
// line-by-line engine needs besides.
type Lines struct {
	Gas   string
	Lines []lbl.Line
	Iso   lbl.IsoData
	// Files are the files read, in order, for the table's provenance.
	Files []string
}

// ReadLines reads the line list of src, keeping the lines within the wing
// cut-off (cm^-1; 0 means lbl.DefaultWingCutoff) of the wavenumber grid
// nu (m^-1, ascending), which are the lines that reach the grid. Notes on
// what it reads go to obs. An error about one field of src is an
// *OptionError.
func ReadLines(src *Source, nu []float64, cutoff float64, obs lbl.Observer) (*Lines, error) {
	if len(nu) == 0 {
		return nil, errors.New("opacity: line list: no wavenumber grid")
	}
	if cutoff == 0 {
		cutoff = lbl.DefaultWingCutoff
	}
	lo, hi := max(0, nu[0]/100-cutoff), nu[len(nu)-1]/100+cutoff
	var exomolFiles, hitranFiles []string
	for _, f := range src.Files {
		if strings.HasSuffix(f, ".def") {
			exomolFiles = append(exomolFiles, f)
		} else {
			hitranFiles = append(hitranFiles, f)
		}
	}
	var (
		l   *Lines
		err error
	)
	switch {
	case len(src.Files) == 0:
		return nil, optionErrorf("Files", "no line-list files")
	case len(exomolFiles) > 1 || (len(exomolFiles) == 1 && len(hitranFiles) > 0):
		return nil, optionErrorf("Files", "one table is built from HITRAN line lists or from one ExoMol .def file, not both or several (%s)", strings.Join(exomolFiles, ", "))
	case len(exomolFiles) == 1:
		l, err = readExoMol(src, exomolFiles[0], lo, hi, obs)
	default:
		l, err = readHITRAN(src, hitranFiles, lo, hi, obs)
	}
	if err != nil {
		return nil, err
	}
	if len(l.Lines) == 0 {
		return nil, fmt.Errorf("opacity: line list: no lines within %g cm^-1 of the grid's wavenumber range %g-%g cm^-1", cutoff, nu[0]/100, nu[len(nu)-1]/100)
	}
	return l, nil
}

// readExoMol reads one ExoMol line list, given its .def file, as HITRAN
// molecule id of the gas, isotopologue 1.
func readExoMol(src *Source, def string, lo, hi float64, obs lbl.Observer) (*Lines, error) {
	for _, f := range []struct {
		name string
		set  bool
	}{{"MolParam", src.MolParam != ""}, {"TIPS", src.TIPS != ""}, {"Partition", len(src.Partition) > 0}} {
		if f.set {
			return nil, optionErrorf(f.name, "applies to HITRAN line lists; ExoMol lists bring their own states")
		}
	}
	d, err := exomol.ReadDef(def)
	if err != nil {
		return nil, err
	}
	gas := src.Gas
	if gas == "" {
		if gas = d.Molecule(); gas == "" {
			return nil, optionErrorf("Gas", "%s gives no IsoFormula; name the gas", def)
		}
	}
	key := lbl.IsoKey{Mol: lbl.MoleculeID(gas), Iso: 1}
	note(&obs, fmt.Sprintf("reading ExoMol line list %s", def))
	start := time.Now()
	list, err := exomol.Read(def, exomol.Options{
		Mol: key.Mol, Iso: key.Iso,
		Abundance: src.Abundance, Gamma: src.Gamma, N: src.N,
		NuMin: lo, NuMax: hi,
	})
	if err != nil {
		return nil, err
	}
	note(&obs, fmt.Sprintf("  %d transitions in range, Q(296 K) = %.6g from %d states (%s)", len(list.Lines), list.Q296, len(list.States.ID), time.Since(start).Round(time.Millisecond)))
	return &Lines{Gas: gas, Lines: list.Lines, Iso: lbl.IsoData{key: list.Isotopologue()}, Files: list.Files}, nil
}

// readHITRAN reads HITRAN line lists of one molecule with the molparam
// table and any partition-sum files.
func readHITRAN(src *Source, files []string, lo, hi float64, obs lbl.Observer) (*Lines, error) {
	for _, f := range []struct {
		name string
		set  bool
	}{{"Abundance", src.Abundance != 0}, {"Gamma", src.Gamma != 0}, {"N", src.N != 0}} {
		if f.set {
			return nil, optionErrorf(f.name, "applies to ExoMol line lists only")
		}
	}
	l := &Lines{Gas: src.Gas}
	iso, err := readIsoData(src, obs)
	if err != nil {
		return nil, err
	}
	l.Iso = iso
	l.Files = append(l.Files, src.MolParam)
	if src.TIPS != "" {
		l.Files = append(l.Files, src.TIPS)
	}
	for _, p := range src.Partition {
		l.Files = append(l.Files, p.Path)
	}
	filter := hitran.LineFilter{NuMin: lo, NuMax: hi}
	var lists [][]lbl.Line
	for _, f := range files {
		note(&obs, fmt.Sprintf("reading HITRAN line list %s", f))
		ls, err := hitran.ReadLineFile(f, filter)
		if err != nil {
			return nil, err
		}
		lists = append(lists, ls)
		l.Files = append(l.Files, f)
	}
	l.Lines = lbl.MergeLines(lists...) // files that overlap (e.g. downloads by window) share lines
	mols := map[int]bool{}
	for _, ln := range l.Lines {
		mols[ln.Mol] = true
	}
	if len(mols) > 1 {
		return nil, fmt.Errorf("opacity: line list: the line lists hold %d molecules (%s); a table is one gas", len(mols), moleculeList(mols))
	}
	if l.Gas == "" {
		for m := range mols {
			l.Gas = lbl.MoleculeNames[m]
		}
	}
	return l, nil
}

// readIsoData reads the molparam table and attaches the partition sums of
// the TIPS table and the partition files.
func readIsoData(src *Source, obs lbl.Observer) (lbl.IsoData, error) {
	if src.MolParam == "" {
		return nil, optionErrorf("MolParam", "HITRAN line lists need HITRAN's molparam table for masses, abundances and Q(296 K)")
	}
	iso, err := hitran.ReadMolParam(src.MolParam)
	if err != nil {
		return nil, err
	}
	if src.TIPS != "" {
		n, err := hitran.ReadTIPSTable(src.TIPS, iso)
		if err != nil {
			return nil, err
		}
		note(&obs, fmt.Sprintf("partition sums for %d isotopologues from %s", n, src.TIPS))
	}
	for _, p := range src.Partition {
		d := iso[p.Iso]
		if d == nil {
			return nil, optionErrorf("Partition", "%s: %v is not in the molparam table %s", p.Path, p.Iso, src.MolParam)
		}
		if d.Q, err = hitran.ReadQFile(p.Path); err != nil {
			return nil, err
		}
	}
	return iso, nil
}

// note passes a note to the observer, if it takes notes.
func note(o *lbl.Observer, msg string) {
	if o.Note != nil {
		o.Note(msg)
	}
}

func moleculeList(mols map[int]bool) string {
	var names []string
	for m := range mols {
		names = append(names, fmt.Sprintf("%s (%d)", lbl.MoleculeNames[m], m))
	}
	sort.Strings(names)
	return strings.Join(names, ", ")
}

// Sampling says what a table's values are.
type Sampling int

const (
	// Auto is cell means when the grid does not resolve the lines
	// (lbl.GridCoarseness above lbl.CoarseGridRatio), where point values
	// would sample the lines rather than average them, and point values
	// otherwise.
	Auto Sampling = iota
	// PointValues are the cross-sections at the grid wavenumbers.
	PointValues
	// CellMeans are the means over the grid cells
	// (lbl.XSecSettings.CellAverage).
	CellMeans
)

// Table builds the cross-section table of l with the settings s, sampled
// as sampling says: s.Gas is l's gas, s.Sources records l's files with
// their SHA-256, and s.CellAverage follows sampling. Notes on the choices
// made, progress and warnings go to s.Observer.
func (l *Lines) Table(s lbl.XSecSettings, sampling Sampling) (*opacity.XSecTable, error) {
	src, err := opacity.SourcesMeta(l.Files...)
	if err != nil {
		return nil, err
	}
	s.Gas, s.Sources = l.Gas, src
	switch sampling {
	case PointValues, CellMeans:
		s.CellAverage = sampling == CellMeans
	case Auto:
		// A one-point grid has no cells, and lines without isotopologue
		// data are reported by BuildXSec: both keep point values here.
		s.CellAverage = false
		if r, err := lbl.GridCoarseness(l.Lines, l.Iso, &s); err == nil && r > lbl.CoarseGridRatio {
			s.CellAverage = true
			note(&s.Observer, fmt.Sprintf("grid spacing is %.3g times the median line half-width at the lowest pressure and temperature: storing cell means (point values can be asked for)", r))
		}
	default:
		return nil, fmt.Errorf("opacity: line list: unknown sampling %d", sampling)
	}
	values := "point values"
	if s.CellAverage {
		values = "cell means"
	}
	note(&s.Observer, fmt.Sprintf("building %s: %d lines on %d pressures x %d temperatures x %d wavenumbers, %s",
		l.Gas, len(l.Lines), len(s.Log10P), len(s.T), len(s.Wavenumber), values))
	return lbl.BuildXSec(l.Lines, l.Iso, &s)
}
