package retrieve

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"

	"github.com/BurntSushi/toml"

	"chord/chains"
	"chord/internal/atomicfile"
	"chord/internal/runlock"
	"chord/report"
)

// Run directories: who may write them, what --force may remove, and how
// their inputs are named.
//
// Every command that writes a run directory (fit, resume, report, and
// the plans, grids and demo that call them) holds its lock
// (internal/runlock) from start to end; a second process fails at once,
// naming the holder. A new run needs an absent or empty directory (the
// lock file alone counts as empty); FitOptions.Force replaces a run only
// in a directory that is a chord run (run.toml present and readable, with
// a run identity), and then removes only chord's entries (runEntries).
//
// The observation files are copied into the run (InputsDir, inputs.go)
// and run.toml names them relative to the run directory, so a run moved
// anywhere keeps them. The opacity tables keep their absolute paths, and
// run.toml records where the run directory was (RunInfo.RunDir): a run
// that moved together with files beside it (a plan, a grid, a run made
// next to its tables; runs made before the copies) finds them where they
// moved (relocate). The checkpoint's digest covers the inputs' contents,
// not their paths.

// runEntries are the names chord writes in a run directory (their
// temporary files, atomicfile.TempPattern, too).
var runEntries = append([]string{RunFile, chains.DirName, CheckpointFile, TruthFile, InputsDir}, report.Files()...)

// NotEmptyError refuses a new run in a directory that holds something
// (FitOptions.Force replaces the run in it). It is an fs.ErrExist.
type NotEmptyError struct {
	Dir, Entry string // the directory and an entry in it
}

func (e *NotEmptyError) Error() string {
	if e.Entry == RunFile {
		return fmt.Sprintf("run directory %s holds a run (%s)", e.Dir, RunFile)
	}
	return fmt.Sprintf("run directory %s is not empty (it holds %s)", e.Dir, e.Entry)
}

// Is reports whether target is fs.ErrExist.
func (e *NotEmptyError) Is(target error) bool { return target == fs.ErrExist }

// NotRunError refuses FitOptions.Force in a directory that is not a chord
// run: --force replaces a run, never files chord did not make.
type NotRunError struct {
	Dir, Entry string // the directory and an entry in it
	Why        string // why it is not a run
}

func (e *NotRunError) Error() string {
	return fmt.Sprintf("%s is not a chord run directory (%s) but holds %s: --force replaces only a chord run, and nothing here was removed; choose an empty or new directory", e.Dir, e.Why, e.Entry)
}

// checkRunDir refuses a non-empty dir unless force and dir is a chord run:
// a new run needs an absent or empty directory.
func checkRunDir(dir string, force bool) error {
	names, err := runlock.Entries(dir)
	if err != nil || len(names) == 0 {
		return err
	}
	entry := names[0]
	for _, n := range names {
		if n == RunFile {
			entry = n
		}
	}
	if !force {
		return &NotEmptyError{Dir: dir, Entry: entry}
	}
	if why := notRun(dir); why != "" {
		return &NotRunError{Dir: dir, Entry: entry, Why: why}
	}
	return nil
}

// notRun says why dir is not a chord run directory, or "" when it is.
func notRun(dir string) string {
	var rf struct {
		Run RunInfo `toml:"run"`
	}
	path := filepath.Join(dir, RunFile)
	if _, err := os.Stat(path); err != nil {
		return "no " + RunFile
	}
	if _, err := toml.DecodeFile(path, &rf); err != nil {
		return fmt.Sprintf("its %s does not read as one: %v", RunFile, err)
	}
	if rf.Run.RunID == "" {
		return fmt.Sprintf("its %s has no [run] run_id", RunFile)
	}
	return ""
}

// prepareRunDir clears dir of a run's entries (files that are not chord's
// are left alone). Called once everything is validated, so that --force
// with a broken configuration keeps the old run.
func prepareRunDir(dir string) error {
	for _, name := range runEntries {
		tmp, _ := filepath.Glob(filepath.Join(dir, atomicfile.TempPattern(name)))
		for _, p := range append(tmp, filepath.Join(dir, name)) {
			if err := os.RemoveAll(p); err != nil {
				return err
			}
		}
	}
	return nil
}

// runLock locks the existing run directory dir. readOnly is set, with no
// lock and no error, when dir cannot be written by this process and holds
// no lock file (a report of a read-only run: nobody writes it through
// chord as this user).
func runLock(dir, what string) (lock *runlock.Lock, readOnly bool, err error) {
	lock, err = runlock.Acquire(dir, runlock.Holder(what))
	if errors.Is(err, runlock.ErrReadOnly) {
		return nil, true, nil
	}
	return lock, false, err
}

// relocate points the input paths of run.toml (observations, opacity
// directory, inputs) at the files that moved along with the run: a file
// found at the same place relative to the run directory dir as it was
// relative to the run directory when the run was made (RunInfo.RunDir)
// is used; otherwise the path as recorded. The inputs' digests are
// checked afterwards whichever is used.
func (rf *runFile) relocate(dir string) {
	then := rf.Run.RunDir
	now, err := filepath.Abs(dir)
	if then == "" || err != nil || now == then {
		return
	}
	move := func(p string) string {
		if !filepath.IsAbs(p) {
			return p
		}
		rel, err := filepath.Rel(then, p)
		if err != nil {
			return p
		}
		q := filepath.Join(now, rel)
		if _, err := os.Stat(q); err != nil {
			return p
		}
		return q
	}
	for i := range rf.Config.Observations {
		rf.Config.Observations[i].File = move(rf.Config.Observations[i].File)
	}
	if rf.Config.Opacity.Dir != "" {
		rf.Config.Opacity.Dir = move(rf.Config.Opacity.Dir)
	}
	for i := range rf.Run.Inputs {
		rf.Run.Inputs[i].Path = move(rf.Run.Inputs[i].Path)
	}
}
