package main

import (
	"testing"

	"github.com/cleave-seg/cleave/examples/loudskip"
)

// TestMain starts the test binary as main starts cleave, so that the
// benchmarks measure the memory set-up the command runs with.
func TestMain(m *testing.M) {
	adviseHugePages()
	loudskip.Main(m, "cmd/cleave")
}
