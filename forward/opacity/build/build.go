// Package build makes a gas's k-table or cross-section table from its
// line-list files: it tells HITRAN from ExoMol files, reads the
// isotopologue data and the partition sums that go with them (the newest
// edition per isotopologue), streams the lines of many compressed files in
// order of wavenumber, checks that they are of one molecule, names the
// gas, keeps a resumable checkpoint and records provenance, leaving the
// physics to package lbl.
package build

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"runtime"
	"slices"
	"sort"
	"strconv"
	"strings"

	"chord/forward/opacity"
	"chord/forward/opacity/exomol"
	"chord/forward/opacity/hitran"
	"chord/forward/opacity/lbl"
	"chord/internal/compressed"
)

// Source names the files of one gas's line list and what goes with them.
type Source struct {
	// Files are the line lists: HITRAN files (160-character records,
	// possibly followed by comma-separated broadening fields, HITEMP's
	// records, CDSD-HITEMP's 127-character records, or HITRANonline's
	// tab- or comma-separated tables; .bz2 or .gz compressed or not;
	// overlapping files share their common lines), or one ExoMol .def
	// file whose .states and .trans files (one, or many chunk files
	// <base>__<lo>-<hi>.trans) lie beside it. A file is ExoMol's when its
	// name ends in ".def".
	Files []string
	// Fields names the comma-separated fields after the records of a
	// HITRAN file, by file (hitran.Fields; nil: the default).
	Fields map[string][]string
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
	// isotopologues (TIPS-2021/2025 tables, HITRAN's qN.txt, ExoMol .pf).
	// Where several give the same isotopologue, the newest edition is
	// used (lbl.EditionRank); a TIPS table is the oldest. Isotopologues
	// without a table get lbl's rigid-rotor approximation, with a warning.
	Partition []PartitionFile
	// Broad are ExoMol .broad files (J-dependent widths by H2, He, ...)
	// for an ExoMol line list.
	Broad []string

	// Abundance, Gamma and N are exomol.Options for ExoMol line lists:
	// the weight of the intensities (0: 1) and the Lorentz half-width
	// (cm^-1/bar at 296 K) and its temperature exponent in place of the
	// .def file's (Gamma 0: the file's).
	Abundance, Gamma, N float64
}

// PartitionFile is a two-column partition-sum file of one isotopologue.
// A zero Iso takes the isotopologue the file's header names ("HITRAN M=5
// I=1"), as the TIPS tables in shared data do.
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

// List is a gas's line list made ready to be read: the isotopologue data
// and the files, whose lines are read as a stream (Stream) or all at
// once (ReadLines).
type List struct {
	Gas string
	Iso lbl.IsoData
	// Files are the files of the list and its partition sums, for the
	// table's provenance.
	Files []string
	// Hot is true for lists made for high temperatures (ExoMol, HITEMP,
	// CDSD-HITEMP: a file name holding "hitemp" or "cdsd"), false for
	// HITRAN's, which are complete only near room temperature.
	Hot bool

	lineFiles []string
	src       *Source
	conv      *exomol.Converter
	mol       int // HITRAN molecule of an ExoMol list's lines
	obs       lbl.Observer
}

