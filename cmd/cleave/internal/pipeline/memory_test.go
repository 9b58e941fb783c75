package pipeline

import (
	"runtime/debug"
	"testing"
)

// gcPercent reads the collector's growth target (runtime/debug.SetGCPercent
// returns the previous value; it is put back at once).
func gcPercent() int {
	p := debug.SetGCPercent(100)
	debug.SetGCPercent(p)
	return p
}

// TestFrameCollector: a frame of 4 megapixels or more lowers the
// collector's target to FrameGCPercent while it is held, a smaller one
// leaves it, frames held at once (batch jobs) keep it lowered until the
// last ends, each end counts once, and a GOGC in the environment is left
// alone.
func TestFrameCollector(t *testing.T) {
	t.Setenv("GOGC", "")
	defer debug.SetGCPercent(debug.SetGCPercent(GCPercent))
	small := frameCollector(collectAfterSegmentPixels - 1)
	if got := gcPercent(); got != GCPercent {
		t.Fatalf("below 4 MP: target %d, want %d", got, GCPercent)
	}
	small()
	endA := frameCollector(collectAfterSegmentPixels)
	if got := gcPercent(); got != FrameGCPercent {
		t.Fatalf("4 MP frame held: target %d, want %d", got, FrameGCPercent)
	}
	endB := frameCollector(4096 * 4096)
	endA()
	endA() // a second call of one end must not release the other frame
	if got := gcPercent(); got != FrameGCPercent {
		t.Fatalf("one of two frames ended: target %d, want %d", got, FrameGCPercent)
	}
	endB()
	if got := gcPercent(); got != GCPercent {
		t.Fatalf("both frames ended: target %d, want %d back", got, GCPercent)
	}

	t.Setenv("GOGC", "80")
	debug.SetGCPercent(80)
	end := frameCollector(4096 * 4096)
	if got := gcPercent(); got != 80 {
		t.Fatalf("GOGC=80 set: target %d, want 80 kept", got)
	}
	end()
}
