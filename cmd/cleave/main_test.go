package main

import (
	"os"
	"testing"
)

// TestMain starts the test binary as main starts cleave, so that the
// benchmarks measure the memory set-up the command runs with.
func TestMain(m *testing.M) {
	adviseHugePages()
	os.Exit(m.Run())
}
