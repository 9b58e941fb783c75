package segment

import (
	"math"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/parallel"
)

// Local background mesh (common practice in detecting faint sources on a
// varying sky; the construction is described in Bertin and Arnouts 1996,
// A&AS 117, 393, section 3.1): the image is divided into square cells
// several object diameters across; in each cell
// the background is the median of the pixels left after iterative κσ
// clipping (κ = 3, σ from the median absolute deviation), so the few
// object pixels of a cell do not move it; the cell values are
// median-filtered over 3x3 cells, which removes cells taken over by a
// large object, and interpolated bilinearly between cell centres.
const (
	// meshDiameters is the cell side in object diameters: a disc of
	// diameter d covers π/(4·m²) of a cell of side m·d, under 5 % for
	// m = 4, so even a cell holding several objects keeps a background
	// majority and its clipped median is the background (the rule of
	// the method: cells larger than the objects).
	meshDiameters = 4
	// meshMinCells is the least number of cells across the longer side
	// (a coarser mesh could not follow any shading).
	meshMinCells = 4
	// meshClip is κ of the κσ clipping (the method's value).
	meshClip = 3
	// meshClipRounds bounds the clipping iterations (the method iterates
	// to convergence; three rounds settle within a few per cent of σ).
	meshClipRounds = 3
)

// meshCell returns the cell side of the background mesh for objects of
// typical radius r pixels in a w x h image: meshDiameters object
// diameters, at most max(w, h)/meshMinCells and at least 8 pixels. With no
// object scale (r <= 0) it is max(w, h)/fieldScale, the project's fixed
// shading scale.
func meshCell(r float64, w, h int) int {
	long := max(w, h)
	if r <= 0 {
		return max(1, int(math.Round(float64(long)/fieldScale)))
	}
	c := int(math.Round(2 * meshDiameters * r))
	return max(min(c, long/meshMinCells), min(8, long))
}

// meshBackground returns the local background of v (w x h) estimated on
// a mesh of cell x cell pixels as described above. It depends on v only,
// not on any grouping of the pixels.
func meshBackground(v []float32, w, h, cell, workers int) []float32 {
	gw, gh := (w+cell-1)/cell, (h+cell-1)/cell
	grid := make([]float64, gw*gh)
	buf := make([]float64, 0, cell*cell)
	for gy := 0; gy < gh; gy++ {
		for gx := 0; gx < gw; gx++ {
			buf = buf[:0]
			for y := gy * cell; y < min((gy+1)*cell, h); y++ {
				for x := gx * cell; x < min((gx+1)*cell, w); x++ {
					buf = append(buf, float64(v[y*w+x]))
				}
			}
			grid[gy*gw+gx] = clippedMedian(buf)
		}
	}
	grid = medianFilter3(grid, gw, gh)
	return interpolateGrid(grid, gw, gh, cell, w, h, workers)
}

// clippedMedian is the median of x after iterative κσ clipping around the
// median (σ = madScale · MAD, κ = meshClip, at most meshClipRounds
// rounds). It reorders x.
func clippedMedian(x []float64) float64 {
	if len(x) == 0 {
		return 0
	}
	dev := make([]float64, len(x))
	med := 0.0
	for round := 0; ; round++ {
		med = kthSmallest(x, len(x)/2)
		if round == meshClipRounds {
			return med
		}
		dev = dev[:len(x)]
		for i, v := range x {
			dev[i] = math.Abs(v - med)
		}
		s := madScale * kthSmallest(dev, len(dev)/2)
		kept := x[:0]
		for _, v := range x {
			if math.Abs(v-med) <= meshClip*s {
				kept = append(kept, v)
			}
		}
		if len(kept) == len(x) || len(kept) == 0 {
			return med
		}
		x = kept
	}
}

// medianFilter3 returns the 3x3 median of a gw x gh grid. At the border
// the window shrinks symmetrically about its cell (to 1x3, 3x1 or the
// cell alone), so that a linear trend, whose median over a symmetric
// window is the centre value, passes unchanged.
func medianFilter3(g []float64, gw, gh int) []float64 {
	out := make([]float64, len(g))
	win := make([]float64, 0, 9)
	for y := 0; y < gh; y++ {
		ry := min(1, y, gh-1-y)
		for x := 0; x < gw; x++ {
			rx := min(1, x, gw-1-x)
			win = win[:0]
			for yy := y - ry; yy <= y+ry; yy++ {
				for xx := x - rx; xx <= x+rx; xx++ {
					win = append(win, g[yy*gw+xx])
				}
			}
			out[y*gw+x] = kthSmallest(win, len(win)/2)
		}
	}
	return out
}

