package main

import (
	"bytes"
	"strings"
	"testing"
	"time"

	"github.com/urfave/cli/v2"
)

// TestBuildBar: a build's progress bar appears only once the build is
// predicted to take longer than barMinDuration, and names the table; a
// build observer off a terminal draws no bar and prints warnings with the
// gas name.
func TestBuildBar(t *testing.T) {
	var w bytes.Buffer
	fast := &buildBar{w: &w, desc: "cross-sections CO", start: time.Now()}
	for i := 1; i <= 4; i++ {
		fast.progress(i, 4)
	}
	if w.Len() != 0 || fast.bar != nil {
		t.Errorf("a build predicted to take microseconds drew a bar: %q", w.String())
	}
	slow := &buildBar{w: &w, desc: "cross-sections CO", start: time.Now().Add(-barMinDuration)}
	slow.progress(1, 4)
	if slow.bar == nil || !strings.Contains(w.String(), "cross-sections CO") {
		t.Fatalf("a build predicted to take 4 s drew %q", w.String())
	}
	for i := 2; i <= 4; i++ {
		slow.progress(i, 4)
	}
	if !slow.bar.IsFinished() {
		t.Error("the bar is not finished after the last step")
	}

	var e bytes.Buffer
	c := cli.NewContext(&cli.App{ErrWriter: &e}, nil, nil)
	o := tableObserver(c, "k-table", "CO", false)
	o.Warn("grid is coarse")
	if e.String() != "warning: CO: grid is coarse\n" {
		t.Errorf("warning printed as %q", e.String())
	}
	// A standard error that is not a terminal gets a line at every tenth
	// of the work with the time left, not a bar.
	e.Reset()
	for i := 1; i <= 20; i++ {
		o.Progress(i, 20)
	}
	if n := strings.Count(e.String(), "left)\n"); n != 9 || !strings.HasPrefix(e.String(), "k-table CO: 10 % (") {
		t.Errorf("progress lines %q, want 9 (10 %% to 90 %%)", e.String())
	}
	if q := tableObserver(c, "k-table", "CO", true); q.Progress != nil || q.Note != nil {
		t.Error("quiet observer reports progress or notes")
	}
}
