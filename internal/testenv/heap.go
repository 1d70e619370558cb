package testenv

import (
	"runtime/metrics"
	"sync/atomic"
	"time"
)

// PeakHeap samples the heap in use (objects and the unused part of their
// spans, read through runtime/metrics, which does not stop the world as
// runtime.ReadMemStats does) every few milliseconds until stop is closed,
// and returns the largest value seen, in bytes.
func PeakHeap(stop <-chan struct{}) *atomic.Uint64 {
	var peak atomic.Uint64
	sample := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}, {Name: "/memory/classes/heap/unused:bytes"}}
	go func() {
		for {
			metrics.Read(sample)
			if v := sample[0].Value.Uint64() + sample[1].Value.Uint64(); v > peak.Load() {
				peak.Store(v)
			}
			select {
			case <-stop:
				return
			case <-time.After(5 * time.Millisecond):
			}
		}
	}()
	return &peak
}
