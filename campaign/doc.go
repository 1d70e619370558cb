// Package campaign runs and collects many fits: observation plans (one
// scenario at several noise levels), grids of fits (run here or as Slurm
// job arrays) and the demo.
package campaign
