package retrieve

import (
	"errors"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"syscall"
	"testing"

	"chord/chains"
	"chord/config"
	"chord/internal/atomicfile"
	"chord/internal/testenv"
	"chord/internal/version"
)

func testCheckpoint() *Checkpoint {
	return &Checkpoint{
		CheckpointHeader: CheckpointHeader{
			Version: version.Version, RunID: "r1", ConfigSHA256: "abc", Seed: 7, Walkers: 4, Dim: 3,
			Step: 10, PrevStep: 6, Elapsed: 1.5, Evaluations: 40,
			Parts: []chains.PartInfo{{Name: "part-000001.parquet", FirstStep: 1, LastStep: 6, Rows: 24, Size: 99, SHA256: "00"}},
			Stop:  config.StopRule{Steps: 100},
		},
		State: []byte("state after 10"),
		Prev:  []byte("state after 6"),
	}
}

func TestCheckpointRoundTrip(t *testing.T) {
	path := filepath.Join(t.TempDir(), "checkpoint")
	c := testCheckpoint()
	if err := WriteCheckpoint(path, c); err != nil {
		t.Fatal(err)
	}
	got, err := ReadCheckpoint(path)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got, c) {
		t.Errorf("read %+v, wrote %+v", got, c)
	}
	if left, _ := filepath.Glob(filepath.Join(filepath.Dir(path), atomicfile.TempPattern(path))); len(left) > 0 {
		t.Errorf("temporary file left: %v", left)
	}
}

// Every truncation and every single-bit flip of a checkpoint is detected
// (SHA-256 over the whole body; a flip anywhere changes the digest or the
// stored digest: fact of the trade for cryptographic hashes).
func TestCheckpointCorruptIsError(t *testing.T) {
	data, err := testCheckpoint().MarshalBinary()
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(1, 2))
	for n := 0; n < len(data); n++ {
		var c Checkpoint
		if err := c.UnmarshalBinary(data[:n]); !errors.Is(err, ErrCheckpointDamaged) {
			t.Fatalf("truncated to %d bytes: error %v", n, err)
		}
	}
	for i := 0; i < 200; i++ {
		d := append([]byte(nil), data...)
		d[rng.IntN(len(d))] ^= 1 << rng.IntN(8)
		var c Checkpoint
		if err := c.UnmarshalBinary(d); !errors.Is(err, ErrCheckpointDamaged) {
			t.Fatalf("bit flip %d: error %v", i, err)
		}
	}
	path := filepath.Join(t.TempDir(), "checkpoint")
	os.WriteFile(path, data[:len(data)-3], 0o644)
	_, err = ReadCheckpoint(path)
	if err == nil || !strings.Contains(err.Error(), path) || !strings.Contains(err.Error(), "no silent restart") {
		t.Errorf("damaged file: %v", err)
	}
	_, err = ReadCheckpoint(filepath.Join(t.TempDir(), "checkpoint"))
	if err == nil || !strings.Contains(err.Error(), "does not exist") {
		t.Errorf("missing file: %v", err)
	}
}

// A checkpoint write that fails (full disk) leaves the previous checkpoint
// in place and says so.
func TestCheckpointFullDisk(t *testing.T) {
	path := filepath.Join(t.TempDir(), "checkpoint")
	old := testCheckpoint()
	if err := WriteCheckpoint(path, old); err != nil {
		t.Fatal(err)
	}
	c := testCheckpoint()
	c.Step = 20
	err := writeCheckpoint(&testenv.FullDisk{Limit: 10}, path, c)
	if !errors.Is(err, syscall.ENOSPC) || !strings.Contains(err.Error(), path) {
		t.Fatalf("error %v", err)
	}
	got, err := ReadCheckpoint(path)
	if err != nil || got.Step != 10 {
		t.Fatalf("previous checkpoint lost: %v %v", got, err)
	}
	if left, _ := filepath.Glob(filepath.Join(filepath.Dir(path), atomicfile.TempPattern(path))); len(left) > 0 {
		t.Errorf("temporary file left: %v", left)
	}
}

// FuzzCheckpoint: any bytes decode to a checkpoint or an error, never a
// panic; what decodes re-encodes to a checkpoint that decodes.
func FuzzCheckpoint(f *testing.F) {
	good, _ := testCheckpoint().MarshalBinary()
	f.Add(good)
	f.Add(good[:40])
	f.Add([]byte("CHORDCKP"))
	f.Fuzz(func(t *testing.T, data []byte) {
		var c Checkpoint
		if err := c.UnmarshalBinary(data); err != nil {
			return
		}
		again, err := c.MarshalBinary()
		if err != nil {
			t.Fatal(err)
		}
		var d Checkpoint
		if err := d.UnmarshalBinary(again); err != nil {
			t.Fatalf("re-encoded checkpoint does not decode: %v", err)
		}
	})
}
