package main

import (
	"testing"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/hugepages"
	"github.com/cleave-seg/cleave/examples/loudskip"
)

// TestMain starts the test binary as main starts cleave, so that the
// benchmarks measure the memory set-up the command runs with.
func TestMain(m *testing.M) {
	if hugepages.AtStart {
		hugepages.Advise()
	}
	loudskip.Main(m, "cmd/cleave")
}
