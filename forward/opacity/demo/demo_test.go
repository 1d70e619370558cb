package demo

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"

	"chord/forward/opacity"
	"chord/forward/opacity/hitran"
	"chord/forward/opacity/internal/opacitytest"
	"chord/forward/opacity/lbl"
	"chord/forward/opacity/tablefile"
	"chord/internal/testenv"
)

// The demo set is built once per test binary (about a minute on two cores),
// through Load into a temporary directory that TestMain removes at the
// end; tests use the loaded tables, which live in memory.
var (
	demoTestOnce sync.Once
	demoTestSet  *opacity.Set
	demoTestDir  string
	demoTestLog  string
	demoTestErr  error
)

func demoTestTables(t *testing.T) (*opacity.Set, string) {
	t.Helper()
	if testing.Short() {
		// The race run of CI is -short: this build takes about 35 s, and
		// six minutes under the race detector; the builder's concurrency
		// is raced on small tables in package build (two workers).
		t.Skip("builds the whole demo set (about 35 s); run without -short")
	}
	demoTestOnce.Do(func() {
		dir, err := os.MkdirTemp("", "chord-demo-test-*")
		if err != nil {
			demoTestErr = err
			return
		}
		demoTestDir = filepath.Join(dir, "demo-"+Version)
		var log bytes.Buffer
		demoTestSet, demoTestErr = Load(demoTestDir, &log)
		demoTestLog = log.String()
	})
	if demoTestErr != nil {
		t.Fatal(demoTestErr)
	}
	return demoTestSet, demoTestDir
}

func TestMain(m *testing.M) {
	code := m.Run()
	if demoTestDir != "" {
		os.RemoveAll(filepath.Dir(demoTestDir))
	}
	os.Exit(code)
}

// meanSigma returns the mean cross-section (m^2) of row over the bins of
// tab within the wavelength window [loUm, hiUm] micrometres: per bin the
// quadrature mean sum_g W_g k(g), which is the bin's mean cross-section to
// the accuracy of the quadrature (the integral of k over g is the mean of
// sigma over the bin; definition of the k-distribution).
func meanSigma(tab *opacity.KTable, row []float32, loUm, hiUm float64) float64 {
	ng := len(tab.G)
	s, n := 0.0, 0
	for b := range tab.Lo {
		if tab.Lo[b] >= loUm*1e-6 && tab.Hi[b] <= hiUm*1e-6 {
			for i, w := range tab.W {
				s += w * float64(row[b*ng+i])
			}
			n++
		}
	}
	if n == 0 {
		return math.NaN()
	}
	return s / float64(n)
}

// nearestIndex returns the index of the axis value nearest to v.
func nearestIndex(x []float64, v float64) int {
	best := 0
	for i := range x {
		if math.Abs(x[i]-v) < math.Abs(x[best]-v) {
			best = i
		}
	}
	return best
}

