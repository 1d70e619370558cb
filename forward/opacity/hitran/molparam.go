package hitran

import (
	"bufio"
	"bytes"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"

	"chord/forward/opacity/lbl"
)

// ReadMolParam reads HITRAN's molparam table: lines "NAME (id)" open a
// molecule; each following line "code abundance Q296 gj mass [global id]"
// is the next isotopologue (numbered 1, 2, ... in file order, as HITRAN
// numbers them).
func ReadMolParam(path string) (lbl.IsoData, error) {
	fh, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("opacity: %w", err)
	}
	defer fh.Close()
	sc := bufio.NewScanner(fh)
	out := lbl.IsoData{}
	mol, iso, lineNo := 0, 0, 0
	for sc.Scan() {
		lineNo++
		s := strings.TrimSpace(string(bytes.TrimSuffix(sc.Bytes(), []byte{'\r'})))
		if s == "" || strings.HasPrefix(s, "Molecule") || strings.HasPrefix(s, "#") {
			continue
		}
		if o := strings.IndexByte(s, '('); o > 0 && strings.HasSuffix(s, ")") {
			name := strings.TrimSpace(s[:o])
			id, err := strconv.Atoi(s[o+1 : len(s)-1])
			if err != nil || id < 1 || id >= len(lbl.MoleculeNames) || lbl.MoleculeNames[id] != name {
				return nil, fmt.Errorf("opacity: %s:%d: molecule header %q is not a known HITRAN molecule", path, lineNo, s)
			}
			mol, iso = id, 0
			continue
		}
		f := strings.Fields(s)
		if mol == 0 {
			return nil, fmt.Errorf("opacity: %s:%d: isotopologue line before any molecule header", path, lineNo)
		}
		if len(f) < 5 {
			return nil, fmt.Errorf("opacity: %s:%d: %d fields, want code, abundance, Q(296 K), gj, molar mass", path, lineNo, len(f))
		}
		var v [4]float64
		for i, name := range [...]string{"abundance", "Q(296 K)", "gj", "molar mass"} {
			if v[i], err = strconv.ParseFloat(f[i+1], 64); err != nil || !(v[i] > 0) || math.IsInf(v[i], 0) {
				return nil, fmt.Errorf("opacity: %s:%d: %s %q is not a positive number", path, lineNo, name, f[i+1])
			}
		}
		iso++
		out[lbl.IsoKey{Mol: mol, Iso: iso}] = &lbl.Isotopologue{Name: lbl.MoleculeNames[mol] + "_" + f[0], Abundance: v[0], Q296: v[1], Mass: v[3]}
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("opacity: %s: %w", path, err)
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("opacity: %s: no isotopologues (empty file)", path)
	}
	return out, nil
}

// ReadTIPSTable reads a TIPS partition-sum table laid out as a header row
// "Temp(K) NAME_code NAME_code ..." followed by rows "T Q Q ..." (the
// TIPS-2011 table of Laraia et al. 2011) and attaches an lbl.QTable to every
// isotopologue of d whose Name matches a column. It returns how many were
// attached; columns with no isotopologue in d, and columns of zeros (not
// tabulated), are ignored.
func ReadTIPSTable(path string, d lbl.IsoData) (int, error) {
	fh, err := os.Open(path)
	if err != nil {
		return 0, fmt.Errorf("opacity: %w", err)
	}
	defer fh.Close()
	sc := bufio.NewScanner(fh)
	sc.Buffer(make([]byte, 0, 64<<10), 4<<20)
	var (
		names  []string
		cols   [][]float64
		temps  []float64
		lineNo int
	)
	for sc.Scan() {
		lineNo++
		f := strings.Fields(string(sc.Bytes()))
		if len(f) == 0 {
			continue
		}
		if names == nil {
			if !strings.HasPrefix(f[0], "Temp") {
				return 0, fmt.Errorf("opacity: %s:%d: header should start with Temp(K), found %q", path, lineNo, f[0])
			}
			names = f[1:]
			cols = make([][]float64, len(names))
			continue
		}
		if len(f) != len(names)+1 {
			return 0, fmt.Errorf("opacity: %s:%d: %d fields, want %d (temperature and %d partition sums)", path, lineNo, len(f), len(names)+1, len(names))
		}
		for i, s := range f {
			v, err := strconv.ParseFloat(s, 64)
			if err != nil || math.IsInf(v, 0) || math.IsNaN(v) {
				return 0, fmt.Errorf("opacity: %s:%d: field %d %q is not a number", path, lineNo, i+1, s)
			}
			if i == 0 {
				temps = append(temps, v)
			} else {
				cols[i-1] = append(cols[i-1], v)
			}
		}
	}
	if err := sc.Err(); err != nil {
		return 0, fmt.Errorf("opacity: %s: %w", path, err)
	}
	if names == nil {
		return 0, fmt.Errorf("opacity: %s: empty file", path)
	}
	byName := map[string]*lbl.Isotopologue{}
	for _, iso := range d {
		byName[iso.Name] = iso
	}
	n := 0
	for i, name := range names {
		iso := byName[name]
		if iso == nil || allZero(cols[i]) {
			continue // not in d, or not tabulated (TIPS-2011 fills such columns with 0)
		}
		q, err := lbl.NewQTable(temps, cols[i])
		if err != nil {
			return 0, fmt.Errorf("opacity: %s: column %s: %w", path, name, err)
		}
		iso.Q = q
		iso.QSource = lbl.EditionTIPS2011 + " (" + filepath.Base(path) + ")"
		n++
	}
	return n, nil
}

