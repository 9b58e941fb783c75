package affinity

import (
	"math"

	"github.com/cleave-seg/cleave/segment/labelmap"
	"github.com/cleave-seg/cleave/segment/parallel"
)

// SLIC partitions a w x h image into compact superpixels by simple linear
// iterative clustering (Achanta et al. 2012) on the feature planes f
// (each w*h values, row-major, normalized to about 0..1). It returns one
// label per pixel (index y*w + x) in 0..n-1.
//
// K cluster centres start on a regular grid of step S = sqrt(N/K) (N
// pixels, K = p.Count, at most N/4 so that S >= 2) and move to the lowest gradient position
// in their 3x3 neighbourhood, G(x,y) = ‖F(x+1,y) - F(x-1,y)‖² +
// ‖F(x,y+1) - F(x,y-1)‖² (the paper's eq. 3), so they do not start on an
// edge. Each iteration assigns every pixel to the nearest centre among
// those whose 2S x 2S window covers it, by
//
//	D = sqrt(d_c² + (d_s/S)² m²)
//
// with d_c the Euclidean feature distance, d_s the distance in pixels and
// m = p.Compactness/100 (the paper's m on its CIE Lab scale, L in 0..100,
// carried over to features in 0..1), then moves each centre to the mean
// features and position of its pixels. A pixel no window reaches keeps
// its previous label (the grid cell at the start).
//
// Connectivity is then enforced as in the paper: pieces are flood-filled
// in raster order; a piece no larger than a quarter of the expected size
// N/K is merged into the label of its left (or else upper) neighbour,
// which the raster scan has already labelled, while larger pieces become
// superpixels of their own. The piece holding pixel (0,0) has no
// labelled neighbour and stays a superpixel whatever its size, as in the
// paper. Afterwards every superpixel is one 4-connected piece, every pixel
// has exactly one label, and labels are numbered 0..n-1 in raster order of
// their first pixel.
//
// Work is split into horizontal bands whose number depends only on the
// image size and K, run on workers goroutines (workers < 1: all cores);
// each band sums its pixels in raster order and band sums are added in
// band order, so the labels are byte-identical for any worker count.
// It returns a *ParamError for bad parameters and an error for an empty
// image, planes of the wrong length or non-finite features.
func SLIC(f [][]float32, w, h int, p SLICParams, workers int) (labels labelmap.Map, n int, err error) {
	if err := p.Validate(); err != nil {
		return labelmap.Map{}, 0, err
	}
	if err := checkPlanes(f, w, h); err != nil {
		return labelmap.Map{}, 0, err
	}
	iters := p.Iterations
	if iters == 0 {
		iters = 10
	}
	s := newSLICState(f, w, h, p.Count, p.Compactness/100, workers)
	for it := 0; it < iters; it++ {
		// A band's sums need only its own labels: assign sums each
		// row as soon as it is final, while it is in cache.
		_ = parallel.ForErr(s.nb, workers, func(g, b int) error {
			s.assign(b, &s.sweeps[g])
			return nil
		})
		s.update()
	}
	if p.AfterIterations != nil {
		p.AfterIterations()
	}
	expected := w * h / s.k
	labels, n = enforceConnectivity(labelmap.Map{Pix: s.label, Width: w, Height: h}, expected/4, s.dist)
	return labels, n, nil
}

// slicState holds the clustering: centres, per-pixel labels and distances,
// and per-band partial sums for the update step.
type slicState struct {
	f       [][]float32
	w, h, k int
	s       float64   // grid step S = sqrt(N/K): window half-size and spatial scale
	ms      float32   // m² / S²: weight of squared pixel distance
	cx, cy  []float32 // centre positions
	cf      []float32 // centre features, k*planes
	label   []int32
	// dist holds each pixel's smallest D² so far as the bits of a
	// float32 (math.Float32bits): D² is never negative or NaN, and on
	// non-negative floats the order of the bits is the order of the
	// values, so the assignment compares integers, which the compiler
	// turns into conditional moves instead of unpredictable branches.
	dist       []uint32
	nb         int         // bands
	bandSums   []float64   // nb blocks of k*(planes+3): count, Σx, Σy, ΣF
	sweeps     []slicSweep // assign's scratch, one for each goroutine
	sumsStride int
	// span holds, per band, the least and the largest label whose sums
	// assign summed (least > largest: none); the band's entries
	// outside it are zero.
	span [][2]int32
}

