package main

import (
	"runtime"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/tuning"
	"github.com/cleave-seg/cleave/segment/tune"
)

// parseSpec reads a search axis as tune's flags give it
// (tuning.ParseAxis); every error is a usage error naming the flag.
func parseSpec(d tune.Param, text string) (tune.Axis, error) {
	ax, err := tuning.ParseAxis(d, text)
	if err != nil {
		return ax, &usageError{err}
	}
	return ax, nil
}

// defaultWorkers is the number of concurrent segmentations (0: GOMAXPROCS).
func defaultWorkers(n int) int {
	if n > 0 {
		return n
	}
	return runtime.GOMAXPROCS(0)
}
