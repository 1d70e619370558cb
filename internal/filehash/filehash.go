// Package filehash computes the SHA-256 digests chord records for its
// inputs and outputs (run inputs, chain parts, scenario copies), as
// lower-case hex.
package filehash

import (
	"crypto/sha256"
	"encoding/hex"
	"hash"
	"io"
	"os"
)

// File returns the SHA-256 of the file at path and its size in bytes.
func File(path string) (sum string, size int64, err error) {
	f, err := os.Open(path)
	if err != nil {
		return "", 0, err
	}
	defer f.Close()
	h := sha256.New()
	n, err := io.Copy(h, f)
	if err != nil {
		return "", n, err
	}
	return hex.EncodeToString(h.Sum(nil)), n, nil
}

// Bytes returns the SHA-256 of b.
func Bytes(b []byte) string {
	s := sha256.Sum256(b)
	return hex.EncodeToString(s[:])
}

// Writer passes what is written to it on to another writer, counting and
// hashing it on the way.
type Writer struct {
	w    io.Writer
	h    hash.Hash
	size int64
}

// NewWriter returns a Writer in front of w.
func NewWriter(w io.Writer) *Writer { return &Writer{w: w, h: sha256.New()} }

// Write writes p to the underlying writer; what it accepted is hashed.
func (hw *Writer) Write(p []byte) (int, error) {
	n, err := hw.w.Write(p)
	hw.h.Write(p[:n])
	hw.size += int64(n)
	return n, err
}

// Size returns the number of bytes written so far.
func (hw *Writer) Size() int64 { return hw.size }

// Sum returns the SHA-256 of the bytes written so far.
func (hw *Writer) Sum() string { return hex.EncodeToString(hw.h.Sum(nil)) }

// Short returns the first 12 hex digits of a digest, for messages.
func Short(sum string) string {
	if len(sum) > 12 {
		return sum[:12]
	}
	return sum
}
