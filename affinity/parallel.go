package affinity

import (
	"sync"
	"sync/atomic"
)

// forChunks calls fn(c) for every c in [0, nchunks) on at most workers
// goroutines, handing chunks out through an atomic counter. Callers make
// each chunk's output independent of which goroutine ran it, so results
// do not depend on the worker count.
func forChunks(nchunks, workers int, fn func(c int)) {
	if workers > nchunks {
		workers = nchunks
	}
	if workers <= 1 {
		for c := 0; c < nchunks; c++ {
			fn(c)
		}
		return
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	for g := 0; g < workers; g++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				c := int(next.Add(1) - 1)
				if c >= nchunks {
					return
				}
				fn(c)
			}
		}()
	}
	wg.Wait()
}

// bandRows is the number of image rows in one work chunk of forBands.
const bandRows = 32

// forBands runs fn over fixed bands of bandRows rows of an image of h
// rows.
func forBands(h, workers int, fn func(c, y0, y1 int)) {
	n := (h + bandRows - 1) / bandRows
	forChunks(n, workers, func(c int) {
		fn(c, c*bandRows, min(h, (c+1)*bandRows))
	})
}
