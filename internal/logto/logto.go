// Package logto picks where a command's messages go.
package logto

import "io"

// First returns the first of ws that is not nil, else io.Discard: where
// a command's messages go when its options leave them unset.
func First(ws ...io.Writer) io.Writer {
	for _, w := range ws {
		if w != nil {
			return w
		}
	}
	return io.Discard
}