// Open reads what a line list needs besides its lines (molparam and
// partition sums, or an ExoMol list's definition and states) and checks
// the files. Notes on what it reads go to obs. An error about one field
// of src is an *OptionError.
func Open(src *Source, obs lbl.Observer) (*List, error) {
	var exomolFiles, hitranFiles []string
	for _, f := range src.Files {
		if strings.HasSuffix(f, ".def") {
			exomolFiles = append(exomolFiles, f)
		} else {
			hitranFiles = append(hitranFiles, f)
		}
	}
	for f := range src.Fields {
		if !slices.Contains(hitranFiles, f) {
			return nil, optionErrorf("Fields", "%s is not one of the HITRAN line-list files", f)
		}
	}
	switch {
	case len(src.Files) == 0:
		return nil, optionErrorf("Files", "no line-list files")
	case len(exomolFiles) > 1 || (len(exomolFiles) == 1 && len(hitranFiles) > 0):
		return nil, optionErrorf("Files", "one table is built from HITRAN line lists or from one ExoMol .def file, not both or several (%s)", strings.Join(exomolFiles, ", "))
	case len(exomolFiles) == 1:
		return openExoMol(src, exomolFiles[0], obs)
	}
	return openHITRAN(src, hitranFiles, obs)
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
	l, err := Open(src, obs)
	if err != nil {
		return nil, err
	}
	st, err := l.Stream(lo, hi, 0)
	if err != nil {
		return nil, err
	}
	defer st.Close()
	var lines []lbl.Line
	for {
		var err error
		lines, err = st.Next(lines)
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, err
		}
	}
	if len(lines) == 0 {
		return nil, fmt.Errorf("opacity: line list: no lines within %g cm^-1 of the grid's wavenumber range %g-%g cm^-1", cutoff, nu[0]/100, nu[len(nu)-1]/100)
	}
	return &Lines{Gas: l.Gas, Lines: lines, Iso: l.Iso, Files: l.Files}, nil
}

// Stream is a line list's lines in ascending wavenumber; Close releases
// its files.
type Stream interface {
	lbl.LineSource
	Close()
}

// Stream returns the lines within [lo, hi] cm^-1 as a stream: the files
// decompressed and parsed on goroutines (workers more files ahead of
// need; 0 means GOMAXPROCS), merged in order of wavenumber, lines present
// in several files kept once. A HITRAN list of more than one molecule is
// an error when the second molecule's first line is read.
func (l *List) Stream(lo, hi float64, workers int) (Stream, error) {
	if workers == 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	var files []*streamFile
	if l.conv != nil {
		trans, err := exomol.TransFiles(l.lineFiles[0])
		if err != nil {
			return nil, optionErrorf("Files", "%v", err)
		}
		for _, p := range trans {
			if a, b, ok := nameRange(p); ok && (b < lo || a > hi) {
				continue // an ExoMol chunk named by its range, outside it
			}
			files = append(files, l.exomolFile(p, lo, hi, workers))
		}
	} else {
		for _, p := range l.lineFiles {
			if a, b, ok := nameRange(p); ok && strings.Contains(strings.ToLower(p), "hitemp") && (b < lo || a > hi) {
				continue
			}
			files = append(files, l.hitranFile(p, lo, hi, workers))
		}
	}
	st, err := newStream(files, workers)
	if err != nil {
		return nil, err
	}
	if len(l.lineFiles) > 0 && l.conv == nil {
		return &oneMolecule{stream: st}, nil
	}
	return st, nil
}

var errPastRange = errors.New("past the range")

// hitranFile reads a HITRAN file's lines in [lo, hi].
func (l *List) hitranFile(path string, lo, hi float64, workers int) *streamFile {
	fields := l.src.Fields[path]
	return rangeFile(path, lo, hi, workers, func(r io.Reader, fn func(*lbl.Line) error) error {
		return hitran.ScanLines(r, path, fields, fn)
	})
}

// exomolFile reads an ExoMol transition file's lines in [lo, hi].
func (l *List) exomolFile(path string, lo, hi float64, workers int) *streamFile {
	return rangeFile(path, lo, hi, workers, func(r io.Reader, fn func(*lbl.Line) error) error {
		var cur lbl.Line // one per file: a pointer to the argument would escape, one allocation per line
		return l.conv.ScanTrans(r, path, func(ln lbl.Line) error { cur = ln; return fn(&cur) })
	})
}

// rangeFile is a stream file whose scan opens path (decompressing it on
// workers goroutines), reads it with scan and passes on the lines in [lo,
// hi], stopping at the first line above hi (files are sorted) or when its
// context is cancelled.
func rangeFile(path string, lo, hi float64, workers int, scan func(io.Reader, func(*lbl.Line) error) error) *streamFile {
	return &streamFile{name: path, scan: func(ctx context.Context, fn func(*lbl.Line) error) error {
		r, err := compressed.Open(path, workers)
		if err != nil {
			return fmt.Errorf("opacity: %w", err)
		}
		defer r.Close()
		n := 0
		err = scan(r, func(ln *lbl.Line) error {
			if n++; n&1023 == 0 && ctx.Err() != nil {
				return ctx.Err()
			}
			switch {
			case ln.Nu > hi:
				return errPastRange
			case ln.Nu < lo:
				return nil
			}
			return fn(ln)
		})
		if errors.Is(err, errPastRange) {
			return nil
		}
		return err
	}}
}

