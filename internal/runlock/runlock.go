// Package runlock keeps two chord processes from writing one directory (a
// run directory, a plan, a demo, a grid point) at once.
//
// The lock is an exclusive flock(2) on a file in the directory (FileName),
// held for the whole life of the command. The kernel releases it when the
// process ends in any way (exit, SIGKILL, a crash), so a lock left by a
// dead process never blocks anyone: there is no stale lock to clear by
// hand. The holder writes a line describing itself (pid, host, command)
// into the file for the error of a second process; the text says who, the
// flock alone says whether.
//
// Other hosts: Linux implements flock on NFS as a whole-file POSIX lock
// through the server (NFSv4, or NFSv3 with the lock manager), so two
// hosts sharing a directory exclude each other too. When the holder's host
// dies the server frees its locks once its lease ends (about 90 s on
// NFSv4) or the host reboots; until then the lock reads as held, and the
// message names that host. A mount with locking turned off ("nolock", or
// local_lock=flock) makes the lock local to each host: chord cannot tell,
// and two hosts could then both write; do not share run directories over
// such a mount. A file system that refuses locks (ENOLCK, ENOTSUP) is an
// error rather than a silent unlocked run.
package runlock

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"time"
)

// FileName is the lock file in a locked directory.
const FileName = "chord.lock"

// Lock is a held lock.
type Lock struct {
	f        *os.File
	dir      string
	readOnly bool // taken on a file opened for reading (a directory this process cannot write)
	created  bool // Create made the directory
}

// ErrReadOnly is wrapped by the error of Acquire in a directory this
// process cannot write and that holds no lock file.
var ErrReadOnly = errors.New("the directory is not writable and holds no lock file")

// HeldError is the error of a lock another process holds.
type HeldError struct {
	Dir    string
	Holder string // what the holder wrote ("pid 12, host h, chord fit"), "" if nothing
}

func (e *HeldError) Error() string {
	who := "another chord process"
	if e.Holder != "" {
		who += " (" + e.Holder + ")"
	}
	msg := fmt.Sprintf("%s: %s is writing this directory; wait for it to finish or stop it (SIGINT or SIGTERM stops it at a checkpoint)", e.Dir, who)
	if pid, host, ok := parseHolder(e.Holder); ok {
		if h, _ := os.Hostname(); h == host && !alive(pid) {
			msg += fmt.Sprintf("; pid %d no longer runs on this host, so the file system still holds its lock (an NFS server frees it when the lease ends, about 90 s)", pid)
		}
	}
	return msg
}

// Holder describes this process for the lock file: "pid N, host H, what".
func Holder(what string) string {
	host, _ := os.Hostname()
	s := fmt.Sprintf("pid %d, host %s", os.Getpid(), host)
	if what != "" {
		s += ", " + what
	}
	return s
}

// parseHolder reads the pid and host back from a Holder text.
func parseHolder(s string) (pid int, host string, ok bool) {
	f := strings.Split(s, ", ")
	if len(f) < 2 || !strings.HasPrefix(f[0], "pid ") || !strings.HasPrefix(f[1], "host ") {
		return 0, "", false
	}
	pid, err := strconv.Atoi(strings.TrimPrefix(f[0], "pid "))
	return pid, strings.TrimPrefix(f[1], "host "), err == nil
}

func alive(pid int) bool {
	err := syscall.Kill(pid, 0)
	return err == nil || errors.Is(err, syscall.EPERM)
}

// probeWait bounds how long Acquire waits for a lock whose file holds no
// holder text: a Probe (a shared lock held for an instant) or a holder
// between taking the lock and writing its line.
const probeWait = 3 * time.Second

