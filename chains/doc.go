// Package chains is the crash-safe chain store of a run: it writes the
// rows of an ensemble chain as Parquet parts (Writer) and reads them back
// (Read, Scan).
//
// The chains of a run are a Parquet dataset in RUNDIR/chains: part-000001.parquet,
// part-000002.parquet, ... Each part is a complete Parquet file holding the rows
// of consecutive ensemble steps, one row per walker and step, in step then
// walker order. Columns (all required, plain encoding, Snappy pages):
//
//	step           int64   ensemble step, 1 for the first step after the initial ensemble
//	walker         int64   walker index, 0 ... walkers-1
//	log_posterior  double  log posterior density (natural log)
//	...            double  the columns of the Layout, in its order
//	               (log_likelihood, one column per free parameter, derived quantities)
//
// Key-value metadata of every part: "chord.format" (Format), "chord.columns"
// (a JSON array of Column: name, role, quantity, unit, prior),
// "chord.walkers", "chord.part", "chord.first_step", "chord.last_step", and the
// layout's own entries (program version, run identity, demo flag).
//
// A part is written to part-NNNNNN.parquet.tmp, closed, fsynced, renamed to its
// final name and the directory fsynced (Commit), so a part file either is
// complete or does not exist under its final name. The run's checkpoint lists
// the committed parts with their sizes and SHA-256 digests; rows not yet in a
// committed part are lost by a crash, nothing else.
package chains