var rangeInName = regexp.MustCompile(`(\d+(?:\.\d+)?)-(\d+(?:\.\d+)?)`)

// nameRange reads the wavenumber range "<lo>-<hi>" a chunk file's name
// states (ExoMol: <base>__00000-00100.trans; HITEMP:
// 01_3000-3250_HITEMP2010.par).
func nameRange(path string) (lo, hi float64, ok bool) {
	m := rangeInName.FindAllStringSubmatch(filepath.Base(path), -1)
	if len(m) == 0 {
		return 0, 0, false
	}
	last := m[len(m)-1]
	a, err1 := strconv.ParseFloat(last[1], 64)
	b, err2 := strconv.ParseFloat(last[2], 64)
	if err1 != nil || err2 != nil || !(b > a) {
		return 0, 0, false
	}
	return a, b, true
}

// oneMolecule refuses a second molecule in a HITRAN list.
type oneMolecule struct {
	*stream
	mol int
}

func (o *oneMolecule) Next(dst []lbl.Line) ([]lbl.Line, error) {
	n := len(dst)
	dst, err := o.stream.Next(dst)
	for i := n; i < len(dst); i++ {
		if o.mol == 0 {
			o.mol = dst[i].Mol
		}
		if dst[i].Mol != o.mol {
			return dst[:n], fmt.Errorf("opacity: line list: the line lists hold 2 molecules (%s); a table is one gas",
				moleculeList(map[int]bool{o.mol: true, dst[i].Mol: true}))
		}
	}
	return dst, err
}