// TestDemoBands checks that each demo gas absorbs in its known bands: the
// mean cross-section over the band is at least ten times the mean over
// nearby windows where the gas has no band. Band centres: fact of the trade
// / handbooks (Herzberg 1945; the infrared bands every atmospheric
// spectroscopist knows). Off-band windows are the classic infrared
// photometric windows J (1.2-1.3 um), H (1.55-1.75 um), K (2.05-2.3 um),
// L' (3.8-4.1 um) and N (10-12 um) where the gas has no band, or other
// stretches free of the gas's bands. The factor ten ("an order of
// magnitude above the window") is our threshold; the demo bands exceed it
// by far, while a band put at a wrong place fails it.
func TestDemoBands(t *testing.T) {
	set, _ := demoTestTables(t)
	cases := []struct {
		gas         string
		band        float64    // um, for the message
		in          [2]float64 // um
		off1, off2  [2]float64 // um
		description string
	}{
		{"H2O", 1.4, [2]float64{1.35, 1.42}, [2]float64{1.22, 1.30}, [2]float64{1.55, 1.75}, "nu1+nu3"},
		{"H2O", 1.9, [2]float64{1.85, 1.95}, [2]float64{1.55, 1.75}, [2]float64{2.05, 2.30}, "nu2+nu3"},
		{"H2O", 2.7, [2]float64{2.62, 2.74}, [2]float64{2.05, 2.30}, [2]float64{3.8, 4.1}, "nu1, nu3"},
		{"H2O", 6.3, [2]float64{5.9, 6.7}, [2]float64{3.8, 4.1}, [2]float64{10, 12}, "nu2"},
		{"CH4", 3.3, [2]float64{3.25, 3.4}, [2]float64{3.8, 4.1}, [2]float64{4.5, 5.0}, "nu3"},
		{"CH4", 7.7, [2]float64{7.4, 8.0}, [2]float64{4.5, 5.0}, [2]float64{10, 12}, "nu4"},
		{"CO2", 4.3, [2]float64{4.22, 4.38}, [2]float64{3.8, 4.1}, [2]float64{5.5, 6.0}, "nu3"},
		{"CO2", 15, [2]float64{14.6, 15.4}, [2]float64{10, 12}, [2]float64{17.5, 19}, "nu2"},
		{"O3", 9.6, [2]float64{9.5, 9.75}, [2]float64{8.0, 8.4}, [2]float64{11, 12}, "nu3"},
		{"CO", 4.7, [2]float64{4.5, 4.9}, [2]float64{3.8, 4.1}, [2]float64{5.5, 6.0}, "1-0"},
		{"NH3", 10.5, [2]float64{10.2, 10.8}, [2]float64{8.0, 8.4}, [2]float64{12.5, 13.5}, "nu2"},
		{"O2", 0.76, [2]float64{0.759, 0.770}, [2]float64{0.72, 0.74}, [2]float64{0.80, 0.85}, "A band"},
		{"SO2", 7.3, [2]float64{7.2, 7.45}, [2]float64{5.5, 6.0}, [2]float64{10, 12}, "nu3"},
	}
	for _, c := range cases {
		tab := set.K[c.gas]
		if tab == nil {
			t.Fatalf("no demo table for %s", c.gas)
		}
		// Near 1 bar and at 1e-7 bar (where the lines are far narrower
		// than the grid spacing), 300 K.
		for _, lp := range []float64{5, -2} {
			row := tab.Row(nearestIndex(tab.Log10P, lp), nearestIndex(tab.T, 300))
			in := meanSigma(tab, row, c.in[0], c.in[1])
			off := math.Max(meanSigma(tab, row, c.off1[0], c.off1[1]), meanSigma(tab, row, c.off2[0], c.off2[1]))
			if !(in > 0) || !(in >= 10*off) {
				t.Errorf("%s %s band near %g um at 10^%g Pa: mean sigma %.3g m^2 in %v um, %.3g in the windows: want at least 10 times more",
					c.gas, c.description, c.band, lp, in, c.in, off)
			}
		}
	}
}

// TestDemoBandStrengths compares the demo bands' integrated strengths with
// the sums of the lines of the same bands in the HITRAN files in
// ../shared/data (HITRAN2012 CO and O2; HITRAN2016/2020 H2O; HITRANonline
// CH4 nu3). The demo strengths are rough by design: within a factor 2.
func TestDemoBandStrengths(t *testing.T) {
	dir := testenv.SharedData(t, "hitran-lines")
	cases := []struct {
		gas, file string
		lo, hi    float64 // cm^-1: the band's extent, in the file and in the demo
	}{
		{"CO", "05_hit12_CO_full.par", 1900, 2400},
		{"CO", "05_hit12_CO_full.par", 4000, 4400},
		{"O2", "07_hit12_O2_full.par", 12900, 13200},
		{"H2O", "H2O_1000-2000_hapigui.par", 1000, 2000},
		{"H2O", "H2O_3400-4100_crosssection_CRLF.par", 3400, 4100},
		{"CH4", "CH4_nu3_band_0000A1-0010F2_hapi.par", 2700, 3300},
	}
	for _, c := range cases {
		lines, err := hitran.ReadLineFile(filepath.Join(dir, c.file), hitran.LineFilter{NuMin: c.lo, NuMax: c.hi, Iso: []int{1}})
		if err != nil {
			t.Fatal(err)
		}
		var want float64
		for _, l := range lines {
			want += l.S
		}
		demo, _, err := Lines(c.gas)
		if err != nil {
			t.Fatal(err)
		}
		var got float64
		for _, l := range demo {
			if l.Nu >= c.lo && l.Nu <= c.hi {
				got += l.S
			}
		}
		if r := got / want; !(r > 0.5 && r < 2) {
			t.Errorf("%s %g-%g cm^-1: demo band strength %.3g, HITRAN sum %.3g (ratio %.2f), want within a factor 2",
				c.gas, c.lo, c.hi, got, want, r)
		}
	}
}

