package pipeline

import (
	"context"
	"fmt"
	"math"
	"os"
	"runtime/debug"
	"sync"

	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/segment"
)

// baseBytes is the resident memory of the process before any image is
// read (the runtime, the program, the first heap arenas): 15 MB peak
// resident memory measured with /usr/bin/time for `cleave segment` on
// the 64 x 64 testdata/imageio/gray8.png, rounded up.
const baseBytes = 24 << 20

// outputBytesPerPixel is the memory of the outputs stage beyond the
// features: the label, region and class maps (12 bytes per pixel), the
// label and class maps being encoded at once (a PNG is drawn band by
// band; a TIFF label map keeps its compressed strips until its header is
// written, at most 4 + 2 for 32-bit labels), the region table's row runs
// (segment/measure, at most 12 per pixel, 8 counted: a run per pixel
// needs a label map of single-pixel rows) and the outlines' edge flags
// and piece map (1 + 4), and the colouring of the labels (its touching
// pairs, 8 bytes each, counted 8: a map of one-pixel objects can reach
// 32). The overlay and the preview are drawn, filtered and compressed
// band by band (imageio), a few megabytes whatever the image's size.
const outputBytesPerPixel = 39

// stageEstimate is the estimated peak memory of the process during one
// stage of one image.
type stageEstimate struct {
	name  string
	bytes int64
}

// estimateImage estimates the process's peak memory in each stage of
// the pipeline for the image whose header is h: decode, features, the
// stages of segment.Run (segment.EstimateStages) and the outputs. Each
// includes baseBytes and the arrays of earlier stages still alive.
func estimateImage(h imageio.Header, o *Options) []stageEstimate {
	w, ht := h.Width, h.Height
	n := float64(w) * float64(ht)
	imagePlanes := 4 * n * float64(h.Channels)
	fo := o.Features
	if o.FlattenRadii > 0 {
		fo.Flatten = 1 // a scale chosen per image: its planes are those of any scale
	}
	fpeak, fkept := imageio.EstimateFeatureBytes(w, ht, h.Channels, fo)
	planes := 1
	if o.Features.Space == imageio.SpaceLab {
		planes = 3
	}
	base, kept := float64(baseBytes), float64(fkept)
	if h.Channels > 1 {
		kept += imagePlanes // a colour image's planes, kept for the region table
	}
	est := []stageEstimate{
		{"decode", satBytes(base + float64(h.DecodeBytes))},
		{"features", satBytes(base + imagePlanes + float64(fpeak))},
	}
	for _, st := range segment.EstimateStages(w, ht, planes, o.Params) {
		est = append(est, stageEstimate{st.Name, satBytes(base + kept + float64(st.Bytes))})
	}
	est = append(est, stageEstimate{"outputs", satBytes(base + kept + outputBytesPerPixel*n)})
	return est
}

// peakOf is the largest stage estimate.
func peakOf(est []stageEstimate) int64 {
	var m int64
	for _, e := range est {
		m = max(m, e.bytes)
	}
	return m
}

func satBytes(x float64) int64 {
	if !(x < math.MaxInt64) {
		return math.MaxInt64
	}
	return int64(math.Ceil(x))
}

// checkImageMemory refuses an image, from its header and before it is
// decoded, when a stage is estimated above the memory limit, naming the
// stage and what to change.
func checkImageMemory(h imageio.Header, o *Options) error {
	limit := o.Params.MaxMemory
	if limit <= 0 {
		return nil
	}
	for _, e := range estimateImage(h, o) {
		if e.bytes <= limit {
			continue
		}
		hint := "downsample the image"
		switch {
		case e.name == "graph" || e.name == "cuts":
			if o.Params.Superpixels == 0 {
				hint = "lower radius, or use superpixels (superpixels N)"
			} else {
				hint = "use fewer superpixels (superpixels N), or downsample the image"
			}
		case e.name == "features" && (o.Features.Flatten > 0 || o.FlattenRadii > 0):
			hint = "turn off flatten, or downsample the image"
		}
		// Parameter names are bare, as in segment's messages (Voice.Error
		// words them for the command).
		return fmt.Errorf("%w: %dx%d pixels: the %s stage needs about %s, above max-memory %s; %s, or raise max-memory",
			segment.ErrMemory, h.Width, h.Height, e.name, segment.FormatBytes(e.bytes), segment.FormatBytes(limit), hint)
	}
	return nil
}

