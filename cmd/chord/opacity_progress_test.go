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
	o := tableObserver(c, "CO", false)
	if o.Progress != nil {
		t.Error("a bar is set up for a standard error that is not a terminal")
	}
	o.Warn("grid is coarse")
	if e.String() != "warning: CO: grid is coarse\n" {
		t.Errorf("warning printed as %q", e.String())
	}
}
