package build_test

import (
	"bufio"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	dbzip2 "github.com/dsnet/compress/bzip2"

	"chord/forward/opacity/build"
	"chord/forward/opacity/hitran"
	"chord/forward/opacity/lbl"
	"chord/internal/testenv"
)

// TestHITEMPChunks splits the HITRAN2012 CO list into three bzip2 chunk
// files named as HITEMP names them (<mol>_<lo>-<hi>_HITEMP<year>.par.bz2)
// and streams 2050-2250 cm^-1 from them: the lines are those the reader
// gives for the plain file in that range, in order; the list counts as a
// hot list (no room-temperature warning); a chunk named for a range
// outside is not opened.
func TestHITEMPChunks(t *testing.T) {
	src := filepath.Join(testenv.SharedData(t, "hitran-lines"), "05_hit12_CO_full.par")
	part := testenv.SharedData(t, "partition")
	dir := t.TempDir()
	b, err := os.ReadFile(src)
	if err != nil {
		t.Fatal(err)
	}
	recs := strings.SplitAfter(string(b), "\n")
	var files []string
	for _, ch := range []struct {
		name   string
		lo, hi float64
	}{{"05_0-2100_HITEMP2019.par.bz2", 0, 2100}, {"05_2100-2200_HITEMP2019.par.bz2", 2100, 2200}, {"05_2200-9000_HITEMP2019.par.bz2", 2200, 9000}} {
		p := filepath.Join(dir, ch.name)
		f, err := os.Create(p)
		if err != nil {
			t.Fatal(err)
		}
		w, err := dbzip2.NewWriter(f, &dbzip2.WriterConfig{Level: 1})
		if err != nil {
			t.Fatal(err)
		}
		bw := bufio.NewWriter(w)
		for _, r := range recs {
			if len(r) < 15 {
				continue
			}
			var nu float64
			if _, err := fmt.Sscan(strings.TrimSpace(r[3:15]), &nu); err == nil && nu >= ch.lo && nu < ch.hi {
				io.WriteString(bw, r)
			}
		}
		if err := bw.Flush(); err != nil {
			t.Fatal(err)
		}
		w.Close()
		f.Close()
		files = append(files, p)
	}
	// A fourth chunk, named for a range outside 2050-2250, is not a bzip2
	// file at all: opening it would fail.
	far := filepath.Join(dir, "05_8000-9000_HITEMP2019.par.bz2")
	if err := os.WriteFile(far, []byte("not bzip2"), 0o644); err != nil {
		t.Fatal(err)
	}
	files = append(files, far)
	l, err := build.Open(&build.Source{Files: files, MolParam: filepath.Join(part, "molparam_hitran.txt")}, lbl.Observer{})
	if err != nil {
		t.Fatal(err)
	}
	if !l.Hot || l.Gas != "CO" {
		t.Errorf("hot %v, gas %q", l.Hot, l.Gas)
	}
	st, err := l.Stream(2050, 2250, 2)
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	var got []lbl.Line
	for {
		got, err = st.Next(got)
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
	}
	want, err := hitran.ReadLineFile(src, hitran.LineFilter{NuMin: 2050, NuMax: 2250})
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(got, lbl.MergeLines(want)) {
		t.Errorf("%d lines streamed from the chunks, %d from the plain file", len(got), len(want))
	}
}