// Acquire takes the lock of dir (which must exist), writing holder into
// it. It fails at once with a *HeldError when another process holds it.
func Acquire(dir, holder string) (*Lock, error) {
	path := filepath.Join(dir, FileName)
	deadline := time.Now().Add(probeWait)
	for {
		f, err := os.OpenFile(path, os.O_CREATE|os.O_RDWR, 0o644)
		readOnly := false
		if errors.Is(err, fs.ErrPermission) || errors.Is(err, syscall.EROFS) {
			// A directory this process cannot write: a lock on the file
			// opened for reading still excludes writers; without the
			// file there is none to take.
			f, err = os.Open(path)
			if errors.Is(err, fs.ErrNotExist) {
				return nil, fmt.Errorf("locking %s: %w", dir, ErrReadOnly)
			}
			readOnly = true
		}
		if err != nil {
			return nil, fmt.Errorf("locking %s: %w", dir, err)
		}
		err = syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB)
		if err == nil {
			// The file may have been removed (Release of a lock whose
			// directory was removed) between the open and the flock:
			// then this lock guards nothing; take the new file's.
			if same(f, path) {
				if !readOnly {
					f.Truncate(0)
					f.WriteAt([]byte(holder+"\n"), 0)
				}
				return &Lock{f: f, dir: dir, readOnly: readOnly}, nil
			}
			f.Close()
			continue
		}
		text, _ := os.ReadFile(path)
		f.Close()
		switch {
		case !errors.Is(err, syscall.EWOULDBLOCK):
			return nil, fmt.Errorf("locking %s: %w (the file system does not support locks; keep run directories on a local disk or an NFS mount with locking)", dir, err)
		case len(strings.TrimSpace(string(text))) > 0 || time.Now().After(deadline):
			return nil, &HeldError{Dir: dir, Holder: strings.TrimSpace(string(text))}
		}
		time.Sleep(50 * time.Millisecond)
	}
}

// same reports whether f is still the file at path.
func same(f *os.File, path string) bool {
	a, err := f.Stat()
	if err != nil {
		return false
	}
	b, err := os.Stat(path)
	return err == nil && os.SameFile(a, b)
}

// Release clears the holder line and releases the lock. A directory that
// holds nothing but the lock file (the command failed before writing
// anything) is tidied away: the file goes, and the directory too when
// Create made it. Otherwise the file stays (removing it could let a
// process that opened it lock a file no longer in the directory).
// Release of a nil Lock does nothing.
func (l *Lock) Release() {
	if l == nil || l.f == nil {
		return
	}
	empty := false
	if names, err := Entries(l.dir); err == nil && len(names) == 0 && !l.readOnly {
		empty = true
		os.Remove(filepath.Join(l.dir, FileName))
	}
	if !l.readOnly {
		l.f.Truncate(0)
	}
	syscall.Flock(int(l.f.Fd()), syscall.LOCK_UN)
	l.f.Close()
	l.f = nil
	if empty && l.created {
		os.Remove(l.dir)
	}
}

// Create locks dir for a command that fills it, making dir when absent.
// check may refuse the directory: it is called before the lock file is
// added to an existing directory without one (so that a directory that
// is not chord's is left untouched), and again once the lock is held
// (another process may have written there meanwhile).
func Create(dir, holder string, check func() error) (*Lock, error) {
	created := false
	if _, err := os.Stat(dir); errors.Is(err, fs.ErrNotExist) {
		if err := os.MkdirAll(dir, 0o755); err != nil {
			return nil, err
		}
		created = true
	} else if _, err := os.Stat(filepath.Join(dir, FileName)); err != nil {
		if err := check(); err != nil {
			return nil, err
		}
	}
	l, err := Acquire(dir, holder)
	if err != nil {
		if created {
			os.Remove(dir)
		}
		return nil, err
	}
	l.created = created
	if err := check(); err != nil {
		l.Release()
		return nil, err
	}
	return l, nil
}

// Entries lists the names in dir other than its lock file; a missing
// directory has none.
func Entries(dir string) ([]string, error) {
	ents, err := os.ReadDir(dir)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	var names []string
	for _, e := range ents {
		if e.Name() != FileName {
			names = append(names, e.Name())
		}
	}
	return names, nil
}

// Probe reports whether a process holds the lock of dir, and what it wrote.
func Probe(dir string) (holder string, held bool) {
	path := filepath.Join(dir, FileName)
	f, err := os.Open(path)
	if err != nil {
		return "", false
	}
	defer f.Close()
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_SH|syscall.LOCK_NB); err != nil {
		text, _ := os.ReadFile(path)
		return strings.TrimSpace(string(text)), errors.Is(err, syscall.EWOULDBLOCK)
	}
	syscall.Flock(int(f.Fd()), syscall.LOCK_UN)
	return "", false
}
