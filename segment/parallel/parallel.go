// Package parallel is the one parallel loop of cleave's libraries
// (imageio, affinity, segment and their sub-packages): it runs fn over a
// fixed set of chunks [0, n) on a bounded number of goroutines. It
// imports nothing of the project, so every library may use it.
//
// The rules, the same in every function:
//
//   - workers < 1 means runtime.GOMAXPROCS(0) (Workers);
//   - at most min(workers, n) goroutines run (Goroutines); with one, fn
//     runs on the calling goroutine, chunk after chunk in increasing
//     order;
//   - chunks are handed out in increasing order through one atomic
//     counter, so a slow chunk does not hold up the others;
//   - the chunks are the caller's and never depend on the worker count.
//     Each chunk writes only outputs it owns, and a reduction over
//     chunks is made by the caller afterwards in chunk order, so results
//     are the same for any number of workers.
package parallel

import (
	"runtime"
	"sync"
	"sync/atomic"
)

// Workers maps w < 1 to runtime.GOMAXPROCS(0) and returns any other w.
func Workers(w int) int {
	if w < 1 {
		return runtime.GOMAXPROCS(0)
	}
	return w
}

// Goroutines is the number of goroutines For, Blocks and ForErr run for
// n chunks: min(Workers(workers), n), and 0 when n <= 0.
func Goroutines(n, workers int) int {
	return max(0, min(Workers(workers), n))
}

// For calls fn(c) for every c in [0, n) on Goroutines(n, workers)
// goroutines and returns when every call has returned.
func For(n, workers int, fn func(c int)) {
	g := Goroutines(n, workers)
	if g <= 1 {
		for c := 0; c < n; c++ {
			fn(c)
		}
		return
	}
	run(n, g, func(_, c int) bool {
		fn(c)
		return true
	})
}

// Blocks splits [0, n) into the fixed blocks [c·size, min(n, (c+1)·size))
// and calls fn(c, lo, hi) for each, as For does. The blocks depend on n
// and size only; size < 1 counts as 1.
func Blocks(n, size, workers int, fn func(c, lo, hi int)) {
	size = max(1, size)
	nb := (n + size - 1) / size
	For(nb, workers, func(c int) {
		fn(c, c*size, min(n, (c+1)*size))
	})
}

// ForErr calls fn(g, c) for chunks c in [0, n) as For does, g in
// [0, Goroutines(n, workers)) naming the goroutine that runs the call (for
// scratch space of its own). Once a call has returned an error no further
// chunk is started; ForErr returns the error of the lowest chunk that
// failed, or nil. That error does not depend on the worker count: chunks
// are handed out in increasing order and every chunk handed out runs to
// its end, so every chunk below a failing one runs.
func ForErr(n, workers int, fn func(g, c int) error) error {
	g := Goroutines(n, workers)
	if g <= 1 {
		for c := 0; c < n; c++ {
			if err := fn(0, c); err != nil {
				return err
			}
		}
		return nil
	}
	var (
		mu    sync.Mutex
		first = n // the lowest failing chunk so far
		err   error
	)
	run(n, g, func(k, c int) bool {
		e := fn(k, c)
		if e == nil {
			return true
		}
		mu.Lock()
		if c < first {
			first, err = c, e
		}
		mu.Unlock()
		return false
	})
	return err
}

// run hands the chunks [0, n) out in increasing order through one atomic
// counter to g goroutines, goroutine k calling fn(k, c), and returns when
// they are done. Once a call returns false no further chunk is handed out.
func run(n, g int, fn func(k, c int) bool) {
	var next atomic.Int64
	var wg sync.WaitGroup
	wg.Add(g)
	for k := range g {
		go func() {
			defer wg.Done()
			for {
				c := int(next.Add(1) - 1)
				if c >= n {
					return
				}
				if !fn(k, c) {
					next.Store(int64(n)) // start no further chunk
					return
				}
			}
		}()
	}
	wg.Wait()
}
