package chains

import (
	"io"
	"math"
	"math/rand/v2"
	"path/filepath"
	"strings"
	"testing"

	"github.com/parquet-go/parquet-go"

	"chord/internal/testenv"
)

// deadLayout is testLayout as a store of dead points; its extras are the
// log posterior (not a column: WriteDead's logPost), the log-likelihood
// and the mean molecular weight.
func deadLayout() Layout {
	l := testLayout(1)
	l.Nested, l.NumExtra = true, 3
	for i := range l.Columns {
		if l.Columns[i].Role == RoleDerived {
			l.Columns[i].Source++
		}
	}
	return l
}

// deadPoint is point p of the test run: a zero likelihood for the first
// three, then weights rising and falling; the last 4 of n are final.
func deadPoint(p, n int) (final bool, logWt, logPost float64, x, extra []float64) {
	x = []float64{float64(p), 0.5 * float64(p), -float64(p)}
	logWt = -0.01 * float64((p-n/2)*(p-n/2))
	if p <= 3 {
		logWt = math.Inf(-1)
	}
	logPost = logWt + 1
	extra = []float64{logPost, logWt + 2, 2.3 + 1e-3*float64(p)}
	return p > n-4, logWt, logPost, x, extra
}

func writeDead(t *testing.T, w *Writer, from, to, n int) {
	t.Helper()
	for p := from; p <= to; p++ {
		final, lw, lp, x, extra := deadPoint(p, n)
		if err := w.WriteDead(p, final, lw, lp, x, extra); err != nil {
			t.Fatalf("point %d: %v", p, err)
		}
	}
}