func newSLICState(f [][]float32, w, h, count int, m float64, workers int) *slicState {
	N := w * h
	count = max(1, min(count, N/4))
	step := math.Sqrt(float64(N) / float64(count))
	nx := min(max(1, int(math.Round(float64(w)/step))), w)
	ny := min(max(1, int(math.Round(float64(h)/step))), h)
	k := nx * ny
	planes := len(f)
	s := &slicState{f: f, w: w, h: h, k: k, s: math.Sqrt(float64(N) / float64(k))}
	s.ms = float32(m * m / (s.s * s.s))
	s.cx = make([]float32, k)
	s.cy = make([]float32, k)
	s.cf = make([]float32, k*planes)
	for j := 0; j < ny; j++ {
		for i := 0; i < nx; i++ {
			c := j*nx + i
			x := int((float64(i) + 0.5) * float64(w) / float64(nx))
			y := int((float64(j) + 0.5) * float64(h) / float64(ny))
			x, y = s.lowestGradient(x, y)
			s.cx[c], s.cy[c] = float32(x), float32(y)
			for pl := range f {
				s.cf[c*planes+pl] = f[pl][y*w+x]
			}
		}
	}
	// Start from the grid cells, so that a pixel no window reaches in the
	// first iteration still has a label: pixel (x, y) in cell
	// (y·ny/h)·nx + x·nx/w, the column part looked up per x.
	s.label = make([]int32, N)
	col := make([]int32, w)
	for x := range col {
		col[x] = int32(x * nx / w)
	}
	parallel.Blocks(h, 64, workers, func(_, y0, y1 int) {
		for y := y0; y < y1; y++ {
			row := int32(y * ny / h * nx)
			out := s.label[y*w : (y+1)*w]
			for x, c := range col {
				out[x] = row + c
			}
		}
	})
	s.dist = make([]uint32, N)
	s.nb = slicBands(w, h, k)
	s.sumsStride = k * (planes + 3)
	s.bandSums = make([]float64, s.nb*s.sumsStride)
	s.span = make([][2]int32, s.nb)
	for b := range s.span {
		s.span[b] = [2]int32{int32(k), -1}
	}
	s.sweeps = make([]slicSweep, parallel.Goroutines(s.nb, workers))
	win := min(w, 2*int(s.s)+2) // a window's columns and rows, at most
	for g := range s.sweeps {
		s.sweeps[g] = slicSweep{
			wins:       make([]slicWindow, 0, min(slicBatchWindows, k)),
			dx2:        make([]float32, 0, min(slicBatch, k*win)),
			byRow:      make([]int32, 0, min(slicBatch, k*min(h, win))),
			count:      make([]int32, 0, h/s.nb+2),
			next:       make([]int32, 0, h/s.nb+2),
			maxEntries: slicBatch,
			maxWindows: slicBatchWindows,
		}
	}
	return s
}

// slicBands is the number of horizontal bands: at most 16, at least one,
// and few enough that the band sums (nb·K blocks) stay within N/8 blocks
// when K <= N/8. It depends on the image and K only, never on the worker
// count.
func slicBands(w, h, k int) int {
	return max(1, min(16, h, w*h/(8*k)))
}

func (s *slicState) band(b int) (y0, y1 int) {
	return b * s.h / s.nb, (b + 1) * s.h / s.nb
}

// gradient is G(x,y) of Achanta et al. (2012), eq. 3, with the image
// edge replicated.
func (s *slicState) gradient(x, y int) float64 {
	w, h := s.w, s.h
	xl, xr := max(x-1, 0), min(x+1, w-1)
	yu, yd := max(y-1, 0), min(y+1, h-1)
	var g float64
	for _, pl := range s.f {
		dx := float64(pl[y*w+xr]) - float64(pl[y*w+xl])
		dy := float64(pl[yd*w+x]) - float64(pl[yu*w+x])
		g += dx*dx + dy*dy
	}
	return g
}

// lowestGradient returns the position of least gradient in the 3x3
// neighbourhood of (x, y), the first in raster order on ties.
func (s *slicState) lowestGradient(x, y int) (int, int) {
	bx, by, best := x, y, math.Inf(1)
	for yy := max(y-1, 0); yy <= min(y+1, s.h-1); yy++ {
		for xx := max(x-1, 0); xx <= min(x+1, s.w-1); xx++ {
			if g := s.gradient(xx, yy); g < best {
				bx, by, best = xx, yy, g
			}
		}
	}
	return bx, by
}

