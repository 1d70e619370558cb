// Package testenv holds the helpers chord's tests share: locating the
// repository root and the real spectroscopic sample data beside it
// (../shared/data, skipping tests when it is absent), and building the
// chord binary for tests that run it as a separate process.
//
// It is for tests only; no production package imports it.
package testenv