// TestDemoLinesEnvelope checks the rigid-rotor structure of one demo band:
// line spacing 2B within each branch, and intensities that follow
// (2J+1) exp(-c2 B J(J+1)/296) (the textbook rigid-rotor band, e.g.
// Herzberg 1950, ch. III), here for the CO 1-0 band.
func TestDemoLinesEnvelope(t *testing.T) {
	lines, iso, err := Lines("CO")
	if err != nil {
		t.Fatal(err)
	}
	const b, nu0 = 1.9225, 2143.27 // the demo constants for CO
	var r []lbl.Line               // R branch of 1-0: nu0 < nu < nu0 + 300
	for _, l := range lines {
		if l.Nu > nu0 && l.Nu < nu0+300 {
			r = append(r, l)
		}
	}
	for i := 1; i < len(r); i++ {
		if d := r[i].Nu - r[i-1].Nu; math.Abs(d-2*b) > 1e-9 {
			t.Fatalf("R-branch spacing %g cm^-1 at %g, want 2B = %g", d, r[i].Nu, 2*b)
		}
	}
	// R(J) with J = 0, 1, ...: S(J)/S(0) = (2J+1) exp(-c2 B J(J+1)/296).
	for j := 1; j < 30; j++ {
		want := float64(2*j+1) * math.Exp(-lbl.C2*b*float64(j*(j+1))/lbl.TRef)
		if got := r[j].S / r[0].S; math.Abs(got/want-1) > 1e-12 {
			t.Errorf("R(%d): S/S(R0) = %g, want %g", j, got, want)
		}
		if e := b * float64(j*(j+1)); math.Abs(r[j].Elower-e) > 1e-9 {
			t.Errorf("R(%d): E'' = %g, want %g", j, r[j].Elower, e)
		}
	}
	if d := iso[lbl.IsoKey{Mol: 5, Iso: 1}]; d == nil || d.Q == nil {
		t.Fatal("no partition function for the demo CO")
	}
	// The demo partition function is the rigid-rotor sum; at 296 K it is
	// close to kT/(hcB) + 1/3 (Mulholland's expansion, textbook statistical
	// mechanics), to better than 1e-3 relative here.
	q := iso[lbl.IsoKey{Mol: 5, Iso: 1}].Q.Q(lbl.TRef)
	if want := lbl.TRef/(lbl.C2*b) + 1.0/3; math.Abs(q/want-1) > 1e-3 {
		t.Errorf("demo Q(296) for CO = %g, want %g", q, want)
	}
	if _, _, err := Lines("Xe"); err == nil || !strings.Contains(err.Error(), "not a demo gas") {
		t.Errorf("Lines(Xe): error %v, want 'not a demo gas'", err)
	}
}

