package lbl

// Observer receives reports from long work while it runs: how far it has
// come, its warnings and notes on what it does. The library never prints and never looks for a
// terminal; a command turns the reports into a progress bar or lines on
// standard error. A nil field is not called, so the zero Observer reports
// nothing. Calls come one at a time from the goroutine that started the
// work.
type Observer struct {
	// Progress is told, each time a step of the work finishes, that done
	// of total steps are finished; done rises to total.
	Progress func(done, total int)
	// Warn receives each warning as it arises: something that does not
	// stop the work but qualifies its result (tables record their
	// warnings in their metadata too).
	Warn func(msg string)
	// Note receives a line on what the work is doing, for a person
	// watching: a file being read, a choice made for them. BuildXSec has
	// none; the builders that read files before it do.
	Note func(msg string)
}

func (o *Observer) progress(done, total int) {
	if o.Progress != nil {
		o.Progress(done, total)
	}
}

func (o *Observer) warn(msg string) {
	if o.Warn != nil {
		o.Warn(msg)
	}
}