// window returns the inclusive pixel range of centre c's 2S x 2S window.
func (s *slicState) window(c int) (x0, x1, y0, y1 int) {
	cx, cy := float64(s.cx[c]), float64(s.cy[c])
	x0 = max(0, int(math.Ceil(cx-s.s)))
	x1 = min(s.w-1, int(math.Floor(cx+s.s)))
	y0 = max(0, int(math.Ceil(cy-s.s)))
	y1 = min(s.h-1, int(math.Floor(cy+s.s)))
	return
}

// assign is the assignment step for band b, with sc the scratch of the
// goroutine running it. Centres are visited in index order and a pixel
// moves only to a strictly nearer centre, so the result is that of one
// sequential pass.
//
// The band is swept row by row: the windows that reach the band are
// listed (in index order, with their squared x distances), and each row
// then takes the spans of the listed windows that cover it, in index
// order. Every pixel meets the same centres in the same order, with the
// same float32 operations, as in a sweep centre by centre; only updates
// of different pixels change order, and a row stays in cache while every
// window crossing it is applied, where a sweep centre by centre came
// back to each row once for every window. The list is made in batches of
// consecutive centres (slicBatch bounds its scratch); batches follow
// each other in index order, so a pixel still meets the centres in that
// order. The band's sums are added row by row as each row is finished
// (after the last batch).
func (s *slicState) assign(b int, sc *slicSweep) {
	by0, by1 := s.band(b)
	w := s.w
	dist := s.dist[by0*w : by1*w]
	inf := math.Float32bits(float32(math.Inf(1)))
	for i := range dist {
		dist[i] = inf
	}
	sums := s.startSums(b)
	fb0, fb1 := float64(by0), float64(by1-1)
	rows := by1 - by0
	sc.count = grow32(sc.count, rows+1)
	sc.next = grow32(sc.next, rows)
	for c := 0; c < s.k; {
		c = sc.list(s, c, by0, by1, fb0, fb1)
		last := c == s.k
		for y := by0; y < by1; y++ {
			s.assignRow(y, sc)
			if last {
				sums.row(y)
			}
		}
	}
	s.span[b] = [2]int32{sums.lo, sums.hi}
}

// list lists in sc the windows of centres from c on that reach rows
// by0..by1-1, until slicBatch's bounds would be passed, and the windows
// of each row (sc.byRow from sc.count[r]); it returns the first centre
// not looked at.
func (sc *slicSweep) list(s *slicState, c, by0, by1 int, fb0, fb1 float64) int {
	sc.wins, sc.dx2, sc.byRow = sc.wins[:0], sc.dx2[:0], sc.byRow[:0]
	rows := by1 - by0
	clear(sc.count)
	entries := 0 // window rows listed
	for ; c < s.k; c++ {
		// A centre whose window ends above the band (floor(cy+S) <=
		// cy+S < by0) or starts below it (ceil(cy-S) >= cy-S > by1-1)
		// is passed over before window's roundings.
		if cy := float64(s.cy[c]); cy+s.s < fb0 || cy-s.s > fb1 {
			continue
		}
		x0, x1, y0, y1 := s.window(c)
		y0, y1 = max(y0, by0), min(y1, by1-1)
		if y0 > y1 || x0 > x1 {
			continue
		}
		n, m := x1-x0+1, y1-y0+1
		if len(sc.wins) > 0 && (len(sc.wins) == sc.maxWindows || len(sc.dx2)+n > sc.maxEntries || entries+m > sc.maxEntries) {
			break
		}
		cx := s.cx[c]
		off := len(sc.dx2)
		for x := x0; x <= x1; x++ {
			d := float32(x) - cx
			sc.dx2 = append(sc.dx2, d*d*s.ms)
		}
		sc.wins = append(sc.wins, slicWindow{c: int32(c), x0: int32(x0), y0: int32(y0), y1: int32(y1), off: int32(off), n: int32(n)})
		for y := y0; y <= y1; y++ {
			sc.count[y-by0+1]++
		}
		entries += m
	}
	// The windows of each row, in index order (a counting sort).
	for r := 1; r <= rows; r++ {
		sc.count[r] += sc.count[r-1]
	}
	sc.byRow = grow32(sc.byRow, entries)
	copy(sc.next, sc.count[:rows])
	for k, win := range sc.wins {
		for y := win.y0; y <= win.y1; y++ {
			r := int(y) - by0
			sc.byRow[sc.next[r]] = int32(k)
			sc.next[r]++
		}
	}
	sc.by0 = by0
	return c
}

