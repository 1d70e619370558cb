package chains

import (
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"syscall"
	"testing"

	"chord/internal/testenv"
	"chord/sampler"
)

// testLayout is a small layout: 3 parameters, 2 extras (log_likelihood, mmw).
func testLayout(walkers int) Layout {
	return Layout{
		Walkers: walkers, Dim: 3, NumExtra: 2,
		Columns: []Column{
			{Name: "log_likelihood", Role: RoleDerived, Source: 0},
			{Name: "log_h2o", Role: RoleParameter, Source: 0, Quantity: "log10 volume mixing ratio of H2O", Prior: "log-uniform(1e-12, 1e-1)"},
			{Name: "temperature", Role: RoleParameter, Source: 1, Quantity: "isothermal temperature", Unit: "K", Prior: "uniform(300, 1500)"},
			{Name: "r_ref", Role: RoleParameter, Source: 2, Quantity: "reference radius", Unit: "R_earth", Prior: "uniform(1, 4)"},
			{Name: "mmw", Role: RoleDerived, Source: 1, Quantity: "mean molecular weight", Unit: "u"},
		},
		Meta: map[string]string{"chord.run_id": "test"},
	}
}

// fakeStep fills deterministic values for step s.
func fakeStep(l Layout, s int, pos, logp, extra []float64) {
	for k := 0; k < l.Walkers; k++ {
		for j := 0; j < l.Dim; j++ {
			pos[k*l.Dim+j] = float64(s) + 0.01*float64(k) + 1e-4*float64(j)
		}
		logp[k] = -float64(s*l.Walkers + k)
		for j := 0; j < l.NumExtra; j++ {
			extra[k*l.NumExtra+j] = float64(1000*j) - float64(s)
		}
	}
}

func writeFake(t testing.TB, w *Writer, l Layout, from, to int) {
	t.Helper()
	pos := make([]float64, l.Walkers*l.Dim)
	logp := make([]float64, l.Walkers)
	extra := make([]float64, l.Walkers*l.NumExtra)
	for s := from; s <= to; s++ {
		fakeStep(l, s, pos, logp, extra)
		if err := w.WriteStep(s, pos, logp, extra); err != nil {
			t.Fatalf("step %d: %v", s, err)
		}
	}
}

func TestChainsRoundTrip(t *testing.T) {
	dir := t.TempDir()
	l := testLayout(4)
	w, err := Create(dir, l)
	if err != nil {
		t.Fatal(err)
	}
	writeFake(t, w, l, 1, 7)
	if _, err := w.Commit(); err != nil {
		t.Fatal(err)
	}
	writeFake(t, w, l, 8, 10)
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	if got := len(w.Committed()); got != 2 {
		t.Fatalf("%d parts committed, want 2", got)
	}
	if err := CheckParts(dir, w.Committed(), map[string]string{"chord.run_id": "test"}); err != nil {
		t.Fatal(err)
	}
	// A part of another run is refused, named, even when its digest is the
	// one recorded (a checkpoint copied along with it).
	err = CheckParts(dir, w.Committed(), map[string]string{"chord.run_id": "other"})
	var pe *PartError
	if !errors.As(err, &pe) || pe.Index != 0 || !strings.Contains(err.Error(), `part-000001.parquet (steps 1-7)`) || !strings.Contains(err.Error(), `its chord.run_id is "test", this run's is "other"`) {
		t.Errorf("part of another run: %v", err)
	}

	// Independent reader: row count = walkers x steps, column names as laid out.
	cols, rows := testenv.ParquetRows(t, filepath.Join(dir, "part-*.parquet"))
	if want := l.ColumnNames(); strings.Join(cols, ",") != strings.Join(want, ",") {
		t.Errorf("columns %v, want %v", cols, want)
	}
	if len(rows) != 4*10 {
		t.Fatalf("%d rows, want %d", len(rows), 40)
	}
	r := rows[4*8+2] // step 9, walker 2
	if r["step"] != int64(9) || r["walker"] != int64(2) || r["temperature"] != 9+0.02+1e-4 || r["mmw"] != 1000.0-9 {
		t.Errorf("row for step 9 walker 2: %v", r)
	}

	c, err := Read(dir, nil, 2, 3)
	if err != nil {
		t.Fatal(err)
	}
	if fmt.Sprint(c.Steps) != "[5 8]" || c.TotalSteps != 10 || c.Walkers != 4 {
		t.Fatalf("steps %v total %d walkers %d, want [5 8] 10 4", c.Steps, c.TotalSteps, c.Walkers)
	}
	if got := c.Column("log_h2o")[1*4+3]; got != 8+0.03 {
		t.Errorf("log_h2o at step 8 walker 3 = %v", got)
	}
	if got := c.Column("log_posterior")[0]; got != -20 {
		t.Errorf("log_posterior at step 5 walker 0 = %v, want -20", got)
	}
	if c.Columns[3].Unit != "K" || c.Columns[3].Prior != "uniform(300, 1500)" {
		t.Errorf("metadata of temperature: %+v", c.Columns[3])
	}
}

