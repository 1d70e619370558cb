package obs

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"slices"
	"strconv"
	"strings"

	"chord/forward"
)

// ReadBins reads instrument bins, and optionally single-transit errors
// per bin, from a table: CSV or whitespace-separated (a comma in the
// header means CSV), '#' comments, a header naming the columns
// edge_low_um and edge_high_um, or wavelength_um and width_um (the _nm
// forms too), and optionally error_ppm; an observation's depth column
// (depthColumns) is allowed and ignored, so that an observation or a
// chord spectrum file serves as a bins file. Errors name the file and
// line.
// errPPM is nil when the file has no error column.
func ReadBins(path string) (bins forward.Bins, errPPM []float64, err error) {
	f, err := os.Open(path)
	if err != nil {
		return forward.Bins{}, nil, fmt.Errorf("bins: %w", err)
	}
	defer f.Close()
	return parseBins(f, path)
}

// depthColumns are the depth columns of an observation file that a bins
// file may carry (ignored).
var depthColumns = []string{"depth", "depth_ppm", "depth_percent", "radius_ratio"}

func parseBins(r io.Reader, path string) (forward.Bins, []float64, error) {
	data, err := io.ReadAll(io.LimitReader(r, maxFileSize+1))
	if err != nil {
		return forward.Bins{}, nil, fmt.Errorf("%s: %w", path, err)
	}
	if err := checkEncoding(data); err != nil {
		return forward.Bins{}, nil, fmt.Errorf("%s: %w", path, err)
	}
	sc := bufio.NewScanner(bytes.NewReader(data))
	var cols map[string]int
	var ncols int
	var csv bool
	var lo, hi, errs []float64
	unit := map[string]float64{}
	line := 0
	for sc.Scan() {
		line++
		text := strings.TrimSpace(sc.Text())
		if text == "" || text[0] == '#' {
			continue
		}
		where := fmt.Sprintf("%s:%d", path, line)
		if cols == nil {
			csv = strings.Contains(text, ",")
			cols = map[string]int{}
			names := splitFields(text, csv)
			ncols = len(names)
			for i, name := range names {
				base, u := name, 1.0
				switch {
				case name == "error_ppm":
				case strings.HasSuffix(name, "_um"):
					base, u = strings.TrimSuffix(name, "_um"), forward.Micron
				case strings.HasSuffix(name, "_nm"):
					base, u = strings.TrimSuffix(name, "_nm"), 1e-9
				default:
					base = ""
				}
				switch base {
				case "edge_low", "edge_high", "wavelength", "width", "error_ppm":
				case "":
					if slices.Contains(depthColumns, name) {
						continue // an observation's depth, not needed for bins
					}
					fallthrough
				default:
					return forward.Bins{}, nil, fmt.Errorf("%s: unknown column %q (edge_low_um and edge_high_um, or wavelength_um and width_um; _nm also; optional error_ppm)", where, name)
				}
				if _, dup := cols[base]; dup {
					return forward.Bins{}, nil, fmt.Errorf("%s: column %q given twice", where, base)
				}
				cols[base], unit[base] = i, u
			}
			_, el := cols["edge_low"]
			_, eh := cols["edge_high"]
			_, wc := cols["wavelength"]
			_, ww := cols["width"]
			if !((el && eh && !wc && !ww) || (wc && ww && !el && !eh)) {
				return forward.Bins{}, nil, fmt.Errorf("%s: the header must name edge_low_um and edge_high_um, or wavelength_um and width_um", where)
			}
			continue
		}
		fields := splitFields(text, csv)
		if len(fields) != ncols {
			return forward.Bins{}, nil, fmt.Errorf("%s: %d fields, the header names %d", where, len(fields), ncols)
		}
		v := map[string]float64{}
		for name, i := range cols {
			x, err := strconv.ParseFloat(fields[i], 64)
			if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
				return forward.Bins{}, nil, fmt.Errorf("%s: %s: %q is not a finite number", where, name, fields[i])
			}
			v[name] = x * unit[name]
		}
		a, b := v["edge_low"], v["edge_high"]
		if _, ok := cols["wavelength"]; ok {
			a, b = v["wavelength"]-v["width"]/2, v["wavelength"]+v["width"]/2
		}
		if !(a > 0) || !(b > a) {
			return forward.Bins{}, nil, fmt.Errorf("%s: bin %g-%g um: need 0 < low < high", where, a/forward.Micron, b/forward.Micron)
		}
		if n := len(lo); n > 0 && a < hi[n-1]-1e-6*(b-a) {
			return forward.Bins{}, nil, fmt.Errorf("%s: bin %g-%g um overlaps or precedes the previous bin (%g-%g um): list bins in order of wavelength", where, a/forward.Micron, b/forward.Micron, lo[n-1]/forward.Micron, hi[n-1]/forward.Micron)
		}
		if _, ok := cols["error_ppm"]; ok {
			if err := checkErrorPPM(v["error_ppm"]); err != nil {
				return forward.Bins{}, nil, fmt.Errorf("%s: error_ppm %g: %w", where, v["error_ppm"], err)
			}
			errs = append(errs, v["error_ppm"])
		}
		lo, hi = append(lo, a), append(hi, b)
	}
	if err := sc.Err(); err != nil {
		return forward.Bins{}, nil, fmt.Errorf("%s: %w", path, err)
	}
	if len(lo) == 0 {
		return forward.Bins{}, nil, errors.New(path + ": no bins")
	}
	return forward.Bins{Lo: lo, Hi: hi}, errs, nil
}
