// Package synthlines writes synthetic line lists in ExoMol's layout, for
// the tests and benchmarks of streaming builds: a .def file, a .states
// file and the transitions in chunk files of a fixed wavenumber width,
// each bzip2- or gzip-compressed, as ExoMol distributes large lists.
//
// The list is invented (no molecule has it): states with energies up to
// 25000 cm^-1 whose number grows as E^2 (as the density of vibrational
// states of a polyatomic molecule rises with energy, fact of the trade),
// J from 0 to 60 and g = 2J+1; transitions at
// wavenumbers spread evenly over the range with a small random jitter,
// between random states, with Einstein A log-uniform over 1e-4 to 1e2
// s^-1. With lower-state energies up to 25000 cm^-1 the intensities at
// 296-3000 K span tens of decades, as those of a hot line list do, so
// most lines are weak next to their neighbours.
package synthlines

import (
	"bufio"
	"compress/gzip"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"

	dbzip2 "github.com/dsnet/compress/bzip2"
)

// Spec says what to write.
type Spec struct {
	Dir          string  // output directory (created)
	Name         string  // base name, e.g. "1H2-16O__Synth"
	Lines        int64   // number of transitions
	NuMin, NuMax float64 // wavenumber range, cm^-1
	Chunk        float64 // width of a chunk file, cm^-1
	States       int     // number of states (0: 100000)
	Compress     string  // "bz2" or "gz"
	Seed         uint64
}

// Write writes the list and returns the path of its .def file.
func Write(s Spec) (string, error) {
	if s.States == 0 {
		s.States = 100000
	}
	if err := os.MkdirAll(s.Dir, 0o755); err != nil {
		return "", err
	}
	rng := rand.New(rand.NewPCG(s.Seed, 7))
	base := filepath.Join(s.Dir, s.Name)
	def := fmt.Sprintf("EXOMOL.def # ID\n(1H)2(16O) # IsoFormula\n1H2-16O # Iso-slug\nSynth # Isotopologue dataset name\n20260101 # Version number with format YYYYMMDD\n"+
		"18.010565 # Isotopologue mass (Da) and (kg)\n%d # No. of states in .states file\n%d # Total number of transitions\n3000 # Maximum temperature of linelist\n"+
		"0.07 # Default value of Lorentzian half-width for all lines (in cm-1/bar)\n0.5 # Default value of temperature exponent for all lines\n", s.States, s.Lines)
	if err := os.WriteFile(base+".def", []byte(def), 0o644); err != nil {
		return "", err
	}
	e := make([]float64, s.States)
	for i := range e {
		e[i] = 25000 * math.Cbrt(rng.Float64()) // density of states as E^2
	}
	e[0] = 0
	slices.Sort(e)
	sf, err := os.Create(base + ".states")
	if err != nil {
		return "", err
	}
	sw := bufio.NewWriter(sf)
	for i, v := range e {
		j := rng.IntN(61)
		fmt.Fprintf(sw, "%12d %12.6f %6d %7d\n", i+1, v, 2*j+1, j)
	}
	if err := sw.Flush(); err != nil {
		return "", err
	}
	if err := sf.Close(); err != nil {
		return "", err
	}
	step := (s.NuMax - s.NuMin) / float64(s.Lines)
	var (
		w     io.WriteCloser
		f     *os.File
		bw    *bufio.Writer
		chunk = -1
	)
	closeChunk := func() error {
		if f == nil {
			return nil
		}
		if err := bw.Flush(); err != nil {
			return err
		}
		if err := w.Close(); err != nil {
			return err
		}
		return f.Close()
	}
	for k := int64(0); k < s.Lines; k++ {
		nu := s.NuMin + (float64(k)+0.5+0.4*(rng.Float64()-0.5))*step
		if c := int(math.Floor((nu - s.NuMin) / s.Chunk)); c != chunk {
			if err := closeChunk(); err != nil {
				return "", err
			}
			chunk = c
			lo := s.NuMin + float64(c)*s.Chunk
			name := fmt.Sprintf("%s__%05.0f-%05.0f.trans.%s", base, lo, lo+s.Chunk, s.Compress)
			if f, err = os.Create(name); err != nil {
				return "", err
			}
			switch s.Compress {
			case "bz2":
				if w, err = dbzip2.NewWriter(f, &dbzip2.WriterConfig{Level: 1}); err != nil {
					return "", err
				}
			case "gz":
				if w, err = gzip.NewWriterLevel(f, gzip.BestSpeed); err != nil {
					return "", err
				}
			default:
				return "", fmt.Errorf("synthlines: compression %q, want bz2 or gz", s.Compress)
			}
			bw = bufio.NewWriterSize(w, 1<<20)
		}
		lo, up := 1+rng.IntN(s.States), 1+rng.IntN(s.States)
		a := math.Pow(10, -4+6*rng.Float64())
		fmt.Fprintf(bw, "%12d %12d %10.4e %12.6f\n", up, lo, a, nu)
	}
	if err := closeChunk(); err != nil {
		return "", err
	}
	return base + ".def", nil
}
