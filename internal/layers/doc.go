// Package layers holds the test that keeps chord's import arrows as the
// design notes (docs/design.md) draw them.
package layers