// memoryBudget shares the memory limit between the images processed at
// once (batch): each image reserves its estimated peak before it
// is decoded and waits while the others' reservations leave too little,
// so that together they stay under the limit.
type memoryBudget struct {
	mu    sync.Mutex
	free  int64
	total int64
	wake  chan struct{} // closed and replaced whenever memory is released
}

// budgets holds one budget per memory limit in use (normally one).
var (
	budgetsMu sync.Mutex
	budgets   = map[int64]*memoryBudget{}
)

// budgetFor returns the process's budget for limit (0: none).
func budgetFor(limit int64) *memoryBudget {
	if limit <= 0 {
		return nil
	}
	budgetsMu.Lock()
	defer budgetsMu.Unlock()
	b := budgets[limit]
	if b == nil {
		b = &memoryBudget{free: limit - baseBytes, total: limit - baseBytes, wake: make(chan struct{})}
		budgets[limit] = b
	}
	return b
}

// acquire reserves n bytes (beyond baseBytes), waiting for other images
// to release theirs; it returns the amount to release. A request larger
// than the whole budget takes the whole budget once nothing else holds
// any (the caller has checked the image against the limit already).
func (b *memoryBudget) acquire(ctx context.Context, n int64) (int64, error) {
	if b == nil {
		return 0, nil
	}
	n = min(max(n-baseBytes, 0), b.total)
	for {
		b.mu.Lock()
		if b.free >= n {
			b.free -= n
			collector.follow(b.total, b.total-b.free)
			b.mu.Unlock()
			return n, nil
		}
		wake := b.wake
		b.mu.Unlock()
		select {
		case <-wake:
		case <-ctx.Done():
			return 0, ctx.Err()
		}
	}
}

// release returns n bytes taken by acquire.
func (b *memoryBudget) release(n int64) {
	if b == nil || n == 0 {
		return
	}
	b.mu.Lock()
	b.free += n
	collector.follow(b.total, b.total-b.free)
	close(b.wake)
	b.wake = make(chan struct{})
	b.mu.Unlock()
}

// SetCollector makes the memory limit the Go runtime's soft limit too
// (debug.SetMemoryLimit), so that the garbage collector works harder
// rather than let the heap grow past it. The estimates keep live data
// below the limit; the soft limit keeps garbage from adding to it. It
// returns a function that restores the previous settings (for commands
// run inside one process, as the tests do).
//
// Unless the GOGC environment variable says otherwise, the collector also
// runs when the heap has grown by GCPercent (50) over the live data
// instead of the runtime's 100: the largest images hold most of their
// memory in a few big planes, and a collection that falls just after they
// are allocated lets the heap double (DEVELOPERS.md, "Measured choices",
// gives the measurement). While images hold a share of the budget
// (acquire) the target follows their estimates (gcPercentFor): small
// images run with a larger one, so that the collector does not run a
// dozen times an image.
func SetCollector(limit int64) (restore func()) {
	if limit <= 0 {
		return func() {}
	}
	prev := debug.SetMemoryLimit(limit)
	prevGC := -2 // not changed
	if os.Getenv("GOGC") == "" {
		prevGC = debug.SetGCPercent(GCPercent)
		collector.start(GCPercent)
	}
	return func() {
		collector.stop()
		debug.SetMemoryLimit(prev)
		if prevGC != -2 {
			debug.SetGCPercent(prevGC)
		}
	}
}

// GCPercent is the collector's growth target the computing commands run
// with (see SetCollector), the least gcPercentFor gives.
const GCPercent = 50

// FrameGCPercent is the collector's growth target while a frame of at
// least collectAfterSegmentPixels (4 megapixels) is processed, whatever
// gcPercentFor gives for the images in flight (see frameCollector).
const FrameGCPercent = 25