func allZero(x []float64) bool {
	for _, v := range x {
		if v != 0 {
			return false
		}
	}
	return true
}

// ReadQFile reads a two-column partition-sum file "T Q" (HITRAN's qN.txt
// files of TIPS-2017 and later, Gamache et al. 2017, JQSRT 203, 70).
func ReadQFile(path string) (*lbl.QTable, error) {
	p, err := ReadPartition(path)
	if err != nil {
		return nil, err
	}
	return p.Q, nil
}

// Partition is a partition-sum table read from a two-column file, with
// its edition and, when the file states it, its isotopologue.
type Partition struct {
	Q *lbl.QTable
	// Source is the edition and file name, as lbl.Isotopologue.QSource
	// takes it: "TIPS-2021 (q26_CO_26_tips2021_hapi.txt)".
	Source string
	// Iso is the HITRAN isotopologue the header names ("HITRAN M=5 I=1"),
	// or the zero key.
	Iso lbl.IsoKey
}

var headerIso = regexp.MustCompile(`M=(\d+)\s+I=(\d+)`)

// ReadPartition reads a two-column partition-sum file "T Q" and tells its
// edition: a "#" header line naming TIPS-2025, TIPS-2021, TIPS-2017 or
// TIPS-2011 gives it (as the TIPS tables of Gamache et al. 2021, JQSRT
// 271, 107713 and 2025, JQSRT 345, 109568, written out in shared data, do,
// with "HITRAN M=5 I=1" naming the isotopologue); a name ending in .pf is
// an ExoMol partition file (Tennyson et al. 2016); a bare two-column file
// is taken as HITRAN's qN.txt (TIPS-2017 or later).
func ReadPartition(path string) (*Partition, error) {
	fh, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("opacity: %w", err)
	}
	defer fh.Close()
	sc := bufio.NewScanner(fh)
	var t, q []float64
	lineNo := 0
	edition := ""
	out := &Partition{}
	for sc.Scan() {
		lineNo++
		f := strings.Fields(string(sc.Bytes()))
		if len(f) == 0 {
			continue
		}
		if strings.HasPrefix(f[0], "#") {
			h := sc.Text()
			for _, e := range []string{lbl.EditionTIPS2025, lbl.EditionTIPS2021, lbl.EditionTIPS2017, lbl.EditionTIPS2011} {
				if edition == "" && strings.Contains(h, e) {
					edition = e
				}
			}
			if m := headerIso.FindStringSubmatch(h); m != nil && out.Iso == (lbl.IsoKey{}) {
				out.Iso.Mol, _ = strconv.Atoi(m[1])
				out.Iso.Iso, _ = strconv.Atoi(m[2])
			}
			continue
		}
		if len(f) != 2 {
			return nil, fmt.Errorf("opacity: %s:%d: %d fields, want 2 (T, Q)", path, lineNo, len(f))
		}
		a, err1 := strconv.ParseFloat(f[0], 64)
		b, err2 := strconv.ParseFloat(f[1], 64)
		if err1 != nil || err2 != nil {
			return nil, fmt.Errorf("opacity: %s:%d: %q is not two numbers", path, lineNo, strings.Join(f, " "))
		}
		t, q = append(t, a), append(q, b)
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("opacity: %s: %w", path, err)
	}
	tab, err := lbl.NewQTable(t, q)
	if err != nil {
		return nil, fmt.Errorf("opacity: %s: %w", path, err)
	}
	switch {
	case edition != "":
	case strings.HasSuffix(path, ".pf"):
		edition = lbl.EditionExoMolPF
	default:
		edition = lbl.EditionTIPS2017 + " or later, HITRAN qN.txt"
	}
	out.Q, out.Source = tab, edition+" ("+filepath.Base(path)+")"
	return out, nil
}
