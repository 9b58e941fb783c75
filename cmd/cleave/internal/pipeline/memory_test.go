package pipeline

import (
	"context"
	"runtime/debug"
	"testing"

	"github.com/cleave-seg/cleave/imageio"
)

// The collector's growth target a sixteenth of the limit over the
// estimated live memory, clamped: the figures gcPercentFor's comment
// gives for the default limit and --classes 2, from the same estimates
// the budget reserves (estimateImage).
func TestGCPercentFor(t *testing.T) {
	r := DefaultRequest()
	r.Classes = 2
	o, err := r.Options(1)
	if err != nil {
		t.Fatal(err)
	}
	limit := o.Params.MaxMemory
	total := limit - baseBytes
	for _, c := range []struct{ side, images, want int }{
		{512, 1, gcPercentMax}, {512, 2, gcPercentMax}, {1024, 1, 278}, {1024, 2, 148},
		{2048, 1, 83}, {4096, 1, GCPercent},
	} {
		h := imageio.Header{Width: c.side, Height: c.side, Channels: 1, DecodeBytes: int64(2 * c.side * c.side)}
		held := int64(c.images) * (peakOf(estimateImage(h, o)) - baseBytes)
		if got := gcPercentFor(total, held); got != c.want {
			t.Errorf("%d images of %d x %d (%d MiB held): %d, want %d", c.images, c.side, c.side, held>>20, got, c.want)
		}
	}
	// Nothing held: the most; more than the limit: the least.
	if got := gcPercentFor(total, 0); got != gcPercentMax {
		t.Errorf("nothing held: %d, want %d", got, gcPercentMax)
	}
	if got := gcPercentFor(total, 4*limit); got != GCPercent {
		t.Errorf("four limits held: %d, want %d", got, GCPercent)
	}
}

// The budget's reservations set the collector's target while
// SetCollector's settings are in place, and leave it alone otherwise.
func TestCollectorFollowsBudget(t *testing.T) {
	t.Setenv("GOGC", "")
	const limit = 8<<30 + 4096 // a budget of its own
	b := budgetFor(limit)
	gcPercent := func() int { // reads the target without changing it
		p := debug.SetGCPercent(100)
		debug.SetGCPercent(p)
		return p
	}
	before := gcPercent()
	// Outside SetCollector nothing changes.
	held, err := b.acquire(context.Background(), 3<<30)
	if err != nil {
		t.Fatal(err)
	}
	b.release(held)
	if got := gcPercent(); got != before {
		t.Fatalf("without SetCollector the target moved from %d to %d", before, got)
	}
	restore := SetCollector(limit)
	if got := gcPercent(); got != GCPercent {
		t.Errorf("after SetCollector: %d, want %d", got, GCPercent)
	}
	small, err := b.acquire(context.Background(), baseBytes+64<<20)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := gcPercent(), gcPercentFor(limit-baseBytes, 64<<20); got != want || want <= GCPercent {
		t.Errorf("one small image: %d, want %d (above %d)", got, want, GCPercent)
	}
	big, err := b.acquire(context.Background(), 3<<30)
	if err != nil {
		t.Fatal(err)
	}
	if got := gcPercent(); got != GCPercent {
		t.Errorf("with a large image too: %d, want %d", got, GCPercent)
	}
	b.release(big)
	b.release(small)
	if got := gcPercent(); got != gcPercentMax {
		t.Errorf("all released: %d, want %d", got, gcPercentMax)
	}
	restore()
	if got := gcPercent(); got != before {
		t.Errorf("after restore: %d, want %d", got, before)
	}
	held, err = b.acquire(context.Background(), 64<<20)
	if err != nil {
		t.Fatal(err)
	}
	b.release(held)
	if got := gcPercent(); got != before {
		t.Errorf("after restore the budget moved the target to %d", got)
	}
}

// TestFrameCollector: while SetCollector's settings are in place, a
// frame of 4 megapixels or more holds the collector's target at
// FrameGCPercent whatever the images in flight would give, a smaller
// one leaves it, frames held at once (batch jobs) keep it until the
// last ends, each end counts once, and after the last the target
// follows the budget again; with GOGC in the environment nothing moves.
func TestFrameCollector(t *testing.T) {
	t.Setenv("GOGC", "")
	const limit = 8<<30 + 4096
	b := budgetFor(limit)
	gcPercent := func() int {
		p := debug.SetGCPercent(100)
		debug.SetGCPercent(p)
		return p
	}
	before := gcPercent()
	restore := SetCollector(limit)
	small, err := b.acquire(context.Background(), baseBytes+64<<20)
	if err != nil {
		t.Fatal(err)
	}
	follows := gcPercentFor(limit-baseBytes, 64<<20)
	endSmall := frameCollector(collectAfterSegmentPixels - 1)
	if got := gcPercent(); got != follows {
		t.Fatalf("below 4 MP: target %d, want %d", got, follows)
	}
	endSmall()
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
	// Another image's reservation does not lift the frame's target.
	other, err := b.acquire(context.Background(), 64<<20)
	if err != nil {
		t.Fatal(err)
	}
	if got := gcPercent(); got != FrameGCPercent {
		t.Fatalf("another image reserved during a frame: target %d, want %d", got, FrameGCPercent)
	}
	endB()
	b.mu.Lock()
	want := gcPercentFor(b.total, b.total-b.free)
	b.mu.Unlock()
	if got := gcPercent(); got != want || want == FrameGCPercent {
		t.Fatalf("both frames ended: target %d, want %d (the budget's)", got, want)
	}
	b.release(other)
	b.release(small)
	restore()
	if got := gcPercent(); got != before {
		t.Fatalf("after restore: %d, want %d", got, before)
	}
	t.Setenv("GOGC", "100")
	restore = SetCollector(limit)
	end := frameCollector(4096 * 4096)
	if got := gcPercent(); got != before {
		t.Errorf("GOGC set: target %d, want %d unchanged", got, before)
	}
	end()
	restore()
}
