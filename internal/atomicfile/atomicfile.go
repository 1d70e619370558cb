// Package atomicfile writes files so that a crash at any instant leaves
// either the old file or the complete new one, and so that a file that
// must not be replaced never is, even when another process creates it at
// the same moment.
package atomicfile

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
)

// FS is what the atomic writer, the chain store and the checkpoint need
// from the operating system; tests substitute one that fails (a full
// disk).
type FS interface {
	// Create creates or truncates the file name.
	Create(name string) (File, error)
	// CreateTemp creates a new file in dir with a name made from pattern
	// as os.CreateTemp does, readable by all (mode 0644).
	CreateTemp(dir, pattern string) (File, error)
	Rename(oldName, newName string) error
	Link(oldName, newName string) error
	Remove(name string) error
	SyncDir(dir string) error
}

// File is a file open for writing.
type File interface {
	io.Writer
	Name() string
	Sync() error
	Close() error
}

// OS is the operating system's file system.
var OS FS = osFS{}

type osFS struct{}

func (osFS) Create(name string) (File, error) {
	return os.OpenFile(name, os.O_WRONLY|os.O_CREATE|os.O_TRUNC, 0o644)
}
func (osFS) CreateTemp(dir, pattern string) (File, error) {
	f, err := os.CreateTemp(dir, pattern)
	if err != nil {
		return nil, err
	}
	if err := f.Chmod(0o644); err != nil {
		f.Close()
		os.Remove(f.Name())
		return nil, err
	}
	return f, nil
}
func (osFS) Rename(o, n string) error { return os.Rename(o, n) }
func (osFS) Link(o, n string) error   { return os.Link(o, n) }
func (osFS) Remove(name string) error { return os.Remove(name) }
func (osFS) SyncDir(dir string) error {
	d, err := os.Open(dir)
	if err != nil {
		return err
	}
	err = d.Sync()
	if cerr := d.Close(); err == nil {
		err = cerr
	}
	return err
}

// TempPattern is the pattern of the temporary files of Write
// (os.CreateTemp's form): path's base name between "." and ".tmp-".
func TempPattern(path string) string { return "." + filepath.Base(path) + ".tmp-*" }

// Write writes data to path on the operating system's file system; see
// WriteFS.
func Write(path string, data []byte, replace bool) error {
	return WriteFS(OS, path, data, replace)
}

// WriteFS writes data to path; see WriteFrom.
func WriteFS(fsys FS, path string, data []byte, replace bool) error {
	return WriteFrom(fsys, path, replace, func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	})
}

// WriteFrom writes what write writes to path through a temporary file in
// the same directory (TempPattern), which is synced and then moved into
// place: renamed over path when replace is set; otherwise hard-linked,
// which fails when path exists, so that a file that appeared since the
// check is never lost (on file systems without hard links: checked again,
// then renamed). The directory is then synced. A crash leaves the old file
// or the complete new one, and at most a stray temporary file; so does an
// error from write, which removes the temporary file. When replace is
// false and path exists, the error wraps fs.ErrExist.
func WriteFrom(fsys FS, path string, replace bool, write func(w io.Writer) error) error {
	exists := fmt.Errorf("%s exists; not replaced: %w", path, fs.ErrExist)
	if !replace {
		if _, err := os.Lstat(path); err == nil {
			return exists
		}
	}
	dir := filepath.Dir(path)
	f, err := fsys.CreateTemp(dir, TempPattern(path))
	if err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	tmp := f.Name()
	err = write(f)
	if err == nil {
		err = f.Sync()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = place(fsys, tmp, path, replace, exists)
	}
	if err != nil {
		fsys.Remove(tmp)
		if errors.Is(err, fs.ErrExist) && !replace {
			return exists
		}
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err := fsys.SyncDir(dir); err != nil {
		return fmt.Errorf("writing %s: syncing the directory: %w", path, err)
	}
	return nil
}

// place moves the written temporary file tmp to path.
func place(fsys FS, tmp, path string, replace bool, exists error) error {
	if replace {
		return fsys.Rename(tmp, path)
	}
	err := fsys.Link(tmp, path)
	switch {
	case err == nil:
		return fsys.Remove(tmp)
	case errors.Is(err, fs.ErrExist):
		return exists
	}
	// No hard links on this file system: check again and rename.
	if _, serr := os.Lstat(path); serr == nil {
		return exists
	}
	return fsys.Rename(tmp, path)
}