func TestResumeChainsTrims(t *testing.T) {
	dir := t.TempDir()
	l := testLayout(3)
	w, err := Create(dir, l)
	if err != nil {
		t.Fatal(err)
	}
	writeFake(t, w, l, 1, 5)
	w.Commit()
	committed := append([]PartInfo(nil), w.Committed()...)
	// Rows after the "checkpoint": a committed part 2 and an open part 3.
	writeFake(t, w, l, 6, 8)
	w.Commit()
	writeFake(t, w, l, 9, 9)
	// Simulate the crash: the open part's temporary file stays as it is.
	rng := rand.New(rand.NewPCG(3, 4))
	p2 := filepath.Join(dir, partName(2))
	data, _ := os.ReadFile(p2)
	os.WriteFile(p2, data[:rng.IntN(len(data))], 0o644)

	w2, removed, err := Resume(dir, l, committed)
	if err != nil {
		t.Fatal(err)
	}
	if len(removed) != 2 {
		t.Errorf("removed %v, want part 2 and the temporary part 3", removed)
	}
	writeFake(t, w2, l, 6, 8)
	w2.Commit()
	c, err := Read(dir, nil, 0, 1)
	if err != nil {
		t.Fatal(err)
	}
	if c.TotalSteps != 8 {
		t.Errorf("%d steps after resume, want 8", c.TotalSteps)
	}

	// A damaged committed part is an error naming it.
	p1 := filepath.Join(dir, partName(1))
	data, _ = os.ReadFile(p1)
	data[len(data)/2] ^= 1
	os.WriteFile(p1, data, 0o644)
	_, _, err = Resume(dir, l, committed)
	var pe *PartError
	if !errors.As(err, &pe) || pe.Part.Name != partName(1) {
		t.Errorf("damaged part: error %v", err)
	}
}

func TestChainsFullDisk(t *testing.T) {
	dir := t.TempDir()
	l := testLayout(4)
	disk := &testenv.FullDisk{Limit: math.MaxInt64}
	w, err := NewWriter(disk, dir, l, nil)
	if err != nil {
		t.Fatal(err)
	}
	writeFake(t, w, l, 1, 6)
	if _, err := w.Commit(); err != nil {
		t.Fatal(err)
	}
	safe := append([]PartInfo(nil), w.Committed()...)
	disk.Limit = 100
	pos := make([]float64, 4*3)
	logp := make([]float64, 4)
	extra := make([]float64, 4*2)
	for s := 7; s <= 9; s++ {
		fakeStep(l, s, pos, logp, extra)
		if err = w.WriteStep(s, pos, logp, extra); err != nil {
			break
		}
	}
	if err == nil {
		_, err = w.Commit()
	}
	if err == nil || !errors.Is(err, syscall.ENOSPC) {
		t.Fatalf("error %v, want one wrapping ENOSPC", err)
	}
	for _, want := range []string{"part-000002.parquet.tmp", "steps 7-9", "are lost", "1 committed part files (steps 1-6) are intact"} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("error %q does not say %q", err, want)
		}
	}
	if err2 := w.WriteStep(10, pos, logp, extra); err2 != err {
		t.Errorf("writer accepted rows after failing: %v", err2)
	}
	if err := CheckParts(dir, safe, nil); err != nil {
		t.Errorf("committed part damaged by the failure: %v", err)
	}
	if _, err := os.Stat(filepath.Join(dir, "part-000002.parquet.tmp")); !os.IsNotExist(err) {
		t.Errorf("temporary part left behind: %v", err)
	}
	c, err := Read(dir, nil, 0, 1)
	if err != nil || c.TotalSteps != 6 {
		t.Fatalf("after the failure: %v, steps %v", err, c)
	}
}

