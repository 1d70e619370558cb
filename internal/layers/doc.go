// Package layers holds the test that keeps chord's import arrows as the
// README's design section draws them.
package layers
