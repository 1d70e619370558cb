package testenv

import (
	"os"
	"syscall"

	"chord/internal/atomicfile"
)

// FullDisk is a file system (atomicfile.FS) whose files fail with ENOSPC
// once Limit bytes have been written to them in total, for tests of what a
// full disk does to chord's files.
type FullDisk struct {
	Limit int64
}

type fullFile struct {
	*os.File
	d *FullDisk
}

// Create creates the file name whose writes count against Limit.
func (d *FullDisk) Create(name string) (atomicfile.File, error) {
	return d.wrap(atomicfile.OS.Create(name))
}

// CreateTemp creates a temporary file whose writes count against Limit.
func (d *FullDisk) CreateTemp(dir, pattern string) (atomicfile.File, error) {
	return d.wrap(atomicfile.OS.CreateTemp(dir, pattern))
}

func (d *FullDisk) wrap(f atomicfile.File, err error) (atomicfile.File, error) {
	if err != nil {
		return nil, err
	}
	return fullFile{f.(*os.File), d}, nil
}

func (f fullFile) Write(p []byte) (int, error) {
	if int64(len(p)) > f.d.Limit {
		n := int(f.d.Limit)
		f.File.Write(p[:n])
		f.d.Limit = 0
		return n, &os.PathError{Op: "write", Path: f.Name(), Err: syscall.ENOSPC}
	}
	f.d.Limit -= int64(len(p))
	return f.File.Write(p)
}

// Rename renames as the operating system does.
func (d *FullDisk) Rename(oldName, newName string) error {
	return atomicfile.OS.Rename(oldName, newName)
}

// Link links as the operating system does.
func (d *FullDisk) Link(oldName, newName string) error { return atomicfile.OS.Link(oldName, newName) }

// Remove removes as the operating system does.
func (d *FullDisk) Remove(name string) error { return atomicfile.OS.Remove(name) }

// SyncDir syncs as the operating system does.
func (d *FullDisk) SyncDir(dir string) error { return atomicfile.OS.SyncDir(dir) }
