package imageio

// The fixed work chunks of imageio's parallel loops (parallel.Blocks):
// they depend on the image's size only, never on the worker count, and
// each writes its own pixels, so results are the same for any number of
// workers. An image below one chunk runs on the calling goroutine.
const (
	pixelBlock = 1 << 16 // pixels of a per-pixel pass
	rowBlock   = 32      // rows of a per-row pass
	colBlock   = 256     // columns of a per-column pass
)
