// Package report turns a stored chain into summaries (summary.json,
// summary.txt), gas detections, corner and spectrum plots, and
// comparisons of posterior widths between runs.
package report