// assignRow applies to row y the listed windows that cover it, in index
// order.
func (s *slicState) assignRow(y int, sc *slicSweep) {
	w, planes := s.w, len(s.f)
	r := y - sc.by0
	for _, k := range sc.byRow[sc.count[r]:sc.count[r+1]] {
		win := &sc.wins[k]
		c := int(win.c)
		dx2 := sc.dx2[win.off : win.off+win.n]
		lab := win.c
		dy := float32(y) - s.cy[c]
		dy2 := dy * dy * s.ms
		row := y*w + int(win.x0)
		drow := s.dist[row : row+len(dx2)]
		lrow := s.label[row : row+len(dx2)]
		if planes == 1 {
			frow := s.f[0][row : row+len(dx2)]
			fc := s.cf[c]
			if useAVX2 {
				slicRowAVX2(&frow[0], &dx2[0], &drow[0], &lrow[0], len(dx2), fc, dy2, lab)
				continue
			}
			frow, lrow := frow[:len(dx2)], lrow[:len(dx2)]
			for x, d2 := range dx2 {
				d := frow[x] - fc
				D := math.Float32bits(d*d + d2 + dy2)
				old, l := drow[x], lrow[x]
				if D < old {
					old, l = D, lab
				}
				drow[x], lrow[x] = old, l
			}
			continue
		}
		cf := s.cf[c*planes : (c+1)*planes]
		for x, d2 := range dx2 {
			D := d2 + dy2
			for pl, v := range cf {
				d := s.f[pl][row+x] - v
				D += d * d
			}
			if Db := math.Float32bits(D); Db < drow[x] {
				drow[x] = Db
				lrow[x] = lab
			}
		}
	}
}

// slicBatch bounds the squared x distances and the window rows that
// assign lists at once, and slicBatchWindows the windows: at most 1.5
// MiB of scratch a goroutine. A band of a 4 MP frame at 37,631
// superpixels lists about 2,800 windows of 21 x 21 pixels in one batch.
const (
	slicBatch        = 1 << 16
	slicBatchWindows = 1 << 14
)

// slicWindow is one centre's window clipped to a band (assign): the
// centre, its columns from x0 (n of them, their squared x distances at
// off in the batch's dx2), and its rows y0..y1.
type slicWindow struct {
	c, x0, y0, y1, off, n int32
}

// slicSweep is assign's scratch, one for each goroutine, kept between
// iterations: a batch's windows, their squared x distances, and the
// windows of each row of the band (byRow[count[r]:count[r+1]] for row
// by0+r; next is the counting sort's cursor).
type slicSweep struct {
	wins                   []slicWindow
	dx2                    []float32
	count, next, byRow     []int32
	by0                    int
	maxEntries, maxWindows int // a batch's bounds: slicBatch, slicBatchWindows
}

// grow32 returns b resized to n values, reallocated when short.
func grow32(b []int32, n int) []int32 {
	if cap(b) < n {
		return make([]int32, n)
	}
	return b[:n]
}

// bandSums sums count, position and features per label over the rows of
// one band, each row right after assign has finished it (a row is final
// once every window that covers it has been applied), while the row is
// in cache; rows are added in raster order. A row is taken in runs of one label: the count and
// the position sums of a run are integers, exact in float64 (below
// 2^53), so adding them per run gives the sums of adding them per pixel;
// the feature sums are still added pixel by pixel in raster order.
type bandSums struct {
	s      *slicState
	sums   []float64
	stride int
	lo, hi int32 // the least and the largest label summed so far
}

// startSums zeroes what the last iteration wrote into band b's sums (a
// band meets the labels of a few rows of centres, not all of them).
func (s *slicState) startSums(b int) bandSums {
	stride := len(s.f) + 3
	sums := s.bandSums[b*s.sumsStride : (b+1)*s.sumsStride]
	lo, hi := s.span[b][0], s.span[b][1]
	if lo <= hi {
		clear(sums[int(lo)*stride : (int(hi)+1)*stride])
	}
	return bandSums{s: s, sums: sums, stride: stride, lo: int32(s.k), hi: -1}
}

