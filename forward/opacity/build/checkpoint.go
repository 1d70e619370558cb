package build

import (
	"bufio"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"hash/crc32"
	"io"
	"math"
	"os"

	"chord/forward/opacity/lbl"
)

// FileCheckpoint keeps the finished windows of a k-table build in a file,
// so that a stopped build resumes (lbl.Checkpoint). The file is a header
// line "chord k-table checkpoint <fingerprint>\n" followed by one record
// per finished window: b0, b1 and the number of values as uint32
// little-endian, the values as float32 little-endian, and the CRC-32
// (IEEE) of all that. Each record is synced before the build goes on. On
// opening, the records of a file with the same fingerprint are read up to
// the first incomplete or damaged one (a build killed while writing loses
// that window only); a file of other settings or sources is started anew.
type FileCheckpoint struct {
	path    string
	f       *os.File
	windows map[[2]int][]float32
	// Resumed is the number of windows read back.
	Resumed int
}

const checkpointMagic = "chord k-table checkpoint "

// Fingerprint returns the fingerprint of a k-table build: the SHA-256 of
// its settings (grid, bins, quadrature, fine grid, line settings, window
// size) and its sources (s.Sources, with the input files' checksums).
func Fingerprint(s *lbl.KSettings) string {
	v := struct {
		Gas               string
		Log10P, T, Lo, Hi []float64
		G, W              []float64
		Resolution        float64
		Lines             lbl.LineSettings
		WindowLines       int
		Sources           string
	}{s.Gas, s.Log10P, s.T, s.Lo, s.Hi, s.Quadrature.G, s.Quadrature.W, s.Resolution, s.Lines, s.WindowLines, s.Sources}
	b, err := json.Marshal(v)
	if err != nil {
		panic(err) // plain values
	}
	h := sha256.Sum256(b)
	return hex.EncodeToString(h[:])
}

// OpenCheckpoint opens (or creates) the checkpoint file at path for a build
// of the given fingerprint.
func OpenCheckpoint(path, fingerprint string) (*FileCheckpoint, error) {
	c := &FileCheckpoint{path: path, windows: map[[2]int][]float32{}}
	header := checkpointMagic + fingerprint + "\n"
	if f, err := os.Open(path); err == nil {
		ok, good := c.read(bufio.NewReader(f), header)
		f.Close()
		if ok {
			// Cut a damaged tail, then append.
			if err := os.Truncate(path, good); err != nil {
				return nil, fmt.Errorf("opacity: checkpoint %s: %w", path, err)
			}
			c.f, err = os.OpenFile(path, os.O_WRONLY|os.O_APPEND, 0o644)
			if err != nil {
				return nil, fmt.Errorf("opacity: checkpoint %s: %w", path, err)
			}
			c.Resumed = len(c.windows)
			return c, nil
		}
		c.windows = map[[2]int][]float32{}
	}
	f, err := os.OpenFile(path, os.O_CREATE|os.O_TRUNC|os.O_WRONLY, 0o644)
	if err != nil {
		return nil, fmt.Errorf("opacity: checkpoint: %w", err)
	}
	if _, err := f.WriteString(header); err != nil {
		f.Close()
		return nil, fmt.Errorf("opacity: checkpoint %s: %w", path, err)
	}
	if err := f.Sync(); err != nil {
		f.Close()
		return nil, fmt.Errorf("opacity: checkpoint %s: %w", path, err)
	}
	c.f = f
	return c, nil
}

// read reads the records of a checkpoint; ok is false when the header is
// not the one wanted. good is the length of the intact part.
func (c *FileCheckpoint) read(r *bufio.Reader, header string) (ok bool, good int64) {
	h := make([]byte, len(header))
	if _, err := io.ReadFull(r, h); err != nil || string(h) != header {
		return false, 0
	}
	good = int64(len(header))
	for {
		var hd [12]byte
		if _, err := io.ReadFull(r, hd[:]); err != nil {
			return true, good
		}
		b0, b1, n := binary.LittleEndian.Uint32(hd[0:]), binary.LittleEndian.Uint32(hd[4:]), binary.LittleEndian.Uint32(hd[8:])
		if n > 1<<28 || b1 <= b0 {
			return true, good
		}
		body := make([]byte, 4*int(n)+4)
		if _, err := io.ReadFull(r, body); err != nil {
			return true, good
		}
		crc := crc32.NewIEEE()
		crc.Write(hd[:])
		crc.Write(body[:4*n])
		if crc.Sum32() != binary.LittleEndian.Uint32(body[4*n:]) {
			return true, good
		}
		k := make([]float32, n)
		for i := range k {
			k[i] = math.Float32frombits(binary.LittleEndian.Uint32(body[4*i:]))
		}
		c.windows[[2]int{int(b0), int(b1)}] = k
		good += int64(len(hd) + len(body))
	}
}

// Load implements lbl.Checkpoint.
func (c *FileCheckpoint) Load(b0, b1 int) ([]float32, bool) {
	k, ok := c.windows[[2]int{b0, b1}]
	return k, ok
}

// Save implements lbl.Checkpoint: the record is appended and synced.
func (c *FileCheckpoint) Save(b0, b1 int, k []float32) error {
	if c.f == nil {
		return errors.New("checkpoint closed")
	}
	buf := make([]byte, 12+4*len(k)+4)
	binary.LittleEndian.PutUint32(buf[0:], uint32(b0))
	binary.LittleEndian.PutUint32(buf[4:], uint32(b1))
	binary.LittleEndian.PutUint32(buf[8:], uint32(len(k)))
	for i, v := range k {
		binary.LittleEndian.PutUint32(buf[12+4*i:], math.Float32bits(v))
	}
	binary.LittleEndian.PutUint32(buf[12+4*len(k):], crc32.ChecksumIEEE(buf[:12+4*len(k)]))
	if _, err := c.f.Write(buf); err != nil {
		return err
	}
	return c.f.Sync()
}

// Close closes the file, keeping it for a resume.
func (c *FileCheckpoint) Close() error {
	if c.f == nil {
		return nil
	}
	err := c.f.Close()
	c.f = nil
	return err
}

// Remove closes and deletes the file, once the table is written.
func (c *FileCheckpoint) Remove() error {
	c.Close()
	return os.Remove(c.path)
}
