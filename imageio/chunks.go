package imageio

// The fixed work chunks of imageio's parallel loops (parallel.Blocks):
// they depend on the image's size only, never on the worker count, and
// each writes its own pixels, so results are the same for any number of
// workers. An image below one chunk runs on the calling goroutine. The
// box filters' row and column passes are split only above 2048 rows or
// columns: on a 1024 x 1024 frame (BenchmarkMakeFeatures1024, two
// cores shared with other work, load 5-6, 16 runs of 20 iterations each)
// splitting them in blocks of 32 rows and 256 columns took a median of
// 1.52 s of CPU a run and 86 ms a call, against 1.43 s and 77 ms with
// one block.
const (
	pixelBlock = 1 << 16 // pixels of a per-pixel pass
	rowBlock   = 2048    // rows of a per-row pass
	colBlock   = 2048    // columns of a per-column pass
)
