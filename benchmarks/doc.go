// Package benchmarks holds the go benchmarks of chord's canonical workloads.
// Run them with
//
//	go test -run '^$' -bench . -benchmem ./benchmarks/
package benchmarks
