package exomol

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"chord/forward/opacity/lbl"
)

// Broad is an ExoMol pressure-broadening file (<slug>__<broadener>.broad;
// Tennyson et al. 2016, J. Mol. Spectrosc. 327, 73, section 4.6; Barton et
// al. 2017, JQSRT 203, 490): rows "code gamma n quantum numbers", gamma
// the Lorentz half-width in cm^-1/bar at 296 K and n its temperature
// exponent. Codes used here (their meaning as in those papers, from
// memory): a0, gamma and n by the lower state's J”; a1, by J” and the
// upper state's J'. Rows with other codes (a4 and the like, by further
// quantum numbers) are counted in Skipped and not used.
type Broad struct {
	Broadener lbl.Broadener
	Path      string
	a0        map[float64][2]float64    // J'' -> gamma (cm^-1/atm), n
	a1        map[[2]float64][2]float64 // (J'', J') -> gamma, n
	// MaxJ is the largest J'' the a0 rows cover.
	MaxJ float64
	// Skipped counts rows of codes other than a0 and a1, by code.
	Skipped map[string]int
}

// ReadBroad reads an ExoMol .broad file. The broadener is taken from the
// name (<slug>__H2.broad is broadening by H2) unless b is given (b <
// lbl.NumBroadeners).
func ReadBroad(path string, b lbl.Broadener) (*Broad, error) {
	if b >= lbl.NumBroadeners {
		name := strings.TrimSuffix(filepath.Base(path), ".broad")
		i := strings.LastIndex(name, "__")
		var ok bool
		if i >= 0 {
			b, ok = lbl.ParseBroadener(name[i+2:])
		}
		if !ok {
			return nil, fmt.Errorf("exomol: %s: cannot tell the broadener from the name (want <slug>__<H2|He|CO2|H2O>.broad)", path)
		}
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("exomol: %w", err)
	}
	defer f.Close()
	br, err := ParseBroad(f, path, b)
	if err != nil {
		return nil, err
	}
	br.Path = path
	return br, nil
}

// ParseBroad parses a .broad file from r for broadener b; name is used in
// errors.
func ParseBroad(r io.Reader, name string, b lbl.Broadener) (*Broad, error) {
	br := &Broad{Broadener: b, a0: map[float64][2]float64{}, a1: map[[2]float64][2]float64{}, Skipped: map[string]int{}, MaxJ: -1}
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 0, 4096), 1<<20)
	n := 0
	num := func(s, what string) (float64, error) {
		v, err := strconv.ParseFloat(s, 64)
		if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
			return 0, fmt.Errorf("exomol: %s:%d: %s %q is not a number", name, n, what, s)
		}
		return v, nil
	}
	for sc.Scan() {
		n++
		f := strings.Fields(sc.Text())
		if len(f) == 0 {
			continue
		}
		code := f[0]
		if code != "a0" && code != "a1" {
			br.Skipped[code]++
			continue
		}
		want := map[string]int{"a0": 4, "a1": 5}[code]
		if len(f) < want {
			return nil, fmt.Errorf("exomol: %s:%d: code %s row has %d columns, want %d (code, gamma, n, J''%s)", name, n, code, len(f), want, map[bool]string{true: ", J'"}[code == "a1"])
		}
		g, err := num(f[1], "gamma")
		if err != nil {
			return nil, err
		}
		if g < 0 {
			return nil, fmt.Errorf("exomol: %s:%d: gamma %g must not be negative", name, n, g)
		}
		ex, err := num(f[2], "n")
		if err != nil {
			return nil, err
		}
		j, err := num(f[3], "J''")
		if err != nil || j < 0 {
			return nil, fmt.Errorf("exomol: %s:%d: J'' %q is not a non-negative number", name, n, f[3])
		}
		v := [2]float64{g * exomolBarPerAtm, ex}
		if code == "a0" {
			br.a0[j] = v
			br.MaxJ = max(br.MaxJ, j)
			continue
		}
		ju, err := num(f[4], "J'")
		if err != nil || ju < 0 {
			return nil, fmt.Errorf("exomol: %s:%d: J' %q is not a non-negative number", name, n, f[4])
		}
		br.a1[[2]float64{j, ju}] = v
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("exomol: %s: line %d: %w", name, n+1, err)
	}
	if len(br.a0) == 0 && len(br.a1) == 0 {
		return nil, fmt.Errorf("exomol: %s: no a0 or a1 rows", name)
	}
	return br, nil
}

// Lookup returns the half-width (cm^-1/atm at 296 K) and exponent of a
// transition from lower-state J” to upper-state J': the a1 row of (J”,
// J') if the file has one, else the a0 row of J”. ok is false when
// neither exists; then the line keeps no parameters of this broadener and
// the build uses its fallback (the line's default width from the .def
// file, see lbl.Mixture).
func (b *Broad) Lookup(jLower, jUpper float64) (gamma, n float64, ok bool) {
	if v, found := b.a1[[2]float64{jLower, jUpper}]; found {
		return v[0], v[1], true
	}
	if v, found := b.a0[jLower]; found {
		return v[0], v[1], true
	}
	return 0, 0, false
}

// set stores the parameters of the transition in l.
func (b *Broad) set(l *lbl.Line, jLower, jUpper float64) {
	if g, n, ok := b.Lookup(jLower, jUpper); ok {
		l.Broad[b.Broadener] = lbl.BroadParams{Gamma: float32(g), N: float32(n), Has: lbl.HasGamma | lbl.HasN}
	}
}
