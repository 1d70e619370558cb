package retrieve

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"

	"chord/config"
	"chord/internal/atomicfile"
)

// InputsDir is the directory of a run that holds copies of its
// observation files. run.toml names them relative to the run directory,
// so a run copied elsewhere (from a cluster to a laptop) is reported and
// resumed from its own copies; their digests, recorded in run.toml's
// [run] inputs, are checked as those of any input. The opacity tables,
// too large to copy, keep their absolute paths (and relocate).
const InputsDir = "inputs"

// inputCopies are the observation files of a new run, read into memory
// (so that --force may clear the run directory even when they lie in it).
type inputCopies struct {
	names []string // per observation table: the copy's path relative to the run directory
	data  [][]byte
}

// copyInputs reads the observation files of r and names their copies;
// inputs are the run's inputs, whose observation entries are pointed at
// the copies. The contents read must be those digested.
func copyInputs(r *config.Resolved, inputs []InputFile) (*inputCopies, error) {
	c := &inputCopies{}
	used := map[string]bool{}
	for i, o := range r.Config.Observations {
		b, err := os.ReadFile(o.File)
		if err != nil {
			return nil, fmt.Errorf("input file: %w", err)
		}
		name := filepath.Base(o.File)
		if used[name] {
			name = strconv.Itoa(i+1) + "-" + name
		}
		used[name] = true
		rel := filepath.Join(InputsDir, name)
		sum := sha256.Sum256(b)
		h := hex.EncodeToString(sum[:])
		found := false
		for k := range inputs {
			if inputs[k].Role == "observations" && inputs[k].Path == o.File {
				if inputs[k].SHA256 != h {
					return nil, fmt.Errorf("input file %s changed while the run was being set up; start again", o.File)
				}
				inputs[k].Path, found = rel, true
			}
		}
		if !found {
			return nil, fmt.Errorf("input file %s: not among the run's inputs", o.File)
		}
		c.names = append(c.names, rel)
		c.data = append(c.data, b)
	}
	return c, nil
}

// writeTOML writes r as run.toml's configuration, its observation files
// named by their copies.
func (c *inputCopies) writeTOML(r *config.Resolved, w io.Writer) error {
	cp := *r
	cp.Config.Observations = append([]config.ObservationConfig(nil), r.Config.Observations...)
	for i := range cp.Config.Observations {
		cp.Config.Observations[i].File = filepath.ToSlash(c.names[i])
	}
	var buf bytes.Buffer
	if err := cp.WriteTOML(&buf); err != nil {
		return err
	}
	_, err := w.Write(buf.Bytes())
	return err
}

// write writes the copies into the run directory dir.
func (c *inputCopies) write(dir string) error {
	if len(c.names) == 0 {
		return nil
	}
	if err := os.MkdirAll(filepath.Join(dir, InputsDir), 0o755); err != nil {
		return err
	}
	for i, n := range c.names {
		if err := atomicfile.Write(filepath.Join(dir, n), c.data[i], true); err != nil {
			return err
		}
	}
	return nil
}
