package main

import (
	"fmt"
	"io"
	"time"

	"chord/internal/eta"
)

// pointsProgress prints "k of N points done, about T left" for the long
// work of grids and plans, as a line each time a point ends. The time left
// is the session's time per point finished so far times the points left,
// steadied (eta.Smoother).
type pointsProgress struct {
	w         io.Writer
	who, noun string // "chord grid", "points"
	begin     time.Time
	firstDone int
	started   bool
	left      eta.Smoother
	lastDone  int
	now       func() time.Time
}

func newPointsProgress(w io.Writer, who, noun string) *pointsProgress {
	return &pointsProgress{w: w, who: who, noun: noun, now: time.Now}
}

// update is the campaign's callback.
func (p *pointsProgress) update(done, total int) {
	now := p.now()
	if !p.started {
		p.begin, p.firstDone, p.started, p.lastDone = now, done, true, done
		if total > done {
			fmt.Fprintf(p.w, "%s: %d of %d %s done\n", p.who, done, total, p.noun)
		}
		return
	}
	if done == p.lastDone {
		return // a point stopped or failed: nothing new is done
	}
	p.lastDone = done
	msg := fmt.Sprintf("%s: %d of %d %s done", p.who, done, total, p.noun)
	if n := done - p.firstDone; n > 0 && done < total {
		per := now.Sub(p.begin) / time.Duration(n)
		left := p.left.Update(now, per*time.Duration(total-done))
		msg += fmt.Sprintf(", about %s left", left.Round(time.Second))
	}
	fmt.Fprintln(p.w, msg)
}