// TestDemoSetCache checks the demo cache: every table is labelled demo
// with this generator version; a second call loads without building; a
// stale cache is refused by the loader; and two processes publishing at
// once leave one complete cache.
func TestDemoSetCache(t *testing.T) {
	set, dir := demoTestTables(t)
	if !set.Demo {
		t.Error("demo set: Demo is false")
	}
	if len(set.K) != 8 || len(set.CIA) != 2 || len(set.Files) != 10 {
		t.Fatalf("demo set: %d gases, %d CIA pairs, %d files; want 8, 2, 10", len(set.K), len(set.CIA), len(set.Files))
	}
	if !strings.Contains(demoTestLog, "building the demo opacity tables") {
		t.Errorf("first Load call did not report building: %q", demoTestLog)
	}
	for gas, x := range set.K {
		if x.Meta[opacity.MetaDemoNote] != opacity.DemoNote || !opacity.IsDemo(x.Meta) || x.Meta[MetaVersion] != Version {
			t.Errorf("%s: metadata %v is not labelled %q, version %s", gas, x.Meta, opacity.DemoNote, Version)
		}
		if len(x.Log10P) != len(demoLog10P) || len(x.T) != len(demoT) {
			t.Errorf("%s: grid %d x %d, want %d x %d", gas, len(x.Log10P), len(x.T), len(demoLog10P), len(demoT))
		}
	}
	for _, c := range set.CIA {
		if c.Meta[opacity.MetaDemoNote] != opacity.DemoNote || !opacity.IsDemo(c.Meta) {
			t.Errorf("CIA %v: not labelled %q", c.Pair, opacity.DemoNote)
		}
	}

	var log bytes.Buffer
	again, err := Load(dir, &log)
	if err != nil {
		t.Fatal(err)
	}
	if log.Len() != 0 || len(again.Files) != 10 {
		t.Errorf("second Load call: wrote %q and loaded %d files; want silence and 10 files", log.String(), len(again.Files))
	}

	// Two finished copies published at once into a new place: both calls
	// succeed and one complete cache remains, with no temporary directory.
	parent := t.TempDir()
	dst := filepath.Join(parent, "demo-"+Version)
	var srcs []string
	for range 2 {
		src, err := os.MkdirTemp(parent, ".demo-"+Version+".tmp-*")
		if err != nil {
			t.Fatal(err)
		}
		copyDir(t, dir, src)
		srcs = append(srcs, src)
	}
	var wg sync.WaitGroup
	errs := make([]error, 2)
	for i := range 2 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			errs[i] = publishDir(srcs[i], dst)
		}()
	}
	wg.Wait()
	for i, err := range errs {
		if err != nil {
			t.Errorf("publish %d: %v", i, err)
		}
	}
	if _, err := loadDemoCache(dst); err != nil {
		t.Errorf("after two concurrent publications: %v", err)
	}

	// A cache from another generator version is refused by the loader (so
	// Load rebuilds it).
	stale := filepath.Join(t.TempDir(), "stale")
	copyDir(t, dir, stale)
	x, err := tablefile.ReadK(filepath.Join(stale, "CO.parquet"))
	if err != nil {
		t.Fatal(err)
	}
	x.Meta[MetaVersion] = "0"
	if err := tablefile.WriteK(filepath.Join(stale, "CO.parquet"), x, true); err != nil {
		t.Fatal(err)
	}
	if _, err := loadDemoCache(stale); err == nil || !strings.Contains(err.Error(), "demo generator") {
		t.Errorf("stale cache: error %v, want one naming the demo generator version", err)
	}
	// A cache directory that holds other files is never replaced.
	other := t.TempDir()
	opacitytest.WriteFile(t, filepath.Join(other, "notes.txt"), "keep me")
	if _, err := Load(other, nil); err == nil || !strings.Contains(err.Error(), "not a demo table") {
		t.Errorf("Load on a directory with other files: %v, want a refusal", err)
	}
	src3 := filepath.Join(t.TempDir(), "complete")
	copyDir(t, dir, src3)
	if err := publishDir(src3, other); err == nil || !strings.Contains(err.Error(), "not a demo table") {
		t.Errorf("publishDir onto a directory with other files: %v, want a refusal", err)
	}
	if b, err := os.ReadFile(filepath.Join(other, "notes.txt")); err != nil || string(b) != "keep me" {
		t.Errorf("the other file was touched: %q, %v", b, err)
	}
	if _, err := Load("", nil); err == nil {
		t.Error("Load with no cache directory: no error")
	}
}

// TestDemoCIA checks that the demo CIA bands sit at the H2 band centres:
// the H2-H2 coefficient at 300 K is larger at the fundamental (Q(1) near
// 4155 cm^-1, 2.4 um; Herzberg 1950) than in the 1.6 um window between
// fundamental and first overtone.
func TestDemoCIA(t *testing.T) {
	set, _ := demoTestTables(t)
	var hh *opacity.CIATable
	for _, c := range set.CIA {
		if c.Pair == [2]string{"H2", "H2"} {
			hh = c
		}
	}
	if hh == nil {
		t.Fatal("no demo H2-H2 table")
	}
	it := nearestIndex(hh.T, 300)
	row := hh.Row(it)
	at := func(cm float64) float64 { return float64(row[nearestIndex(hh.Wavenumber, 100*cm)]) }
	if !(at(4155) > 0) || !(at(4155) > 10*at(6250)) {
		t.Errorf("demo H2-H2 at 300 K: k(4155 cm^-1) = %g, k(6250 cm^-1) = %g; want the band far above the window", at(4155), at(6250))
	}
}

