// Package chains is the crash-safe chain store of a run: it writes the
// rows of an ensemble chain, or the dead points of a nested-sampling run,
// as Parquet parts (Writer) and reads them back (Read, Reader,
// ReadEqualWeight).
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
// # Dead points of nested sampling
//
// A nested-sampling run (Layout.Nested) stores one row per dead point, in
// the order the run produced them, under the format "chord-dead-points/1"
// (FormatNested):
//
//	point          int64   dead point, 1 for the first discarded live point
//	final          boolean one of the live points added when the run finished
//	log_weight     double  ln(w L): prior mass times likelihood, unnormalised
//	log_posterior  double  ln prior + ln likelihood at the point
//	...            double  the columns of the Layout (log_likelihood, the free
//	               parameters, derived quantities)
//
// The posterior weight of a point is exp(log_weight - ln Z) with the run's
// final ln Z; ReadEqualWeight resamples the points into equally weighted
// samples. "chord.walkers" is 1, "chord.first_point" and "chord.last_point"
// replace the steps, and the run adds its running evidence to each part as
// it is committed (Writer.SetPartMeta: "chord.log_evidence" and others,
// listed in docs/evidence.md).
//
// A part is written to part-NNNNNN.parquet.tmp, closed, fsynced, renamed to its
// final name and the directory fsynced (Commit), so a part file either is
// complete or does not exist under its final name. The run's checkpoint lists
// the committed parts with their sizes and SHA-256 digests; rows not yet in a
// committed part are lost by a crash, nothing else.
package chains