// row adds row y's pixels to the band's sums.
func (bs *bandSums) row(y int) {
	s, sums, stride := bs.s, bs.sums, bs.stride
	lo, hi := bs.lo, bs.hi
	fy := float64(y)
	row := y * s.w
	lab := s.label[row : row+s.w]
	for x0 := 0; x0 < len(lab); {
		l := lab[x0]
		x1 := x0 + 1
		for x1 < len(lab) && lab[x1] == l {
			x1++
		}
		n := x1 - x0
		a := sums[int(l)*stride : int(l)*stride+stride]
		lo, hi = min(lo, l), max(hi, l)
		a[0] += float64(n)
		a[1] += float64((x0 + x1 - 1) * n / 2)
		a[2] += fy * float64(n)
		for pl, p := range s.f {
			acc := a[3+pl]
			for _, v := range p[row+x0 : row+x1] {
				acc += float64(v)
			}
			a[3+pl] = acc
		}
		x0 = x1
	}
	bs.lo, bs.hi = lo, hi
}

// update moves every non-empty cluster's centre to the mean of its pixels,
// adding band sums in band order. An empty cluster keeps its centre. A
// band whose span does not hold a label adds nothing to it: its entries
// there are +0, and adding +0 changes no total (a total starts at +0 and
// is never -0), so every total is the sum over all bands in band order,
// bit for bit.
func (s *slicState) update() {
	planes := len(s.f)
	stride := planes + 3
	acc := make([]float64, stride)
	for c := 0; c < s.k; c++ {
		clear(acc)
		for b := 0; b < s.nb; b++ {
			if sp := s.span[b]; int32(c) < sp[0] || int32(c) > sp[1] {
				continue
			}
			a := s.bandSums[b*s.sumsStride+c*stride : b*s.sumsStride+(c+1)*stride]
			for i, v := range a {
				acc[i] += v
			}
		}
		if acc[0] == 0 {
			continue
		}
		s.cx[c] = float32(acc[1] / acc[0])
		s.cy[c] = float32(acc[2] / acc[0])
		for pl := 0; pl < planes; pl++ {
			s.cf[c*planes+pl] = float32(acc[3+pl] / acc[0])
		}
	}
}

// EstimateSLICBytes returns the peak number of bytes SLIC allocates for a
// w x h image with the given number of feature planes P, as an upper
// bound over every superpixel count: labels and distances (8 bytes per
// pixel), the connectivity pass (output labels and a flood-fill stack, 8
// more), and per-cluster centres and band sums, which take
// K·(4(P+2) + 8(P+3)·bands) bytes and reach their bound, 2(P+3) + (P+2)
// bytes per pixel, only at the limit of one superpixel per 4 pixels (with
// 3000 superpixels on a megapixel they are under 2 MB), and the
// assignment's scratch (slicSweep, bounded by slicBatch). The feature
// planes are the caller's and not included. Nonsensical sizes give 0.
func EstimateSLICBytes(w, h, planes int) int64 {
	if w < 1 || h < 1 || planes < 1 {
		return 0
	}
	N := float64(w) * float64(h)
	P := float64(planes)
	K := max(1, math.Floor(N/4))
	nbK := max(K, math.Floor(N/8)) // slicBands: nb·K <= max(K, N/8)
	nb := math.Min(16, float64(h))
	// A batch's windows, their squared x distances and window rows
	// (slicBatch), and the row counts: K windows of at most 2S+2 columns
	// and rows, K(2S+2) = 2√(NK) + 2K <= 1.5N at K = N/4.
	sweepBytes := allocBytes(24*math.Min(slicBatchWindows, K)) +
		2*allocBytes(4*math.Min(slicBatch, 1.5*N)) + 2*allocBytes(4*(float64(h)+1))
	b := 4*allocBytes(4*N) + // label, dist, output labels, stack
		2*allocBytes(4*K) + allocBytes(4*K*P) + // centres
		allocBytes(8*(P+3)*nbK) + // band sums
		nb*sweepBytes + // assign's scratch, one for each goroutine (at most nb)
		allocBytes(8*nb) + 16<<10 // headers, slack
	if b >= math.MaxInt64 {
		return math.MaxInt64
	}
	return int64(b)
}
