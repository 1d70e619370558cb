// Package version holds the program version, written into every output
// chord makes (run files, chain parts, checkpoints, tables, summaries).
package version

// Version is the program version.
const Version = "0.1.0-dev"
