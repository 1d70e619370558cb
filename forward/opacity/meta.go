package opacity

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
)

// Provenance keys of a table's Meta, set by whoever builds the table and
// kept by the table files (package tablefile adds its own structural keys).
const (
	MetaProgramVersion = "program_version" // required: version of the program that built the table
	MetaDemo           = "demo"            // "true" for demo tables; the writer stores "false" when absent
	MetaDemoNote       = "demo_note"       // set by the writer to DemoNote for demo tables
	MetaSources        = "sources"         // JSON list of TableSource (file names and SHA-256), see SourcesMeta
	MetaBuildSettings  = "build_settings"  // free text (JSON recommended): grid, cut-offs, thresholds, ...
)

// DemoNote labels demo tables everywhere they appear.
const DemoNote = "demo, not for science"

// IsDemo reports whether a table's metadata marks it as a demo table.
func IsDemo(meta map[string]string) bool { return meta[MetaDemo] == "true" }

// TableSource is one input file of a table as recorded in its MetaSources
// value, for provenance.
type TableSource struct {
	File   string `json:"file"`   // base name
	SHA256 string `json:"sha256"` // hex
	Bytes  int64  `json:"bytes"`
}

// SourcesMeta hashes the files and returns the value of MetaSources for a
// table built from them: a JSON list of TableSource.
func SourcesMeta(paths ...string) (string, error) {
	src := make([]TableSource, 0, len(paths))
	for _, p := range paths {
		s, err := hashFile(p)
		if err != nil {
			return "", err
		}
		src = append(src, s)
	}
	b, err := json.Marshal(src)
	if err != nil {
		return "", err
	}
	return string(b), nil
}

// ParseSources decodes a MetaSources value; an empty value gives no sources.
func ParseSources(v string) ([]TableSource, error) {
	if v == "" {
		return nil, nil
	}
	var src []TableSource
	if err := json.Unmarshal([]byte(v), &src); err != nil {
		return nil, fmt.Errorf("opacity: metadata key %q: %w", MetaSources, err)
	}
	return src, nil
}

func hashFile(path string) (TableSource, error) {
	f, err := os.Open(path)
	if err != nil {
		return TableSource{}, fmt.Errorf("opacity: source file: %w", err)
	}
	defer f.Close()
	h := sha256.New()
	n, err := io.Copy(h, f)
	if err != nil {
		return TableSource{}, fmt.Errorf("opacity: source file %s: %w", path, err)
	}
	return TableSource{File: filepath.Base(path), SHA256: hex.EncodeToString(h.Sum(nil)), Bytes: n}, nil
}
