package main

import (
	"fmt"
	"io"
	"os"
	"time"

	"github.com/schollz/progressbar/v3"
	"github.com/urfave/cli/v2"
	"golang.org/x/term"

	"chord/forward/opacity/lbl"
)

// barMinDuration is how long a table build must be predicted to take for
// it to get a progress bar: shorter builds would only flash one.
const barMinDuration = time.Second

// stderrTerminal reports whether the command's standard error is a
// terminal, where progress bars may be drawn.
func stderrTerminal(c *cli.Context) bool {
	return c.App.ErrWriter == os.Stderr && term.IsTerminal(int(os.Stderr.Fd()))
}

// noteWriter returns what prints the notes of library work on standard
// error, one a line; nil when quiet.
func noteWriter(c *cli.Context, quiet bool) func(msg string) {
	if quiet {
		return nil
	}
	return func(msg string) { fmt.Fprintln(c.App.ErrWriter, msg) }
}

// tableObserver returns the observer of the build of a table (what, e.g.
// "k-table") of gas: warnings go to standard error as "warning: GAS:
// ...", and, unless quiet, notes go there too, as does the progress: a
// bar with the time left when standard error is a terminal and the build
// is predicted to take longer than barMinDuration, otherwise a line at
// every tenth of the work with the time left.
func tableObserver(c *cli.Context, what, gas string, quiet bool) lbl.Observer {
	o := lbl.Observer{
		Warn: func(msg string) { fmt.Fprintf(c.App.ErrWriter, "warning: %s: %s\n", gas, msg) },
		Note: noteWriter(c, quiet),
	}
	switch {
	case quiet:
	case stderrTerminal(c):
		b := &buildBar{w: os.Stderr, desc: what + " " + gas, start: time.Now()}
		o.Progress = b.progress
	default:
		p := &progressLines{w: c.App.ErrWriter, desc: what + " " + gas, start: time.Now()}
		o.Progress = p.progress
	}
	return o
}

// progressLines writes a line at every tenth of the work with the time
// left, extrapolated from the time so far.
type progressLines struct {
	w     io.Writer
	desc  string
	start time.Time
	tenth int
}

func (p *progressLines) progress(done, total int) {
	t := done * 10 / max(total, 1)
	if t <= p.tenth || done >= total {
		return
	}
	p.tenth = t
	el := time.Since(p.start)
	left := time.Duration(float64(el) * float64(total-done) / float64(done))
	fmt.Fprintf(p.w, "%s: %d %% (%s elapsed, about %s left)\n", p.desc, 100*done/total, el.Round(time.Second), left.Round(time.Second))
}

// buildBar draws a progress bar on w once the work it
// follows is predicted to take longer than barMinDuration.
type buildBar struct {
	w     io.Writer
	desc  string
	start time.Time
	bar   *progressbar.ProgressBar
}

func (b *buildBar) progress(done, total int) {
	if b.bar == nil {
		predicted := time.Duration(float64(time.Since(b.start)) * float64(total) / float64(done))
		if done >= total || predicted < barMinDuration {
			return
		}
		b.bar = progressbar.NewOptions(total,
			progressbar.OptionSetWriter(b.w),
			progressbar.OptionSetDescription(b.desc),
			progressbar.OptionShowCount(),
			progressbar.OptionSetPredictTime(true),
			progressbar.OptionClearOnFinish(),
		)
	}
	b.bar.Set(done)
	if done >= total {
		b.bar.Finish()
	}
}