// frameCollector holds the collector's growth target at FrameGCPercent
// while a frame of npix pixels, at least collectAfterSegmentPixels, is
// processed and SetCollector's settings are in place (not with GOGC set
// in the environment); it returns the function that ends the hold, and
// the target then follows the images in flight again (gcTarget). With a
// target of p percent the heap grows to at most (1 + p/100) times the
// live data found by the last collection (the Go runtime's pacer,
// runtime/debug.SetGCPercent). A large frame's live heap is mostly
// pointer-free planes, which the collector marks without scanning them,
// so the extra collections cost little next to the frame's per-pixel
// work, while the garbage between two collections is whole planes: on
// the 16 MP nuclei frame (seed 15111) the largest heap in
// GODEBUG=gctrace=1 was 845 MB over 563 MB live at 50 and 700 MB at 25,
// peak RSS 977,056-994,668 KiB against 806,416-816,332 KiB, CPU time
// unchanged. Small images do better the other way (gcPercentFor): on 110
// choice scenes of 512 x 512 a target of 25 took 0-9 % more CPU time
// than 50 and 10 took 18-23 % more, each collection's fixed cost
// counting there (DEVELOPERS.md, "Measured choices").
func frameCollector(npix int) (end func()) {
	if npix < collectAfterSegmentPixels {
		return func() {}
	}
	collector.frame(1)
	var once sync.Once
	return func() { once.Do(func() { collector.frame(-1) }) }
}

// gcPercentMax is the most gcPercentFor gives. On the batch benchmark's
// 200 images of 512 x 512 pixels (--jobs 2) the CPU time an image fell
// from 0.20-0.22 s at 50 to 0.20 at 100, 0.19-0.20 at 200, 0.18 at 400
// and 0.18 at 800 (peak resident memory 54, 69, 93-109, 134-172 and 283
// MB; GOGC set in the environment, the machine shared at load 5-13).
const gcPercentMax = 400

// gcPercentFor is the collector's growth target while the images being
// processed are estimated to hold held bytes (their peak estimates less
// baseBytes, as acquire reserves them) of a budget of total bytes: the
// target at which the heap may grow by a sixteenth of the memory limit,
// 100·(total+baseBytes)/16 / (baseBytes+held) percent of the estimated
// live memory, clamped to [GCPercent, gcPercentMax]. The estimates are
// upper bounds of the live heap, so the heap grows by at most a
// sixteenth of the limit between collections where the target is above
// GCPercent (and the soft memory limit holds it under the limit in any
// case). With the default limit (8 GiB) two 512 x 512 images with
// --classes 2 (73 MiB estimated each, 122 MiB with the process's own)
// get 400, one 1024 x 1024 image 278, two 149, one 2048 x 2048 image
// (616 MiB) 83 and a 4096 x 4096 one GCPercent. The collector's work is
// mostly a fixed cost a collection (stacks, roots, the sweep, the
// scavenger returning pages that the next image touches again), which
// the small heaps of small images pay many times an image: 12 times an
// image on the batch benchmark at 50.
func gcPercentFor(total, held int64) int {
	limit := float64(total) + baseBytes
	p := 100 * (limit / 16) / (float64(held) + baseBytes)
	return int(min(max(p, GCPercent), gcPercentMax))
}

// collector is the growth target while SetCollector's settings are in
// place and GOGC is unset: the budget's acquire and release set it from
// the images in flight (follow).
var collector gcTarget

// gcTarget sets the collector's growth target (debug.SetGCPercent) from
// the memory the images in flight hold, or to FrameGCPercent while a
// large frame is processed, calling the runtime only when the target
// changes.
type gcTarget struct {
	mu          sync.Mutex
	on          bool  // SetCollector's settings are in place
	percent     int   // the target set last
	total, held int64 // the budget and what the images in flight hold of it (follow)
	frames      int   // large frames being processed (frameCollector)
}

func (c *gcTarget) start(percent int) {
	c.mu.Lock()
	c.on, c.percent = true, percent
	c.mu.Unlock()
}

func (c *gcTarget) stop() {
	c.mu.Lock()
	c.on = false
	c.mu.Unlock()
}

// follow sets the target for held bytes of a budget of total bytes
// (gcPercentFor) when SetCollector's settings are in place.
func (c *gcTarget) follow(total, held int64) {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.total, c.held = total, held
	c.apply()
}

// frame counts a large frame in (d = 1) or out (d = -1) and sets the
// target.
func (c *gcTarget) frame(d int) {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.frames += d
	c.apply()
}

// apply sets the target, c.mu held: FrameGCPercent while a large frame
// is processed, gcPercentFor otherwise.
func (c *gcTarget) apply() {
	if !c.on {
		return
	}
	p := gcPercentFor(c.total, c.held)
	if c.frames > 0 {
		p = FrameGCPercent
	}
	if p != c.percent {
		debug.SetGCPercent(p)
		c.percent = p
	}
}
