package obs

import (
	"bytes"
	"fmt"
	"strconv"

	"chord/forward"
	"chord/internal/atomicfile"
)

// Observation is a simulated observation, as WriteObservation writes it.
type Observation struct {
	Lo, Hi []float64 // bin edges, m
	Depth  []float64 // transit depth, fraction
	Sigma  []float64 // 1-sigma error, fraction
	// Header lines (without "# ") saying how it was made.
	Header []string
}

// WriteObservation writes o as an observation file that ReadDataset
// reads: CSV with columns edge_low_um, edge_high_um, depth_ppm and
// error_ppm, the layout of every table chord writes; edges in their shortest exact form, depths and errors to 12
// significant digits. An existing file is an
// error unless overwrite.
func WriteObservation(path string, o *Observation, overwrite bool) error {
	var b bytes.Buffer
	for _, h := range o.Header {
		b.WriteString("# " + h + "\n")
	}
	b.WriteString("edge_low_um,edge_high_um,depth_ppm,error_ppm\n")
	g := func(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
	g12 := func(v float64) string { return strconv.FormatFloat(v, 'g', 12, 64) }
	for i := range o.Depth {
		fmt.Fprintf(&b, "%s,%s,%s,%s\n", g(o.Lo[i]/forward.Micron), g(o.Hi[i]/forward.Micron), g12(o.Depth[i]*1e6), g12(o.Sigma[i]*1e6))
	}
	return atomicfile.Write(path, b.Bytes(), overwrite)
}