// copyDir copies the regular files of src into dst (created if needed).
func copyDir(t *testing.T, src, dst string) {
	t.Helper()
	if err := os.MkdirAll(dst, 0o755); err != nil {
		t.Fatal(err)
	}
	ents, err := os.ReadDir(src)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range ents {
		b, err := os.ReadFile(filepath.Join(src, e.Name()))
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dst, e.Name()), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

// demoBinSum is the integral of sigma over the bins of tab within [lo, hi]
// cm^-1 (cm^2 cm^-1 per molecule): per bin the quadrature mean of k(g)
// times the bin's width in wavenumber, and the wavenumbers a, b where the
// bins summed begin and end.
func demoBinSum(tab *opacity.KTable, row []float32, lo, hi float64) (sum, a, b float64) {
	ng := len(tab.G)
	a, b = math.Inf(1), math.Inf(-1)
	for i := range tab.Lo {
		n0, n1 := 1/tab.Hi[i]/100, 1/tab.Lo[i]/100
		if n0 >= lo && n1 <= hi {
			mean := 0.0
			for q, w := range tab.W {
				mean += w * float64(row[i*ng+q])
			}
			sum += mean * 1e4 * (n1 - n0)
			a, b = min(a, n0), max(b, n1)
		}
	}
	return sum, a, b
}

// TestDemoBandIntegral checks that the demo k-tables hold the strength
// their lines carry: the integral of a k-distribution over g is the bin's
// mean cross-section (definition of the k-distribution), so the bins'
// quadrature means times their widths add up to the band's integrated
// cross-section, the sum of the line intensities at the table's
// temperature times the part of each Lorentzian inside the 25 cm^-1
// cut-off, (2/pi) atan(25/gamma) (the normalised Lorentz profile's
// integral; fact of the trade). At the table's 17.8 bar the CO 1-0 lines
// are 1.1 cm^-1 wide, far wider than the fine grid's 0.02 cm^-1, so the
// fine grid resolves them; what remains is the 16-node quadrature of each
// bin's k(g) and the wavelength weighting of a bin (a relative 1/400 across
// an R = 200 bin, cancelling to first order): tolerance 1 %. (At low
// pressure the mean is not a k-table's business: Doppler cores fill under
// a per cent of a bin, above the top node, and sum_g W_g k(g) misses most
// of the band's integral while the transmission, which the tables exist
// for, stays within a few ppm; docs/opacity-accuracy.md.)
func TestDemoBandIntegral(t *testing.T) {
	set, _ := demoTestTables(t)
	for _, c := range []struct {
		gas    string
		lo, hi float64 // cm^-1
		log10P float64
		tol    float64
	}{
		{"CO", 1800, 2500, 6.25, 0.01},
		{"CO2", 2200, 2450, 6.25, 0.01},
		{"H2O", 1000, 2300, 6.25, 0.01},
	} {
		tab := set.K[c.gas]
		ip, it := nearestIndex(tab.Log10P, c.log10P), nearestIndex(tab.T, 300)
		got, a, b := demoBinSum(tab, tab.Row(ip, it), c.lo, c.hi)
		lines, iso, err := Lines(c.gas)
		if err != nil {
			t.Fatal(err)
		}
		var q lbl.PartitionFunc
		for _, d := range iso {
			q = d.Q
		}
		pAtm := math.Pow(10, tab.Log10P[ip]) / lbl.StandardAtmosphere
		var want float64
		for i := range lines {
			l := &lines[i]
			if l.Nu < a+25 || l.Nu > b-25 {
				continue
			}
			gamma := l.GammaAir * math.Pow(lbl.TRef/300, l.NAir) * pAtm
			want += lbl.LineIntensity(l, 300, q.Q(lbl.TRef), q.Q(300)) * 2 / math.Pi * math.Atan(25/gamma)
		}
		r := got/want - 1
		t.Logf("%s %.0f-%.0f cm^-1 at 10^%g Pa: bins %.5g, lines %.5g (%+.3f)", c.gas, a, b, tab.Log10P[ip], got, want, r)
		if math.Abs(r) > c.tol {
			t.Errorf("%s %.0f-%.0f cm^-1 at 10^%g Pa, 300 K: integral of sigma %.6g cm/molecule, lines give %.6g (%+.3f), want within %g",
				c.gas, a, b, tab.Log10P[ip], got, want, r, c.tol)
		}
	}
}
