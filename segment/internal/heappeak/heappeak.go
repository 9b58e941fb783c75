// Package heappeak samples the live heap of the process for tests and
// benchmarks that bound or report memory.
package heappeak

import (
	"runtime/metrics"
	"sync"
	"time"
)

// Live returns the bytes of live heap objects now
// (/memory/classes/heap/objects:bytes of runtime/metrics).
func Live() uint64 {
	s := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
	metrics.Read(s)
	return s[0].Value.Uint64()
}

// Watch samples Live every interval (runtime/metrics, no stop of the
// world) until stop is called, which returns the largest value seen.
func Watch(interval time.Duration) (stop func() uint64) {
	var peak uint64
	done := make(chan struct{})
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		t := time.NewTicker(interval)
		defer t.Stop()
		for {
			peak = max(peak, Live())
			select {
			case <-done:
				return
			case <-t.C:
			}
		}
	}()
	return func() uint64 {
		close(done)
		wg.Wait()
		return peak
	}
}