// The dead points of nested sampling round-trip through the store: the
// fixed columns (point, final, log_weight, log_posterior) and the
// layout's, read back both by chord's Reader and by parquet-go's generic
// one, with the parts' metadata.
func TestDeadPointsRoundTrip(t *testing.T) {
	const n = 40
	dir := t.TempDir()
	w, err := Create(dir, deadLayout())
	if err != nil {
		t.Fatal(err)
	}
	writeDead(t, w, 1, 25, n)
	w.SetPartMeta("chord.log_evidence", "-12.5")
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	writeDead(t, w, 26, n, n)
	w.SetPartMeta("chord.log_evidence", "-11.25")
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	parts := w.Committed()
	if len(parts) != 2 || parts[1].FirstStep != 26 || parts[1].LastStep != n || parts[1].Rows != n-25 {
		t.Fatalf("parts %+v", parts)
	}

	r, err := NewReader(dir, parts)
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	if !r.Nested() || r.Walkers() != 1 {
		t.Fatalf("nested %v, walkers %d", r.Nested(), r.Walkers())
	}
	var names []string
	for _, c := range r.Columns() {
		names = append(names, c.Name)
	}
	if got := strings.Join(names, ","); got != "log_weight,log_posterior,log_likelihood,log_h2o,temperature,r_ref,mmw" {
		t.Fatalf("value columns %s", got)
	}
	for p := 1; ; p++ {
		got, err := r.Next()
		if err == io.EOF {
			if p != n+1 {
				t.Fatalf("EOF after %d points", p-1)
			}
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		final, lw, lp, x, extra := deadPoint(p, n)
		want := []float64{lw, lp, extra[1], x[0], x[1], x[2], extra[2]}
		v := r.Walker(0)
		for i := range want {
			if v[i] != want[i] && !(math.IsInf(v[i], -1) && math.IsInf(want[i], -1)) {
				t.Fatalf("point %d column %s: %v, want %v", p, names[i], v[i], want[i])
			}
		}
		if got != p || r.Final() != final {
			t.Fatalf("point %d: index %d final %v", p, got, r.Final())
		}
	}

	files, cols := testenv.ParquetFiles(t, filepath.Join(dir, "part-*.parquet"))
	if got := strings.Join(cols, ","); got != "point,final,log_weight,log_posterior,log_likelihood,log_h2o,temperature,r_ref,mmw" {
		t.Errorf("file columns %s", got)
	}
	for i, want := range []string{"-12.5", "-11.25"} {
		pf := files[i].File
		if v, _ := pf.Lookup("chord.log_evidence"); v != want {
			t.Errorf("part %d: chord.log_evidence %q, want %q", i+1, v, want)
		}
		if v, _ := pf.Lookup("chord.format"); v != FormatNested {
			t.Errorf("part %d: chord.format %q", i+1, v)
		}
		rows := make([]parquet.Row, 1)
		if _, err := parquet.NewReader(pf).ReadRows(rows); err != nil && err != io.EOF {
			t.Fatal(err)
		}
		if rows[0][1].Kind() != parquet.Boolean {
			t.Errorf("final is a %v column, want boolean", rows[0][1].Kind())
		}
	}

	// An ensemble reader of the weighted points refuses them.
	if _, err := Read(dir, parts, 0, 1); err == nil || !strings.Contains(err.Error(), "ReadEqualWeight") {
		t.Errorf("Read of dead points: %v", err)
	}
	// Points out of order are refused; the committed parts stay.
	w2, err := NewWriter(w.fs, dir, deadLayout(), parts)
	if err != nil {
		t.Fatal(err)
	}
	if err := w2.WriteDead(n+2, true, 0, 0, make([]float64, 3), make([]float64, 3)); err == nil {
		t.Error("a point out of order was accepted")
	}
}

// ReadEqualWeight resamples the dead points systematically (Kitagawa 1996,
// J. Comput. Graph. Stat. 5, 1): as many samples as the weights' Kish
// effective size (Kish 1965), each point appearing floor or ceil of that
// number times its weight fraction (computed here from the weights as
// written), every sample carrying its point's values.
func TestReadEqualWeight(t *testing.T) {
	const n = 40
	dir := t.TempDir()
	w, err := Create(dir, deadLayout())
	if err != nil {
		t.Fatal(err)
	}
	writeDead(t, w, 1, n, n)
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	c, err := ReadEqualWeight(dir, nil, nil, rand.New(rand.NewPCG(1, 2)))
	if err != nil {
		t.Fatal(err)
	}
	var s, s2 float64
	wt := make([]float64, n+1)
	for p := 1; p <= n; p++ {
		_, lw, _, _, _ := deadPoint(p, n)
		wt[p] = math.Exp(lw)
		s += wt[p]
		s2 += wt[p] * wt[p]
	}
	ess := s * s / s2
	m := len(c.Steps)
	if m != int(math.Round(ess)) || math.Abs(c.EffectiveSize-ess) > 1e-9*ess || c.TotalSteps != n || c.Walkers != 1 {
		t.Fatalf("%d samples, effective size %g (want %g), %d points", m, c.EffectiveSize, ess, c.TotalSteps)
	}
	if c.Columns[0].Name != "log_posterior" || len(c.Columns) != 6 {
		t.Fatalf("columns %+v", c.Columns)
	}
	count := make([]int, n+1)
	temp := c.Column("log_h2o")
	for i := range m {
		p := int(temp[i]) // log_h2o holds the point's index
		count[p]++
		_, _, lp, x, _ := deadPoint(p, n)
		if c.Values[0][i] != lp || c.Column("temperature")[i] != x[1] {
			t.Fatalf("sample %d is not point %d's row", i, p)
		}
	}
	for p := 1; p <= n; p++ {
		e := float64(m) * wt[p] / s
		if float64(count[p]) < math.Floor(e) || float64(count[p]) > math.Ceil(e) {
			t.Errorf("point %d drawn %d times, want floor or ceil of %.3f", p, count[p], e)
		}
	}

	// Points not in the store (the live points of an unfinished run) are
	// resampled after the stored ones, alone or with them; points of other
	// columns are refused.
	l := deadLayout()
	more := &Points{Columns: l.ValueColumns()}
	for p := n + 1; p <= n+5; p++ {
		_, lw, lp, x, extra := deadPoint(p, n)
		more.Rows = append(more.Rows, []float64{lw + 40, lp, extra[1], x[0], x[1], x[2], extra[2]})
	}
	both, err := ReadEqualWeight(dir, w.Committed(), more, rand.New(rand.NewPCG(1, 2)))
	if err != nil {
		t.Fatal(err)
	}
	// The added points carry e^40 times the weight: every sample is one.
	if both.TotalSteps != n+5 || both.Column("log_h2o")[0] <= n {
		t.Errorf("with more points: %d points, first sample from point %v", both.TotalSteps, both.Column("log_h2o")[0])
	}
	alone, err := ReadEqualWeight(dir, []PartInfo{}, more, rand.New(rand.NewPCG(1, 2)))
	if err != nil || alone.TotalSteps != 5 || alone.Column("log_h2o")[0] < n+1 {
		t.Errorf("more points alone: %v, %+v", err, alone)
	}
	ens := testLayout(1)
	other := &Points{Columns: ens.ValueColumns(), Rows: more.Rows}
	if _, err := ReadEqualWeight(dir, nil, other, rand.New(rand.NewPCG(1, 2))); err == nil {
		t.Error("points of other columns were resampled with the store's")
	}

	// An ensemble chain is not resampled; no positive weight is an error.
	ensDir := t.TempDir()
	we, err := Create(ensDir, testLayout(2))
	if err != nil {
		t.Fatal(err)
	}
	writeFake(t, we, testLayout(2), 1, 3)
	if err := we.Flush(); err != nil {
		t.Fatal(err)
	}
	if _, err := ReadEqualWeight(ensDir, nil, nil, rand.New(rand.NewPCG(1, 2))); err == nil {
		t.Error("an ensemble chain was resampled")
	}
	zero := t.TempDir()
	wz, err := Create(zero, deadLayout())
	if err != nil {
		t.Fatal(err)
	}
	writeDead(t, wz, 1, 3, n) // zero likelihood only
	if err := wz.Flush(); err != nil {
		t.Fatal(err)
	}
	if _, err := ReadEqualWeight(zero, nil, nil, rand.New(rand.NewPCG(1, 2))); err == nil || !strings.Contains(err.Error(), "positive weight") {
		t.Errorf("no positive weight: %v", err)
	}
}
