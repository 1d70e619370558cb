package retrieve

import (
	"bytes"
	"crypto/sha256"
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"os"

	"chord/chains"
	"chord/config"
	"chord/internal/atomicfile"
	"chord/internal/version"
)

// Checkpoint file.
//
// RUNDIR/checkpoint is written to a temporary file, synced, renamed and
// the directory synced (atomicfile), so it is always either the previous
// or the new checkpoint. Layout (integers little-endian):
//
//	8 bytes   magic "CHORDCKP"
//	uint32    format version (checkpointFormat)
//	uint32    n, then n bytes: the header, JSON (CheckpointHeader)
//	uint32    n, then n bytes: the sampler state after header.Step (sampler.State.MarshalBinary)
//	uint32    n, then n bytes: the sampler state after header.PrevStep, or n = 0
//	32 bytes  SHA-256 of everything before it
//
// The previous state is the state at the start of the newest committed part,
// so that a run whose newest part file was damaged after the checkpoint was
// written (a truncated copy, a failing disk) resumes from one part earlier
// instead of failing.

const (
	checkpointMagic  = "CHORDCKP"
	checkpointFormat = 1
)

// CheckpointHeader is the part of a checkpoint chord itself reads.
type CheckpointHeader struct {
	Version      string            `json:"version"`       // program version that wrote it
	RunID        string            `json:"run_id"`        // random identity of the run, also in every part
	ConfigSHA256 string            `json:"config_sha256"` // digest of the resolved configuration and input files
	Seed         uint64            `json:"seed"`
	Walkers      int               `json:"walkers"`
	Dim          int               `json:"dim"`
	Step         int               `json:"step"`      // steps done; the state is after this step
	PrevStep     int               `json:"prev_step"` // step of the previous state (start of the newest part)
	Parts        []chains.PartInfo `json:"parts"`     // committed parts, steps 1 ... Step
	Elapsed      float64           `json:"elapsed"`   // seconds spent sampling so far, for budgets
	Evaluations  int64             `json:"evaluations"`
	// Stop is the run's stopping rule as set at the start or last resume.
	Stop config.StopRule `json:"stop"`
	// Stopped is set by the session that met Stop: the sampler's reason
	// ("converged", "step count reached", "wall-clock budget spent"); ""
	// while the run is under way or after an interruption. A resume with
	// the same rule does nothing when it is set.
	Stopped string `json:"stopped,omitempty"`
	// CheckpointSteps is the interval between checkpoints the run uses, in
	// steps; a resume keeps it unless told otherwise.
	CheckpointSteps int `json:"checkpoint_steps,omitempty"`
	// Method is "nested" for a nested-sampling run ("" for the
	// ensemble): Step and PrevStep then count dead points, LivePoints is
	// the number of live points (Walkers is 0), and the states are
	// sampler.NestedState encodings.
	Method     string `json:"method,omitempty"`
	LivePoints int    `json:"live_points,omitempty"`
}

// Checkpoint is a decoded checkpoint file.
type Checkpoint struct {
	CheckpointHeader
	State []byte // sampler state after Step
	Prev  []byte // sampler state after PrevStep; nil when not kept
}

// ErrCheckpointDamaged is wrapped by errors for checkpoint files that are
// truncated, not checkpoints, or fail their checksum.
var ErrCheckpointDamaged = errors.New("checkpoint is damaged")

// MarshalBinary encodes the checkpoint with its checksum.
func (c *Checkpoint) MarshalBinary() ([]byte, error) {
	hdr, err := json.Marshal(&c.CheckpointHeader)
	if err != nil {
		return nil, err
	}
	var b bytes.Buffer
	b.WriteString(checkpointMagic)
	binary.Write(&b, binary.LittleEndian, uint32(checkpointFormat))
	for _, part := range [][]byte{hdr, c.State, c.Prev} {
		binary.Write(&b, binary.LittleEndian, uint32(len(part)))
		b.Write(part)
	}
	sum := sha256.Sum256(b.Bytes())
	b.Write(sum[:])
	return b.Bytes(), nil
}

// UnmarshalBinary decodes a checkpoint, checking its checksum; errors wrap
// ErrCheckpointDamaged.
func (c *Checkpoint) UnmarshalBinary(data []byte) error {
	damaged := func(why string) error { return fmt.Errorf("%w (%s)", ErrCheckpointDamaged, why) }
	if len(data) < len(checkpointMagic)+4+12+sha256.Size || string(data[:8]) != checkpointMagic {
		return damaged(fmt.Sprintf("%d bytes, not a chord checkpoint", len(data)))
	}
	body, sum := data[:len(data)-sha256.Size], data[len(data)-sha256.Size:]
	if got := sha256.Sum256(body); !bytes.Equal(got[:], sum) {
		return damaged("checksum mismatch")
	}
	if f := binary.LittleEndian.Uint32(body[8:]); f != checkpointFormat {
		return fmt.Errorf("checkpoint format %d, this chord (%s) reads format %d", f, version.Version, checkpointFormat)
	}
	rest := body[12:]
	var parts [3][]byte
	for i := range parts {
		if len(rest) < 4 {
			return damaged("truncated")
		}
		n := binary.LittleEndian.Uint32(rest)
		rest = rest[4:]
		if uint64(n) > uint64(len(rest)) {
			return damaged("truncated")
		}
		parts[i], rest = rest[:n:n], rest[n:]
	}
	if len(rest) != 0 {
		return damaged("trailing bytes")
	}
	var h CheckpointHeader
	if err := json.Unmarshal(parts[0], &h); err != nil {
		return damaged("header: " + err.Error())
	}
	c.CheckpointHeader = h
	c.State = append([]byte(nil), parts[1]...)
	c.Prev = nil
	if len(parts[2]) > 0 {
		c.Prev = append([]byte(nil), parts[2]...)
	}
	return nil
}

// WriteCheckpoint writes c to path atomically (temporary file, fsync,
// rename, directory fsync).
func WriteCheckpoint(path string, c *Checkpoint) error {
	return writeCheckpoint(atomicfile.OS, path, c)
}

func writeCheckpoint(fsys atomicfile.FS, path string, c *Checkpoint) error {
	data, err := c.MarshalBinary()
	if err != nil {
		return fmt.Errorf("checkpoint %s: %w", path, err)
	}
	if err := atomicfile.WriteFS(fsys, path, data, true); err != nil {
		return fmt.Errorf("checkpoint: %w", err)
	}
	return nil
}

// ReadCheckpoint reads and checks the checkpoint at path.
func ReadCheckpoint(path string) (*Checkpoint, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return nil, fmt.Errorf("checkpoint %s does not exist: the run stopped before its first checkpoint, or this is not a run directory", path)
		}
		return nil, fmt.Errorf("checkpoint: %w", err)
	}
	c := new(Checkpoint)
	if err := c.UnmarshalBinary(data); err != nil {
		return nil, fmt.Errorf("checkpoint %s: %w; it is not used (no silent restart): restore it from a copy, or start the run again", path, err)
	}
	return c, nil
}
