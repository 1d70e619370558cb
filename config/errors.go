package config

import (
	"errors"
	"fmt"
	"strings"
)

// KeyError is an error in a configuration (or in a file of the same TOML
// schema: a scenario, run.toml, a grid or plan file): the file, the key at
// fault and what is wrong with it, or the cause it wraps (an observation
// file's error names that file and line). Tests and callers find it with
// errors.As.
type KeyError struct {
	File string // the file, "" when not known (text decoded from memory)
	Line int    // the line of a syntax error, 0 otherwise
	// Key is the key at fault as a dotted path, array tables numbered from
	// 1 ("parameters[2].gas", "spectrum.resolving_power"), or a section
	// ("sampler"); "" for a syntax error.
	Key string
	Msg string // what is wrong; may be "" when Err says it
	Err error  // the cause, if any
}

func (e *KeyError) Error() string {
	var b strings.Builder
	if e.File != "" {
		b.WriteString(e.File + ": ")
	}
	if e.Line > 0 {
		fmt.Fprintf(&b, "line %d: ", e.Line)
	}
	if e.Key != "" {
		b.WriteString(e.Key + ": ")
	}
	b.WriteString(e.Msg)
	if e.Err != nil {
		if e.Msg != "" {
			b.WriteString(": ")
		}
		b.WriteString(e.Err.Error())
	}
	return b.String()
}

func (e *KeyError) Unwrap() error { return e.Err }

// keyErr is the KeyError of key with a formatted message.
func keyErr(key, format string, a ...any) error {
	return &KeyError{Key: key, Msg: fmt.Sprintf(format, a...)}
}

// missingKey is the KeyError of a required key that is absent; hint says
// what it gives.
func missingKey(key, hint string) error {
	msg := "missing"
	if hint != "" {
		msg += " (" + hint + ")"
	}
	return &KeyError{Key: key, Msg: msg}
}

// keyWrap is the KeyError of key caused by err.
func keyWrap(key string, err error) error {
	return &KeyError{Key: key, Err: err}
}

// InFile names the file path in err: a KeyError that names no file gets
// it; any other error is prefixed with it.
func InFile(path string, err error) error {
	var ke *KeyError
	if errors.As(err, &ke) && ke == err && ke.File == "" {
		ke.File = path
		return ke
	}
	return fmt.Errorf("%s: %w", path, err)
}