func TestChainLayoutErrors(t *testing.T) {
	for i, tc := range []struct {
		edit func(*Layout)
		want string
	}{
		{func(l *Layout) { l.Columns[1].Name = "step" }, `"step" used twice`},
		{func(l *Layout) { l.Columns[1].Source = 3 }, `"log_h2o" takes parameter value 3 of 3`},
		{func(l *Layout) { l.Columns[0].Role = "x" }, `role "x"`},
		{func(l *Layout) { l.Walkers = 0 }, "walkers 0"},
	} {
		l := testLayout(2)
		tc.edit(&l)
		_, err := Create(t.TempDir(), l)
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("case %d: error %v, want %q", i, err, tc.want)
		}
	}
	dir := t.TempDir()
	os.WriteFile(filepath.Join(dir, partName(1)), []byte("x"), 0o644)
	if _, err := Create(dir, testLayout(2)); err == nil || !strings.Contains(err.Error(), "already holds part-000001.parquet") {
		t.Errorf("non-empty chain dir: %v", err)
	}
	if _, err := Read(t.TempDir(), nil, 0, 1); err == nil || !strings.Contains(err.Error(), "no part files") {
		t.Errorf("empty dir: %v", err)
	}
}

// The streaming reader gives back every step as the sampler recorded it
// (Writer.Record, then Reader.StepTo: the same Pos, LogP and Extra, bit for
// bit), across part boundaries; a step too small for the columns, or a
// damaged part, is an error (naming the part).
func TestReaderStepTo(t *testing.T) {
	dir := t.TempDir()
	l := testLayout(3)
	w, err := Create(dir, l)
	if err != nil {
		t.Fatal(err)
	}
	newStep := func() *sampler.Step {
		return &sampler.Step{Walkers: l.Walkers, Dim: l.Dim, NumExtra: l.NumExtra,
			Pos: make([]float64, l.Walkers*l.Dim), LogP: make([]float64, l.Walkers), Extra: make([]float64, l.Walkers*l.NumExtra)}
	}
	in := newStep()
	for s := 1; s <= 7; s++ {
		in.Index = s
		fakeStep(l, s, in.Pos, in.LogP, in.Extra)
		if err := w.Record(in); err != nil {
			t.Fatal(err)
		}
		if s == 4 {
			w.Flush()
		}
	}
	w.Flush()
	r, err := NewReader(dir, w.Committed())
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	out, want := newStep(), newStep()
	for s := 1; ; s++ {
		got, err := r.Next()
		if err == io.EOF {
			if s != 8 {
				t.Fatalf("EOF after %d steps, want 7", s-1)
			}
			break
		}
		if err != nil || got != s {
			t.Fatalf("step %d: got %d, %v", s, got, err)
		}
		if err := r.StepTo(out); err != nil {
			t.Fatal(err)
		}
		fakeStep(l, s, want.Pos, want.LogP, want.Extra)
		if out.Index != s || !slices.Equal(out.Pos, want.Pos) || !slices.Equal(out.LogP, want.LogP) || !slices.Equal(out.Extra, want.Extra) {
			t.Fatalf("step %d read back as %+v", s, out)
		}
	}
	if err := r.StepTo(&sampler.Step{Walkers: 3, Dim: 1, NumExtra: 2, Pos: make([]float64, 3), LogP: make([]float64, 3), Extra: make([]float64, 6)}); err == nil {
		t.Error("a step of 1 parameter accepted 3 parameter columns")
	}

	// A part file cut short by one byte.
	cut := t.TempDir()
	w, err = Create(cut, l)
	if err != nil {
		t.Fatal(err)
	}
	writeFake(t, w, l, 1, 2)
	w.Flush()
	path := filepath.Join(cut, partName(1))
	data, _ := os.ReadFile(path)
	os.WriteFile(path, data[:len(data)-1], 0o644)
	if _, err := Read(cut, nil, 0, 1); err == nil || !strings.Contains(err.Error(), partName(1)) {
		t.Errorf("damaged part: %v, want an error naming it", err)
	}
}
