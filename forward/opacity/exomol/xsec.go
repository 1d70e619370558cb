package exomol

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"slices"
	"sort"
	"strings"

	"chord/forward/opacity"
	"chord/forward/opacity/internal/specfile"
)

// XSecPoint is a cross-section spectrum of one gas at one pressure and
// temperature, as read from a two-column file.
//
// A two-column file holds rows "wavenumber sigma" (cm^-1, cm^2 molecule^-1),
// separated by white space, wavenumbers strictly ascending, as written for
// example by ExoMol's cross-section service and its ExoCross program
// (Tennyson et al. 2016, J. Mol. Spectrosc. 327, 73). The file does not say
// at which pressure and temperature it was computed; the caller states them.
// Blank lines and lines starting with '#' are skipped.
type XSecPoint struct {
	File       string    // file name, for messages and provenance
	P          float64   // stated pressure, Pa
	T          float64   // stated temperature, K
	Wavenumber []float64 // m^-1, strictly ascending
	Sigma      []float64 // m^2 per molecule, non-negative
}

// ReadXSec reads a two-column cross-section file computed at the
// stated pressure p (Pa) and temperature temp (K).
func ReadXSec(path string, p, temp float64) (*XSecPoint, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("opacity: %w", err)
	}
	defer f.Close()
	return ReadXSecFrom(f, path, p, temp)
}

// ReadXSecFrom reads a two-column cross-section stream; name is
// used in messages.
func ReadXSecFrom(r io.Reader, name string, p, temp float64) (*XSecPoint, error) {
	if !(p > 0) || math.IsInf(p, 0) {
		return nil, fmt.Errorf("opacity: cross-section file %s: stated pressure %g Pa must be positive and finite", name, p)
	}
	if !(temp > 0) || math.IsInf(temp, 0) {
		return nil, fmt.Errorf("opacity: cross-section file %s: stated temperature %g K must be positive and finite", name, temp)
	}
	x := &XSecPoint{File: name, P: p, T: temp}
	sc := bufio.NewScanner(bufio.NewReaderSize(r, 1<<16))
	sc.Buffer(make([]byte, 0, 4096), 1<<20)
	line := 0
	for sc.Scan() {
		line++
		s := strings.TrimSpace(sc.Text())
		if s == "" || s[0] == '#' {
			continue
		}
		f := strings.Fields(s)
		if len(f) != 2 {
			return nil, fmt.Errorf("opacity: cross-section file %s, line %d: %d fields, want 2 (wavenumber in cm^-1, cross-section in cm^2)", name, line, len(f))
		}
		nu, err := specfile.ParseFinite(f[0])
		if err != nil {
			return nil, fmt.Errorf("opacity: cross-section file %s, line %d: wavenumber %q: %v", name, line, f[0], err)
		}
		sig, err := specfile.ParseFinite(f[1])
		if err != nil {
			return nil, fmt.Errorf("opacity: cross-section file %s, line %d: cross-section %q: %v", name, line, f[1], err)
		}
		nu *= specfile.PerCmToPerM
		sig *= specfile.Cm2ToM2
		if math.IsInf(nu, 0) || sig > math.MaxFloat32 {
			return nil, fmt.Errorf("opacity: cross-section file %s, line %d: row %s %s is out of range for a table", name, line, f[0], f[1])
		}
		if sig < 0 {
			return nil, fmt.Errorf("opacity: cross-section file %s, line %d: cross-section %s is negative", name, line, f[1])
		}
		if n := len(x.Wavenumber); n > 0 && !(nu > x.Wavenumber[n-1]) {
			return nil, fmt.Errorf("opacity: cross-section file %s, line %d: wavenumber %s cm^-1 is not above the previous row's %g cm^-1 (rows must be strictly ascending)",
				name, line, f[0], x.Wavenumber[n-1]/specfile.PerCmToPerM)
		}
		x.Wavenumber = append(x.Wavenumber, nu)
		x.Sigma = append(x.Sigma, sig)
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("opacity: cross-section file %s, after line %d: %w", name, line, err)
	}
	if len(x.Wavenumber) == 0 {
		return nil, fmt.Errorf("opacity: cross-section file %s is empty (no data rows)", name)
	}
	return x, nil
}