// interpolateGrid spreads a gw x gh grid of cell values (cell pixels
// each, values at cell centres) over a w x h image by bilinear
// interpolation, held constant beyond the outer centres. Bands of rows
// run on workers goroutines (workers < 1: GOMAXPROCS); every pixel is
// computed alone, so the result does not depend on the worker count.
func interpolateGrid(grid []float64, gw, gh, cell, w, h, workers int) []float32 {
	return interpolateGridInto(nil, grid, gw, gh, cell, w, h, workers)
}

// interpolateGridInto is interpolateGrid written into dst when it holds
// w·h values (a plane the caller no longer needs), else into a new
// slice; it returns the plane. Every pixel is overwritten.
func interpolateGridInto(dst []float32, grid []float64, gw, gh, cell, w, h, workers int) []float32 {
	out := dst
	if len(out) != w*h {
		out = make([]float32, w*h)
	}
	forGridRows(grid, gw, gh, cell, w, h, workers, func(y int, top, bot []float64, ty float64) {
		interpolateRow(out[y*w:(y+1)*w], top, bot, ty)
	})
	return out
}

// interpolateRow sets row[x] = float32(top[x]·(1-ty) + bot[x]·ty), one
// row of interpolateGrid (forGridRows).
func interpolateRow(row []float32, top, bot []float64, ty float64) {
	top, bot = top[:len(row)], bot[:len(row)]
	for x := range row {
		row[x] = float32(top[x]*(1-ty) + bot[x]*ty)
	}
}

// forGridRows calls fn(y, top, bot, ty) for every image row y of
// interpolateGrid, in bands of rows on workers goroutines: the field at
// pixel (x, y) is float32(top[x]·(1-ty) + bot[x]·ty), top and bottom the
// horizontal interpolations of the two rows of cell centres about y.
// fn must not keep top or bot.
func forGridRows(grid []float64, gw, gh, cell, w, h, workers int, fn func(y int, top, bot []float64, ty float64)) {
	// The horizontal weights are the same on every row.
	xs := make([]int, 2*w)
	txs := make([]float64, w)
	for x := 0; x < w; x++ {
		fx := (float64(x)+0.5)/float64(cell) - 0.5
		x0 := int(math.Floor(fx))
		txs[x] = fx - float64(x0)
		xs[2*x], xs[2*x+1] = min(max(x0, 0), gw-1), min(max(x0+1, 0), gw-1)
	}
	// The rows between two rows of cell centres share their horizontal
	// interpolations (top and bottom); they are computed once per pair
	// of grid rows in a band, the same values as per pixel.
	forRowBands(h, workers, func(ya, yb int) {
		top, bot := make([]float64, w), make([]float64, w)
		last0, last1 := -1, -1
		for y := ya; y < yb; y++ {
			fy := (float64(y)+0.5)/float64(cell) - 0.5
			y0 := int(math.Floor(fy))
			ty := fy - float64(y0)
			y0c, y1c := min(max(y0, 0), gh-1), min(max(y0+1, 0), gh-1)
			if y0c != last0 || y1c != last1 {
				g0, g1 := grid[y0c*gw:(y0c+1)*gw], grid[y1c*gw:(y1c+1)*gw]
				for x := range top {
					tx := txs[x]
					x0c, x1c := xs[2*x], xs[2*x+1]
					top[x] = g0[x0c]*(1-tx) + g0[x1c]*tx
					bot[x] = g1[x0c]*(1-tx) + g1[x1c]*tx
				}
				last0, last1 = y0c, y1c
			}
			fn(y, top, bot, ty)
		}
	})
}

// rowBand is the number of image rows in one work chunk of forRowBands.
const rowBand = 64

// forRowBands calls fn(y0, y1) for fixed bands of rowBand rows of an
// image of h rows on at most workers goroutines (workers < 1:
// GOMAXPROCS). The bands depend on h only, never on the worker count.
func forRowBands(h, workers int, fn func(y0, y1 int)) {
	parallel.Blocks(h, rowBand, workers, func(_, y0, y1 int) { fn(y0, y1) })
}

// Weak small scales: ObjectScale's documentation warns that on packed
// scenes it answers with the thin boundaries between the objects (a
// radius of a few pixels at a Strength near its threshold). Such an
// answer is no object scale here.
const (
	scaleWeakRadius   = 4
	scaleWeakStrength = 20
)

// ObjectRadius is the typical object radius of an ObjectScale estimate,
// or 0 when there is none: not found, or a weak small scale.
func ObjectRadius(sc affinity.ScaleEstimate) float64 {
	if !sc.Found || (sc.Radius < scaleWeakRadius && sc.Strength < scaleWeakStrength) {
		return 0
	}
	return sc.Radius
}