// openExoMol prepares one ExoMol line list, given its .def file, as
// HITRAN molecule id of the gas, isotopologue 1.
func openExoMol(src *Source, def string, obs lbl.Observer) (*List, error) {
	for _, f := range []struct {
		name string
		set  bool
	}{{"MolParam", src.MolParam != ""}, {"TIPS", src.TIPS != ""}, {"Fields", len(src.Fields) > 0}} {
		if f.set {
			return nil, optionErrorf(f.name, "applies to HITRAN line lists; ExoMol lists bring their own states")
		}
	}
	if len(src.Partition) > 1 {
		return nil, optionErrorf("Partition", "an ExoMol list takes at most one partition file (its .pf), %d given", len(src.Partition))
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
	base := strings.TrimSuffix(def, ".def")
	statesPath := ""
	for _, p := range []string{base + ".states", base + ".states.bz2", base + ".states.gz"} {
		if _, err := os.Stat(p); err == nil {
			statesPath = p
			break
		}
	}
	if statesPath == "" {
		return nil, fmt.Errorf("exomol: %s: states file: none of %s.states, %s.states.bz2 found", def, base, base)
	}
	note(&obs, fmt.Sprintf("reading ExoMol states %s", statesPath))
	states, err := exomol.ReadStates(statesPath)
	if err != nil {
		return nil, err
	}
	states.TMax = d.MaxTemp
	if d.NumStates > 0 && int64(len(states.ID)) != d.NumStates {
		return nil, fmt.Errorf("exomol: %s has %d states, %s says %d", statesPath, len(states.ID), def, d.NumStates)
	}
	opt := exomol.Options{Mol: key.Mol, Iso: key.Iso, Abundance: src.Abundance, Gamma: src.Gamma, N: src.N}
	l := &List{Gas: gas, Hot: true, lineFiles: []string{def}, src: src, obs: obs, mol: key.Mol}
	l.Files = append(l.Files, def, statesPath)
	for _, p := range src.Broad {
		b, err := exomol.ReadBroad(p, lbl.NumBroadeners)
		if err != nil {
			return nil, optionErrorf("Broad", "%v", err)
		}
		opt.Broad = append(opt.Broad, b)
		l.Files = append(l.Files, p)
		note(&obs, fmt.Sprintf("%s broadening from %s: a0 rows up to J'' = %g%s", b.Broadener, p, b.MaxJ, skippedNote(b.Skipped)))
	}
	if l.conv, err = exomol.NewConverter(d, states, opt); err != nil {
		return nil, fmt.Errorf("%w (for %s)", err, def)
	}
	isoData := &lbl.Isotopologue{
		Name: d.IsoSlug + "__" + d.Dataset, Abundance: max(src.Abundance, 0), Q296: l.conv.Q296, Mass: d.MassDa, Q: states,
		QSource: fmt.Sprintf("%s (%d states of %s)", lbl.EditionStates, len(states.ID), filepath.Base(statesPath)),
	}
	if len(src.Partition) == 1 {
		p, err := hitran.ReadPartition(src.Partition[0].Path)
		if err != nil {
			return nil, err
		}
		isoData.Q, isoData.QSource = p.Q, p.Source
		l.Files = append(l.Files, src.Partition[0].Path)
	}
	l.Iso = lbl.IsoData{key: isoData}
	trans, err := exomol.TransFiles(def)
	if err != nil {
		return nil, fmt.Errorf("exomol: %s: %w", def, err)
	}
	l.Files = append(l.Files, trans...)
	note(&obs, fmt.Sprintf("ExoMol list %s: %d states, Q(296 K) = %.6g, %d transition files", def, len(states.ID), l.conv.Q296, len(trans)))
	return l, nil
}

func skippedNote(m map[string]int) string {
	if len(m) == 0 {
		return ""
	}
	var parts []string
	for code, n := range m {
		parts = append(parts, fmt.Sprintf("%d %s rows", n, code))
	}
	sort.Strings(parts)
	return "; not used: " + strings.Join(parts, ", ")
}

// openHITRAN prepares HITRAN line lists of one molecule with the
// molparam table and any partition-sum files.
func openHITRAN(src *Source, files []string, obs lbl.Observer) (*List, error) {
	for _, f := range []struct {
		name string
		set  bool
	}{{"Abundance", src.Abundance != 0}, {"Gamma", src.Gamma != 0}, {"N", src.N != 0}, {"Broad", len(src.Broad) > 0}} {
		if f.set {
			return nil, optionErrorf(f.name, "applies to ExoMol line lists only")
		}
	}
	for _, f := range files {
		if _, err := os.Stat(f); err != nil {
			return nil, fmt.Errorf("opacity: line list: %w", err)
		}
	}
	l := &List{Gas: src.Gas, lineFiles: files, src: src, obs: obs, Hot: true}
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
	for _, f := range files {
		note(&obs, fmt.Sprintf("reading HITRAN line list %s", f))
		low := strings.ToLower(filepath.Base(f))
		l.Hot = l.Hot && (strings.Contains(low, "hitemp") || strings.Contains(low, "cdsd"))
		l.Files = append(l.Files, f)
	}
	if l.Gas == "" {
		// The molecule of the first line of the first file names the gas.
		for _, f := range files {
			st, err := newStream([]*streamFile{l.hitranFile(f, 0, math.Inf(1), 1)}, 1)
			if err != nil {
				return nil, err
			}
			if len(st.files) > 0 {
				st.activate(st.files[0].first)
				if len(st.open) > 0 {
					l.Gas = lbl.MoleculeNames[st.open[0].line().Mol]
				}
			}
			st.Close()
			if l.Gas != "" {
				break
			}
		}
	}
	if l.Gas == "" {
		return nil, fmt.Errorf("opacity: line list: no line records in %s", strings.Join(files, ", "))
	}
	return l, nil
}

// readIsoData reads the molparam table and attaches the partition sums of
// the TIPS table and the partition files, the newest edition per
// isotopologue.
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
	for _, pf := range src.Partition {
		if pf.Iso != (lbl.IsoKey{}) && iso[pf.Iso] == nil {
			return nil, optionErrorf("Partition", "%s: %v is not in the molparam table %s", pf.Path, pf.Iso, src.MolParam)
		}
		p, err := hitran.ReadPartition(pf.Path)
		if err != nil {
			return nil, err
		}
		k := pf.Iso
		if k == (lbl.IsoKey{}) {
			if k = p.Iso; k == (lbl.IsoKey{}) {
				return nil, optionErrorf("Partition", "%s names no isotopologue (no \"HITRAN M=.. I=..\" header line): give it as MOL/ISO=FILE", pf.Path)
			}
		}
		d := iso[k]
		if d == nil {
			return nil, optionErrorf("Partition", "%s: %v is not in the molparam table %s", pf.Path, k, src.MolParam)
		}
		if d.Q != nil && lbl.EditionRank(p.Source) <= lbl.EditionRank(d.QSource) {
			note(&obs, fmt.Sprintf("%s (%v): keeping %s, not the older or equal %s", d.Name, k, d.QSource, p.Source))
			continue
		}
		d.Q, d.QSource = p.Q, p.Source
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

// Table builds the point cross-section table of l with the settings s:
// s.Gas is l's gas and s.Sources records l's files with their SHA-256.
// Notes, progress and warnings go to s.Observer.
func (l *Lines) Table(s lbl.XSecSettings) (*opacity.XSecTable, error) {
	src, err := opacity.SourcesMeta(l.Files...)
	if err != nil {
		return nil, err
	}
	s.Gas, s.Sources = l.Gas, src
	note(&s.Observer, fmt.Sprintf("building %s: %d lines on %d pressures x %d temperatures x %d wavenumbers, point values",
		l.Gas, len(l.Lines), len(s.Log10P), len(s.T), len(s.Wavenumber)))
	return lbl.BuildXSec(l.Lines, l.Iso, &s)
}

// KTable builds the k-table of the list with the settings s: s.Gas is the
// list's gas, s.Sources records its files with their SHA-256, and the
// lines within the wing cut-off of s's bins are streamed from the files
// (Stream) with s.Workers files decoded ahead. A HITRAN list used for a
// table reaching above 1000 K gets a warning (in s.Observer and the
// table's metadata): HITRAN is complete only near room temperature.
func (l *List) KTable(ctx context.Context, s lbl.KSettings) (*opacity.KTable, error) {
	src, err := opacity.SourcesMeta(l.Files...)
	if err != nil {
		return nil, err
	}
	s.Gas, s.Sources = l.Gas, src
	if len(s.Lo) == 0 || len(s.Hi) != len(s.Lo) || len(s.T) == 0 {
		return nil, errors.New("opacity: k-table: no bins or temperatures")
	}
	cut := s.Lines.WingCutoff
	if cut == 0 {
		cut = lbl.DefaultWingCutoff
	}
	lo, hi := max(0, 1/s.Hi[len(s.Hi)-1]/100*0.999-cut), 1/s.Lo[0]/100*1.001+cut
	st, err := l.Stream(lo, hi, s.Workers)
	if err != nil {
		return nil, err
	}
	defer st.Close()
	var hot string
	if tMax := s.T[len(s.T)-1]; !l.Hot && tMax > 1000 {
		hot = fmt.Sprintf("HITRAN line lists are complete only near room temperature: hot bands and high-J lines are missing above about 1000 K (fact of the trade), and this table reaches %g K; use HITEMP, CDSD-HITEMP or ExoMol lists for hot atmospheres", tMax)
		if s.Observer.Warn != nil {
			s.Observer.Warn(hot)
		}
	}
	note(&s.Observer, fmt.Sprintf("building k-table of %s: %d pressures x %d temperatures x %d bins x %d g-points, lines %.6g-%.6g cm^-1 streamed from %d files",
		l.Gas, len(s.Log10P), len(s.T), len(s.Lo), max(len(s.Quadrature.G), 16), lo, hi, len(l.lineFiles)))
	t, err := lbl.BuildKFrom(ctx, st, l.Iso, &s)
	if err != nil {
		return nil, err
	}
	if hot != "" {
		if w := t.Meta[lbl.MetaWarnings]; w != "" {
			hot = w + "\n" + hot
		}
		t.Meta[lbl.MetaWarnings] = hot
	}
	return t, nil
}
