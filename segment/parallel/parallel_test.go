package parallel

import (
	"errors"
	"fmt"
	"runtime"
	"sync/atomic"
	"testing"
)

func TestWorkers(t *testing.T) {
	gmp := runtime.GOMAXPROCS(0)
	for _, tc := range []struct{ w, want int }{{-3, gmp}, {0, gmp}, {1, 1}, {7, 7}} {
		if got := Workers(tc.w); got != tc.want {
			t.Errorf("Workers(%d) = %d, want %d", tc.w, got, tc.want)
		}
	}
}

func TestGoroutines(t *testing.T) {
	gmp := runtime.GOMAXPROCS(0)
	for _, tc := range []struct{ n, w, want int }{
		{0, 4, 0}, {-1, 4, 0}, {3, 8, 3}, {10, 4, 4}, {10, 1, 1}, {1000, 0, gmp}, {1, 0, 1},
	} {
		if got := Goroutines(tc.n, tc.w); got != tc.want {
			t.Errorf("Goroutines(%d, %d) = %d, want %d", tc.n, tc.w, got, tc.want)
		}
	}
}

// TestForEveryChunkOnce checks that every chunk runs exactly once and
// that no more goroutines run at once than Goroutines allows, for worker
// counts around and above the number of chunks.
func TestForEveryChunkOnce(t *testing.T) {
	for _, n := range []int{0, 1, 2, 7, 100} {
		for _, w := range []int{-1, 0, 1, 2, 3, 8, 200} {
			t.Run(fmt.Sprintf("n%d/w%d", n, w), func(t *testing.T) {
				hits := make([]atomic.Int32, n)
				var running, peak atomic.Int32
				For(n, w, func(c int) {
					r := running.Add(1)
					for {
						p := peak.Load()
						if r <= p || peak.CompareAndSwap(p, r) {
							break
						}
					}
					runtime.Gosched()
					hits[c].Add(1)
					running.Add(-1)
				})
				for c := range hits {
					if h := hits[c].Load(); h != 1 {
						t.Errorf("chunk %d ran %d times", c, h)
					}
				}
				if p, lim := int(peak.Load()), Goroutines(n, w); p > lim {
					t.Errorf("%d calls ran at once, at most %d goroutines allowed", p, lim)
				}
			})
		}
	}
}

// TestForOneWorkerInOrder: with one goroutine the chunks run on the
// caller in increasing order.
func TestForOneWorkerInOrder(t *testing.T) {
	var order []int
	For(5, 1, func(c int) { order = append(order, c) })
	if fmt.Sprint(order) != "[0 1 2 3 4]" {
		t.Errorf("order %v, want [0 1 2 3 4]", order)
	}
}

// TestBlocks checks the fixed blocks: they cover [0, n) in order without
// overlap and do not depend on the worker count.
func TestBlocks(t *testing.T) {
	for _, tc := range []struct{ n, size int }{{0, 4}, {1, 4}, {10, 4}, {12, 4}, {5, 0}, {5, 100}} {
		want := ""
		for _, w := range []int{1, 2, 5, 0} {
			nb := 0
			if s := max(1, tc.size); tc.n > 0 {
				nb = (tc.n + s - 1) / s
			}
			got := make([]string, nb)
			Blocks(tc.n, tc.size, w, func(c, lo, hi int) { got[c] = fmt.Sprintf("%d:[%d,%d)", c, lo, hi) })
			s := fmt.Sprint(got)
			if w == 1 {
				want = s
				// Blocks of size max(1, size) tile [0, n).
				end := 0
				Blocks(tc.n, tc.size, 1, func(c, lo, hi int) {
					if lo != end || hi <= lo || hi-lo > max(1, tc.size) {
						t.Errorf("n %d size %d: block %d is [%d,%d) after end %d", tc.n, tc.size, c, lo, hi, end)
					}
					end = hi
				})
				if end != tc.n {
					t.Errorf("n %d size %d: blocks end at %d", tc.n, tc.size, end)
				}
			} else if s != want {
				t.Errorf("n %d size %d: workers %d gave %s, one worker %s", tc.n, tc.size, w, s, want)
			}
		}
	}
}

// TestForErrLowest: the error returned is that of the lowest failing
// chunk whatever the worker count, chunks below it all ran, and the
// goroutine numbers stay below Goroutines.
func TestForErrLowest(t *testing.T) {
	const n = 200
	fails := map[int]bool{37: true, 38: true, 90: true, 150: true}
	for _, w := range []int{1, 2, 3, 8, 0} {
		for rep := 0; rep < 20; rep++ {
			ran := make([]atomic.Bool, n)
			lim := Goroutines(n, w)
			err := ForErr(n, w, func(g, c int) error {
				if g < 0 || g >= lim {
					t.Errorf("goroutine number %d outside [0, %d)", g, lim)
				}
				ran[c].Store(true)
				if c%7 == 0 {
					runtime.Gosched()
				}
				if fails[c] {
					return fmt.Errorf("chunk %d", c)
				}
				return nil
			})
			if err == nil || err.Error() != "chunk 37" {
				t.Fatalf("workers %d: error %v, want chunk 37", w, err)
			}
			for c := 0; c < 37; c++ {
				if !ran[c].Load() {
					t.Fatalf("workers %d: chunk %d below the failing one did not run", w, c)
				}
			}
		}
	}
	if err := ForErr(10, 3, func(_, _ int) error { return nil }); err != nil {
		t.Errorf("no failure: %v", err)
	}
	if err := ForErr(0, 3, func(_, _ int) error { return errors.New("called") }); err != nil {
		t.Errorf("no chunks: %v", err)
	}
}

// TestForErrStops: after a failure no further chunk starts (one worker:
// none after the failing chunk at all).
func TestForErrStops(t *testing.T) {
	var calls atomic.Int32
	err := ForErr(100, 1, func(_, c int) error {
		calls.Add(1)
		if c == 3 {
			return errors.New("stop")
		}
		return nil
	})
	if err == nil || calls.Load() != 4 {
		t.Errorf("one worker: error %v after %d calls, want stop after 4", err, calls.Load())
	}
	calls.Store(0)
	_ = ForErr(100000, 2, func(_, c int) error {
		calls.Add(1)
		return errors.New("stop")
	})
	// Each goroutine stops after its first failing chunk.
	if c := calls.Load(); c > 2 {
		t.Errorf("two workers: %d calls after the first failure, want at most 2", c)
	}
}
