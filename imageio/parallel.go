package imageio

import (
	"runtime"
	"sync"
)

// numWorkers maps workers < 1 to GOMAXPROCS.
func numWorkers(workers int) int {
	if workers < 1 {
		return runtime.GOMAXPROCS(0)
	}
	return workers
}

// parallelRange splits [0, n) into contiguous blocks and calls fn(lo, hi)
// for each on at most workers goroutines. Callers write disjoint outputs,
// so results do not depend on the worker count.
func parallelRange(n, workers int, fn func(lo, hi int)) {
	workers = numWorkers(workers)
	if workers > n {
		workers = n
	}
	if workers <= 1 || n < 4096 {
		if n > 0 {
			fn(0, n)
		}
		return
	}
	var wg sync.WaitGroup
	for k := 0; k < workers; k++ {
		lo, hi := n*k/workers, n*(k+1)/workers
		wg.Add(1)
		go func() {
			defer wg.Done()
			fn(lo, hi)
		}()
	}
	wg.Wait()
}

// forEach calls fn(i) for every i in [0, n) on at most workers goroutines,
// one task at a time per goroutine; for a few coarse tasks.
func forEach(n, workers int, fn func(i int)) {
	workers = min(numWorkers(workers), n)
	if workers <= 1 {
		for i := 0; i < n; i++ {
			fn(i)
		}
		return
	}
	var wg sync.WaitGroup
	next := make(chan int)
	for g := 0; g < workers; g++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				fn(i)
			}
		}()
	}
	for i := 0; i < n; i++ {
		next <- i
	}
	close(next)
	wg.Wait()
}
