package runlock

import (
	"bufio"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"
)

// A second lock on a held directory fails at once with the holder's line;
// after Release it is free again. flock locks belong to open files, so
// two locks in one process exclude each other as two processes do.
func TestAcquireHeld(t *testing.T) {
	dir := t.TempDir()
	a, err := Acquire(dir, Holder("chord fit"))
	if err != nil {
		t.Fatal(err)
	}
	t0 := time.Now()
	_, err = Acquire(dir, Holder("chord resume"))
	var he *HeldError
	if !errors.As(err, &he) || !strings.Contains(err.Error(), fmt.Sprintf("another chord process (pid %d, host ", os.Getpid())) || !strings.Contains(err.Error(), "chord fit)") {
		t.Fatalf("second lock: %v", err)
	}
	if d := time.Since(t0); d > time.Second {
		t.Errorf("the second lock took %v to fail", d)
	}
	if holder, held := Probe(dir); !held || !strings.Contains(holder, "chord fit") {
		t.Errorf("probe: %q %v", holder, held)
	}
	a.Release()
	if _, held := Probe(dir); held {
		t.Error("probe after release: held")
	}
	b, err := Acquire(dir, Holder("chord resume"))
	if err != nil {
		t.Fatalf("lock after release: %v", err)
	}
	b.Release()
}

// A lock whose holder was killed (SIGKILL: no chance to release it) is
// free at once: the kernel drops an flock with its last open file.
func TestKilledHolder(t *testing.T) {
	dir := t.TempDir()
	cmd := exec.Command(os.Args[0], "-test.run=^TestHolderChild$")
	cmd.Env = append(os.Environ(), "CHORD_LOCK_CHILD="+dir)
	out, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	defer cmd.Process.Kill()
	line, _ := bufio.NewReader(out).ReadString('\n')
	if !strings.HasPrefix(line, "locked") {
		t.Fatalf("child: %q", line)
	}
	_, err = Acquire(dir, Holder("test"))
	if err == nil || !strings.Contains(err.Error(), fmt.Sprintf("pid %d,", cmd.Process.Pid)) {
		t.Fatalf("lock held by the child: %v", err)
	}
	cmd.Process.Signal(syscall.SIGKILL)
	cmd.Wait()
	l, err := Acquire(dir, Holder("test"))
	if err != nil {
		t.Fatalf("lock after the holder was killed: %v", err)
	}
	l.Release()
}

// TestHolderChild is the child of TestKilledHolder: it locks the directory
// and waits to be killed.
func TestHolderChild(t *testing.T) {
	dir := os.Getenv("CHORD_LOCK_CHILD")
	if dir == "" {
		t.Skip("child of TestKilledHolder")
	}
	if _, err := Acquire(dir, Holder("child")); err != nil {
		t.Fatal(err)
	}
	fmt.Println("locked")
	time.Sleep(time.Minute)
}

// Create leaves a directory it refuses untouched (no lock file), and a
// directory it made and that stayed empty is removed on Release.
func TestCreate(t *testing.T) {
	foreign := t.TempDir()
	os.WriteFile(filepath.Join(foreign, "mine.txt"), []byte("x"), 0o644)
	refuse := errors.New("not ours")
	if _, err := Create(foreign, "test", func() error { return refuse }); !errors.Is(err, refuse) {
		t.Fatalf("refused directory: %v", err)
	}
	if _, err := os.Stat(filepath.Join(foreign, FileName)); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("a refused directory got a lock file: %v", err)
	}
	fresh := filepath.Join(t.TempDir(), "new")
	l, err := Create(fresh, "test", func() error { return nil })
	if err != nil {
		t.Fatal(err)
	}
	l.Release()
	if _, err := os.Stat(fresh); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("an empty directory made by Create stays after Release: %v", err)
	}
	l, err = Create(fresh, "test", func() error { return nil })
	if err != nil {
		t.Fatal(err)
	}
	os.WriteFile(filepath.Join(fresh, "run.toml"), nil, 0o644)
	l.Release()
	if names, err := Entries(fresh); err != nil || len(names) != 1 {
		t.Errorf("after writing: %v %v", names, err)
	}
	if _, err := os.Stat(filepath.Join(fresh, FileName)); err != nil {
		t.Errorf("the lock file of a directory in use went: %v", err)
	}
}