// AssembleXSec puts cross-sections at several (P, T) points into one table
// for gas. The distinct pressures and temperatures of the points are the
// table's axes; every combination must be present exactly once. With grid
// nil every point must have the same wavenumbers; otherwise each point is
// resampled linearly onto grid (m^-1, strictly ascending), with 0 outside
// its range. The files are recorded with their SHA-256 in opacity.MetaSources when
// they can be read as files; MetaProgramVersion is left for the caller.
func AssembleXSec(gas string, pts []*XSecPoint, grid []float64) (*opacity.XSecTable, error) {
	if gas == "" {
		return nil, errors.New("opacity: assemble cross-sections: no gas name")
	}
	if len(pts) == 0 {
		return nil, fmt.Errorf("opacity: assemble %s cross-sections: no files", gas)
	}
	var ps, ts []float64
	for _, x := range pts {
		if len(x.Wavenumber) == 0 || len(x.Wavenumber) != len(x.Sigma) {
			return nil, fmt.Errorf("opacity: assemble %s cross-sections: %s has %d wavenumbers and %d values", gas, x.File, len(x.Wavenumber), len(x.Sigma))
		}
		ps, ts = append(ps, x.P), append(ts, x.T)
	}
	ps, ts = distinct(ps), distinct(ts)
	if grid != nil {
		if err := opacity.CheckAxis(grid, "wavenumber grid"); err != nil {
			return nil, fmt.Errorf("opacity: assemble %s cross-sections: %w", gas, err)
		}
	} else {
		grid = pts[0].Wavenumber
		for _, x := range pts[1:] {
			if !slices.Equal(x.Wavenumber, grid) {
				return nil, fmt.Errorf("opacity: assemble %s cross-sections: %s and %s have different wavenumbers; give a common grid to resample onto",
					gas, pts[0].File, x.File)
			}
		}
	}
	nP, nT, nW := len(ps), len(ts), len(grid)
	at := make([]*XSecPoint, nP*nT)
	for _, x := range pts {
		i := sort.SearchFloat64s(ps, x.P)*nT + sort.SearchFloat64s(ts, x.T)
		if prev := at[i]; prev != nil {
			return nil, fmt.Errorf("opacity: assemble %s cross-sections: %s and %s are both at %g Pa, %g K", gas, prev.File, x.File, x.P, x.T)
		}
		at[i] = x
	}
	for i, x := range at {
		if x == nil {
			return nil, fmt.Errorf("opacity: assemble %s cross-sections: the (P, T) grid is incomplete: no file at %g Pa, %g K (%d pressures x %d temperatures need %d files, %d given)",
				gas, ps[i/nT], ts[i%nT], nP, nT, nP*nT, len(pts))
		}
	}
	t := &opacity.XSecTable{
		Gas:        gas,
		Log10P:     make([]float64, nP),
		T:          ts,
		Wavenumber: append([]float64(nil), grid...),
		Sigma:      make([]float32, nP*nT*nW),
		Meta:       map[string]string{},
	}
	for i, p := range ps {
		t.Log10P[i] = math.Log10(p)
	}
	files := make([]string, 0, len(at))
	var tmp []float64
	for i, x := range at {
		src := x.Sigma
		if !slices.Equal(x.Wavenumber, grid) {
			tmp = slices.Grow(tmp[:0], nW)[:nW]
			opacity.ResampleRow(tmp, grid, x.Sigma, x.Wavenumber)
			src = tmp
		}
		row := t.Sigma[i*nW : (i+1)*nW]
		for k, v := range src {
			row[k] = float32(v)
		}
		files = append(files, x.File)
	}
	if err := t.Validate(); err != nil {
		return nil, err
	}
	if src, err := opacity.SourcesMeta(files...); err == nil {
		t.Meta[opacity.MetaSources] = src
	}
	grids := "the files' own wavenumbers"
	if !slices.Equal(grid, pts[0].Wavenumber) {
		grids = fmt.Sprintf("supplied grid of %d points, linear resampling, 0 outside each file's range", nW)
	}
	t.Meta[opacity.MetaBuildSettings] = fmt.Sprintf(`{"source_format":"two-column cross-sections","wavenumber_grid":%q}`, grids)
	return t, nil
}

// distinct returns the sorted distinct values of x.
func distinct(x []float64) []float64 {
	sort.Float64s(x)
	out := x[:0]
	for i, v := range x {
		if i == 0 || v != out[len(out)-1] {
			out = append(out, v)
		}
	}
	return out
}
