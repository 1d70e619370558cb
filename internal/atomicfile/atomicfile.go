// Package atomicfile writes files so that a crash at any instant leaves
// either the old file or the complete new one: the data go to a temporary
// file in the same directory, which is synced and renamed into place, and
// the directory is synced.
package atomicfile

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
)

// FS is what the atomic writers, the chain store and the checkpoint need
// from the operating system; tests substitute one that fails (a full
// disk).
type FS interface {
	Create(name string) (File, error)
	Rename(oldName, newName string) error
	Remove(name string) error
	SyncDir(dir string) error
}

// File is a file open for writing.
type File interface {
	io.Writer
	Sync() error
	Close() error
}

// OS is the operating system's file system.
var OS FS = osFS{}

type osFS struct{}

func (osFS) Create(name string) (File, error) {
	return os.OpenFile(name, os.O_WRONLY|os.O_CREATE|os.O_TRUNC, 0o644)
}
func (osFS) Rename(o, n string) error { return os.Rename(o, n) }
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

// Write writes data to path through a temporary file that is synced and
// renamed, then syncs the directory.
func Write(fsys FS, path string, data []byte) error {
	tmp := path + ".tmp"
	f, err := fsys.Create(tmp)
	if err != nil {
		return err
	}
	_, err = f.Write(data)
	if err == nil {
		err = f.Sync()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = fsys.Rename(tmp, path)
	}
	if err != nil {
		fsys.Remove(tmp)
		return err
	}
	return fsys.SyncDir(filepath.Dir(path))
}

// WriteNew writes data to path atomically; an existing path is an error
// unless overwrite.
func WriteNew(path string, data []byte, overwrite bool) error {
	if !overwrite {
		if _, err := os.Stat(path); err == nil {
			return fmt.Errorf("%s exists (use --force to replace it)", path)
		}
	}
	if err := Write(OS, path, data); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	return nil
}
