package opacity

// Set is a collection of opacity tables as loaded from a directory of table
// files (tablefile.LoadDir) or built for the demo (package demo).
type Set struct {
	XSec map[string]*XSecTable // point cross-section tables, by gas name
	K    map[string]*KTable    // k-tables, by gas name
	CIA  []*CIATable
	// Demo is true when any table of the set is a demo table, not for
	// science; every output made with such a set must say so.
	Demo bool
	// Files lists the table files the set was read from (empty for a set
	// built in memory), for provenance and checksums in run directories.
	Files []string
}
