package config

import (
	"bytes"
	"fmt"

	"github.com/BurntSushi/toml"

	"chord/internal/atomicfile"
)

// Write writes c as a TOML retrieval configuration that chord fit -c
// accepts, after a comment header.
func Write(path string, c *Config, header []string, overwrite bool) error {
	var b bytes.Buffer
	for _, h := range header {
		b.WriteString("# " + h + "\n")
	}
	if err := toml.NewEncoder(&b).Encode(c); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	return atomicfile.Write(path, b.Bytes(), overwrite)
}
