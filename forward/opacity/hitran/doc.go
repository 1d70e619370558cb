// Package hitran reads the HITRAN formats: line lists in the 160-character
// record and HITRANonline's tab-separated download (into lbl.Lines),
// collision-induced absorption files (into opacity.CIATables), and the
// molparam and TIPS partition-sum tables (into lbl.IsoData).
package hitran
