package segment

import (
	"math"
	"slices"
	"sort"

	"github.com/cleave-seg/cleave/segment/labelmap"
	"github.com/cleave-seg/cleave/segment/parallel"
)

// Shading compensation constants (common practice for background
// estimation by normalized convolution; the values were chosen on the
// project's synthetic scenes).
const (
	fieldScale     = 8.0  // background field Gaussian σ = max(w,h)/fieldScale
	fieldFloor     = 0.05 // smallest background level divided by, in normalized units (backgroundRatio)
	classRounds    = 3    // alternations of field estimate and regrouping
	fieldGridCells = 64   // the field is estimated on about this many cells across
	scoreFloor     = 1e-3 // smallest ratio I/B before the logarithm
)

// regionStats holds per-region area and mean of each feature plane.
type regionStats struct {
	area []float64
	mean [][]float64 // [plane][region]
}

// statsOf returns the pixel count and the mean of each plane of every
// region of reg (labels 0..n-1). The pixel count and each plane's sums
// are separate passes over the label map, run side by side on up to
// workers goroutines (workers < 1: GOMAXPROCS): each pass adds in raster
// order into its own totals, so every total is the one a single pass
// gives, for any worker count.
func statsOf(planes [][]float32, reg []int32, n, workers int) regionStats {
	st := regionStats{area: make([]float64, n), mean: make([][]float64, len(planes))}
	for c := range planes {
		st.mean[c] = make([]float64, n)
	}
	parallel.For(1+len(planes), workers, func(k int) {
		if k == 0 {
			countLabels(reg, st.area)
			return
		}
		sumLabels(reg, planes[k-1], st.mean[k-1], nil)
	})
	for _, s := range st.mean {
		for r := range s {
			if st.area[r] > 0 {
				s[r] /= st.area[r]
			}
		}
	}
	return st
}

// groupClasses assigns each region a class 0..C-1, numbered from darkest to
// brightest by area-weighted mean luminance.
//
// With one feature plane the regions are grouped by a shading-compensated
// score of the luminance plane lum: s_r = log of the mean over the region of
// I(x)/B(x), where B is a smooth field of the reference class (the
// background: darkest class with background "dark", brightest with
// "bright", otherwise the class of largest area) estimated by normalized
// convolution, B = G*(I·m)/G*m with m the reference-class mask and G a
// wide Gaussian (Knutsson and Westin 1993). Each region is thus judged
// against the background around it rather than one global level, so
// illumination falloff and haze do not move the class boundary. Scores are
// split by Otsu's method (C = 2, weighted by area, exact) or weighted
// k-means (C > 2), then B is re-estimated from the new grouping; at most
// classRounds rounds. With a named background (dark or bright), when the
// first grouping makes one connected object of over half the image, it is
// redone against a background mesh that needs no grouping
// (initialScores), and in every round the scores of regions that
// cannot be objects are clamped to the background's level
// (backgroundSide); radius gives the image's typical object radius in
// pixels (affinity.ObjectScale), 0 when unknown, and is called only when
// the mesh is needed. When the grouping settles, grid is the grid of B
// of the final grouping (callers reuse it; its plane is B); otherwise
// grid is nil. With several feature planes (CIE Lab) the region mean
// vectors are grouped by area-weighted k-means without shading
// compensation, and grid is nil.
func groupClasses(planes [][]float32, lum []float32, regions labelmap.Map, n, C int, background Background, radius func() float64, seed uint64, workers int) (cls []int32, grid *fieldGrid) {
	w, h, reg := regions.Width, regions.Height, regions.Pix
	st := statsOf([][]float32{lum}, reg, n, workers)
	if len(planes) > 1 {
		mv := statsOf(planes, reg, n, workers).mean
		x := make([]float64, n*len(planes))
		for r := 0; r < n; r++ {
			for c := range planes {
				x[r*len(planes)+c] = mv[c][r]
			}
		}
		cls := kmeans(x, n, len(planes), C, st.area, kmeansRestarts, seed, 1)
		return asBackground(orderClasses(cls, st.mean[0], st.area, C), C, background), nil
	}
	score := append([]float64(nil), st.mean[0]...)
	cls = asBackground(split1D(score, st.area, C, seed), C, background)
	if (background == "dark" || background == "bright") && objectShare(cls, regions, st.area, C, background, workers) > 0.5 {
		// Objects stand out from a background around them; a first
		// grouping whose objects include one piece over half the field
		// has taken uneven background (haze, a glow with dark corners)
		// for an object. Start again against the local background mesh,
		// which needs no grouping (see initialScores).
		initialScores(score, lum, regions, st.area, radius(), background, workers)
		cls = asBackground(split1D(score, st.area, C, seed), C, background)
	}
	// The mask and the field of one round are written over the last
	// round's (fewer frame-sized allocations; every value is rewritten).
	var mask []bool
	var field []float32
	for round := 0; round < classRounds; round++ {
		ref := referenceClass(cls, st.area, C, background)
		if mask == nil {
			mask = make([]bool, len(reg))
		}
		if !maskOfClass(mask, reg, cls, ref, workers) {
			return cls, nil
		}
		grid = smoothFieldGrid(lum, mask, w, h, float64(max(w, h))/fieldScale, workers)
		sum := make([]float64, n)
		field = grid.planeRatioSums(field, lum, reg, sum, workers)
		for r := range score {
			if st.area[r] > 0 {
				score[r] = math.Log(math.Max(sum[r]/st.area[r], scoreFloor))
			}
		}
		backgroundSide(score, background)
		next := asBackground(split1D(score, st.area, C, seed), C, background)
		if C == 2 && (background == "dark" || background == "bright") {
			next = noiseBound(next, score, lum, field, mask, background)
		}
		if slices.Equal(next, cls) {
			return cls, grid // the field was estimated from this very grouping
		}
		cls = next
	}
	return cls, nil
}

// maskOfClass sets mask[i] to whether pixel i's region (reg) is of class
// c (cls per region), in fixed blocks of pixels on workers goroutines,
// and reports whether any pixel is. Every value of mask is written.
func maskOfClass(mask []bool, reg, cls []int32, c int32, workers int) bool {
	const block = 1 << 16
	found := make([]bool, (len(reg)+block-1)/block)
	parallel.Blocks(len(reg), block, workers, func(b, lo, hi int) {
		m, any := mask[lo:hi], false
		for k, r := range reg[lo:hi] {
			in := cls[r] == c
			m[k] = in
			any = any || in
		}
		found[b] = any
	})
	return slices.Contains(found, true)
}

// initialScores sets score[r] to log of the mean over region r of I/B₀,
// B₀ the local background mesh of lum (meshBackground, cells from the
// object radius, see meshCell). Grouping raw brightness first fails on
// haze: a bright, uneven glow over most of the field with dark corners
// splits into "dark corners" against "everything else", the field is then
// estimated from the corners alone, and the whole glow stands out from it
// as one huge object in every later round. B₀ depends on the image only,
// so the glow scores near 0 like any other background and the first
// grouping is already one of objects against their local background.
func initialScores(score []float64, lum []float32, regions labelmap.Map, area []float64, radius float64, background Background, workers int) {
	w, h, reg := regions.Width, regions.Height, regions.Pix
	b0 := meshBackground(lum, w, h, meshCell(radius, w, h), workers)
	sum := make([]float64, len(score))
	sumRatioLabels(reg, lum, b0, sum)
	for r := range score {
		if area[r] > 0 {
			score[r] = math.Log(math.Max(sum[r]/area[r], scoreFloor))
		}
	}
	backgroundSide(score, background)
}

// backgroundSide clamps to 0 (the background's level) the scores
// log(I/B) of regions on the background's side of it: darker than their
// local background on a dark field, brighter on a bright one. Objects
// stand out from their local background by definition, so such a region
// is background. Without the clamp, a large dark area (vignetted corners
// under a bright glow) pulls Otsu's threshold below 0 and the background
// itself becomes the object class. Other backgrounds are left as they
// are.
func backgroundSide(score []float64, background Background) {
	for r, v := range score {
		switch background {
		case "dark":
			score[r] = math.Max(v, 0)
		case "bright":
			score[r] = math.Min(v, 0)
		}
	}
}

// asBackground puts every region into the background class when the
// grouping found one class only (a single region, or regions of one
// level): nothing stands out, so there are no objects. Without a named
// background it returns cls as it is.
func asBackground(cls []int32, C int, background Background) []int32 {
	if background != "dark" && background != "bright" {
		return cls
	}
	for _, c := range cls {
		if c != cls[0] {
			return cls
		}
	}
	ref := referenceClass(cls, nil, C, background)
	for r := range cls {
		cls[r] = ref
	}
	return cls
}

// rejudge groups again the regions marked in dropped (regions of objects
// that went back to the background as shading, see edgeless) after the
// background field has been estimated with them in it: each region r
// gets the score s_r = log of the mean of I/B over its pixels, clamped
// to the background's side (backgroundSide), and the scores of all
// regions are split as in groupClasses (Otsu's threshold, weighted by
// area, with the noise rule of noiseBound, the noise measured on the
// background pixels of the new grouping). Only the dropped regions may
// change class; the others keep theirs. A nucleus that touched a glow
// the first grouping took for an object went to the background with the
// glow (they were one object without an edge on its outline as a whole);
// against a field that now follows the glow it stands out again, while
// the glow scores near 0. It reports whether any region changed.
func rejudge(cls []int32, dropped []bool, lum, field []float32, reg []int32, bg int32, background Background, workers int) bool {
	if background != "dark" && background != "bright" {
		return false
	}
	n := len(cls)
	sum := make([]float64, n)
	ref := make([]bool, len(reg))
	// The region statistics, the score sums and the background mask are
	// independent passes over the label map, run side by side (each as
	// one pass would make it, for any worker count).
	var st regionStats
	parallel.For(3, workers, func(k int) {
		switch k {
		case 0:
			st = statsOf([][]float32{lum}, reg, n, workers)
		case 1:
			sumRatioLabels(reg, lum, field, sum)
		default:
			for i, r := range reg {
				ref[i] = cls[r] == bg
			}
		}
	})
	score := make([]float64, n)
	for r := range score {
		if st.area[r] > 0 {
			score[r] = math.Log(math.Max(sum[r]/st.area[r], scoreFloor))
		}
	}
	backgroundSide(score, background)
	next := asBackground(split1D(score, st.area, 2, 0), 2, background)
	next = noiseBound(next, score, lum, field, ref, background)
	changed := false
	for r := range cls {
		if dropped[r] && next[r] != bg {
			cls[r] = next[r]
			changed = true
		}
	}
	return changed
}

// detectSigmas is k in the detection rule "brighter (darker) than the
// local background by more than k noise standard deviations", common
// practice for spot and object detection in fluorescence microscopy
// (k = 3 is the usual choice).
const detectSigmas = 3

// noiseBound lets a region join the objects when Otsu's threshold left
// it in the background although it stands out from the local background
// by more than detectSigmas noise standard deviations of a background
// pixel: score > log(1 + k·c) for dark backgrounds, score < log(1 - k·c)
// for bright ones, c = noiseCV(...). Otsu's split of area-weighted scores
// falls between the background and the bulk of the objects, so faint
// objects end up in the background (in the project's nuclei scenes the
// faint nuclei stand at I/B 2.3 to 2.7, the bright ones at 6 to 9, the
// threshold at about 2.7, and c is about 0.2); the noise rule keeps them.
// It only ever moves regions out of the background class.
func noiseBound(cls []int32, score []float64, lum, field []float32, ref []bool, background Background) []int32 {
	c, ok := noiseCV(lum, field, ref)
	if !ok {
		return cls
	}
	out := append([]int32(nil), cls...)
	if background == "dark" {
		t := math.Log1p(detectSigmas * c)
		for r, v := range score {
			if v > t {
				out[r] = 1
			}
		}
		return out
	}
	if f := 1 - detectSigmas*c; f > scoreFloor {
		t := math.Log(f)
		for r, v := range score {
			if v < t {
				out[r] = 0
			}
		}
	}
	return out
}

// madScale is 1/Φ⁻¹(3/4): the median absolute deviation times madScale
// estimates the standard deviation of normal data (common practice).
const madScale = 1.482602218505602

// noiseCV estimates the noise of the background pixels (ref) relative to
// the background field: c = madScale · median |I/B - 1| over at most
// about 65536 of them (every stride-th pixel). ok is false when ref
// marks no pixel.
func noiseCV(lum, field []float32, ref []bool) (c float64, ok bool) {
	stride := max(1, len(lum)>>16)
	var dev []float64
	for i := 0; i < len(lum); i += stride {
		if ref[i] {
			dev = append(dev, math.Abs(float64(lum[i])/floorField(float64(field[i]))-1))
		}
	}
	if len(dev) == 0 {
		return 0, false
	}
	return madScale * kthSmallest(dev, len(dev)/2), true
}

// kthSmallest returns the k-th smallest value of v (0-based), reordering
// v: Hoare's selection (quickselect) with the median of three as pivot,
// linear time on average, the same value a full sort would give. On
// float32 values it selects the element it would select on their float64
// conversions (exact, and in the same order).
func kthSmallest[T float32 | float64](v []T, k int) T {
	lo, hi := 0, len(v)-1
	for lo < hi {
		mid := lo + (hi-lo)/2
		// Median of three to v[mid].
		if v[mid] < v[lo] {
			v[mid], v[lo] = v[lo], v[mid]
		}
		if v[hi] < v[lo] {
			v[hi], v[lo] = v[lo], v[hi]
		}
		if v[hi] < v[mid] {
			v[hi], v[mid] = v[mid], v[hi]
		}
		pivot := v[mid]
		i, j := lo, hi
		for i <= j {
			for v[i] < pivot {
				i++
			}
			for v[j] > pivot {
				j--
			}
			if i <= j {
				v[i], v[j] = v[j], v[i]
				i++
				j--
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return v[k]
		}
	}
	return v[k]
}

// split1D groups scalar scores into C classes numbered by increasing score.
func split1D(v, wt []float64, C int, seed uint64) []int32 {
	cls := make([]int32, len(v))
	if C == 2 {
		if t, ok := otsuWeighted(v, wt); ok {
			for r := range v {
				if v[r] > t {
					cls[r] = 1
				}
			}
		}
		return cls
	}
	cls = kmeans(v, len(v), 1, C, wt, kmeansRestarts, seed, 1)
	return orderClasses(cls, v, wt, C)
}

// orderClasses renumbers classes by increasing weighted mean of key.
func orderClasses(cls []int32, key, wt []float64, C int) []int32 {
	s := make([]float64, C)
	a := make([]float64, C)
	for r, c := range cls {
		s[c] += wt[r] * key[r]
		a[c] += wt[r]
	}
	idx := make([]int, C)
	for i := range idx {
		idx[i] = i
		if a[i] > 0 {
			s[i] /= a[i]
		} else {
			s[i] = math.Inf(1)
		}
	}
	sort.SliceStable(idx, func(x, y int) bool { return s[idx[x]] < s[idx[y]] })
	rank := make([]int32, C)
	for k, c := range idx {
		rank[c] = int32(k)
	}
	out := make([]int32, len(cls))
	for r, c := range cls {
		out[r] = rank[c]
	}
	return out
}

func referenceClass(cls []int32, area []float64, C int, background Background) int32 {
	switch background {
	case "dark":
		return 0
	case "bright":
		return int32(C - 1)
	}
	a := make([]float64, C)
	for r, c := range cls {
		a[c] += area[r]
	}
	best := int32(0)
	for c := 1; c < C; c++ {
		if a[c] > a[best] {
			best = int32(c)
		}
	}
	return best
}

// fieldGrid is a smooth field before its interpolation: the gw x gh grid
// of cell values (cell pixels each) that interpolateGrid spreads over the
// w x h image. A caller that needs the field again much later keeps the
// grid instead of the plane: plane gives the same values again.
type fieldGrid struct {
	grid               []float64
	gw, gh, cell, w, h int
}

// plane is the field over the image (interpolateGridInto, into dst when
// it holds w·h values).
func (g *fieldGrid) plane(dst []float32, workers int) []float32 {
	return interpolateGridInto(dst, g.grid, g.gw, g.gh, g.cell, g.w, g.h, workers)
}

// planeRatioSums is the plane of g (into dst when it holds w·h values)
// and, added into sum, the region sums of lum / max(field, fieldFloor)
// over reg in raster order: sumRatioLabels(reg, lum, plane, sum). The
// plane's bands of rows (forRowBands) are made on the workers while the
// calling goroutine adds the bands in order, each once it is complete:
// the serial sums no longer wait for the whole plane. A run of one label
// across two bands is added in two pieces, the total stored and loaded
// again between them, which are the same additions in the same order;
// so the sums are bit for bit sumRatioLabels' on the finished plane.
func (g *fieldGrid) planeRatioSums(dst []float32, lum []float32, reg []int32, sum []float64, workers int) []float32 {
	w, h := g.w, g.h
	out := dst
	if len(out) != w*h {
		out = make([]float32, w*h)
	}
	nb := (h + rowBand - 1) / rowBand
	ready := make([]chan struct{}, nb)
	for b := range ready {
		ready[b] = make(chan struct{})
	}
	go forGridRows(g.grid, g.gw, g.gh, g.cell, w, h, workers, func(y int, top, bot []float64, ty float64) {
		interpolateRow(out[y*w:(y+1)*w], top, bot, ty)
		// forRowBands takes the rows of a band in order: the band is
		// complete with its last row.
		if y == h-1 || (y+1)%rowBand == 0 {
			close(ready[y/rowBand])
		}
	})
	for b := range ready {
		<-ready[b]
		lo, hi := b*rowBand*w, min(h, (b+1)*rowBand)*w
		sumRatioLabels(reg[lo:hi], lum[lo:hi], out[lo:hi], sum)
	}
	return out
}

// smoothFieldGrid estimates a smooth field from the pixels where mask is
// true by normalized convolution with a Gaussian of standard deviation
// sigma pixels, computed on a coarse grid of about fieldGridCells cells
// across (the grid, to be interpolated bilinearly by plane). Cells with
// no masked pixel within reach take the mean of all masked pixels. The
// cell sums are taken one row of cells at a time on the workers (cells
// do not straddle rows of cells, so every cell still adds its pixels in
// raster order), and the mean of all masked pixels, in raster order,
// only when a cell needs it.
func smoothFieldGrid(v []float32, mask []bool, w, h int, sigma float64, workers int) *fieldGrid {
	return fieldGridOfRuns(v, w, h, sigma, workers, func(y int, f func(x0, x1 int)) {
		m := mask[y*w : (y+1)*w]
		for x0 := 0; x0 < w; {
			x1 := x0 + 1
			for x1 < w && m[x1] == m[x0] {
				x1++
			}
			if m[x0] {
				f(x0, x1)
			}
			x0 = x1
		}
	})
}

// smoothFieldGridOfClass is smoothFieldGrid with the mask of the pixels
// whose region (reg) is of class c (cls per region) read from the
// region map directly, without a mask plane: each row is taken in runs of
// one region. Every cell adds its pixels in raster order as
// smoothFieldGrid does, so the grid is the same bit for bit.
func smoothFieldGridOfClass(v []float32, reg, cls []int32, c int32, w, h int, sigma float64, workers int) *fieldGrid {
	return fieldGridOfRuns(v, w, h, sigma, workers, func(y int, f func(x0, x1 int)) {
		rr := reg[y*w : (y+1)*w]
		for x0 := 0; x0 < w; {
			x1 := runEnd(rr, x0)
			if cls[rr[x0]] == c {
				f(x0, x1)
			}
			x0 = x1
		}
	})
}

// fieldGridOfRuns is the field's grid over the pixels that runs names:
// runs(y, f) calls f(x0, x1) for each run [x0, x1) of row y's masked
// pixels, left to right. Each cell's sum adds its pixels one by one in
// raster order (addCells), on row bands of workers goroutines, and the
// mean of all masked pixels, when finishFieldGrid asks for it, adds them
// in raster order too: the grid does not depend on how the mask is read.
func fieldGridOfRuns(v []float32, w, h int, sigma float64, workers int, runs func(y int, f func(x0, x1 int))) *fieldGrid {
	cell, gw, gh := fieldCells(w, h)
	sum := make([]float64, gw*gh)
	cnt := make([]float64, gw*gh)
	parallel.For(gh, workers, func(gy int) {
		s, n := sum[gy*gw:(gy+1)*gw], cnt[gy*gw:(gy+1)*gw]
		for y := gy * cell; y < min(h, (gy+1)*cell); y++ {
			row := v[y*w : (y+1)*w]
			runs(y, func(x0, x1 int) { addCells(s, n, row, x0, x1, cell) })
		}
	})
	return finishFieldGrid(sum, cnt, gw, gh, cell, w, h, sigma, func() float64 {
		var tot float64
		for y := 0; y < h; y++ {
			row := v[y*w : (y+1)*w]
			runs(y, func(x0, x1 int) {
				for _, x := range row[x0:x1] {
					tot += float64(x)
				}
			})
		}
		return tot
	})
}

// addCells adds row[x0:x1] to the cell sums s (cell pixels a cell,
// pixel by pixel in order) and the count of each cell's pixels to n.
func addCells(s, n []float64, row []float32, x0, x1, cell int) {
	for x0 < x1 {
		cx := x0 / cell
		e := min(x1, (cx+1)*cell)
		acc := s[cx]
		for _, x := range row[x0:e] {
			acc += float64(x)
		}
		s[cx] = acc
		n[cx] += float64(e - x0) // counts: exact
		x0 = e
	}
}

// fieldCells is the cell size of smoothFieldGrid's grid and its gw x gh
// cells for a w x h image.
func fieldCells(w, h int) (cell, gw, gh int) {
	cell = max(1, (max(w, h)+fieldGridCells-1)/fieldGridCells)
	return cell, (w + cell - 1) / cell, (h + cell - 1) / cell
}

// finishFieldGrid turns the cell sums and counts of masked pixels into
// the field's grid: both blurred (normalized convolution), their quotient
// where the blurred count is above a thousandth of a cell, else the mean
// of all masked pixels (total() their sum, called once if needed).
func finishFieldGrid(sum, cnt []float64, gw, gh, cell, w, h int, sigma float64, total func() float64) *fieldGrid {
	var totN float64
	for _, n := range cnt {
		totN += n // counts: exact
	}
	sg := sigma / float64(cell)
	sum = blurGrid(sum, gw, gh, sg)
	cnt = blurGrid(cnt, gw, gh, sg)
	global := math.NaN() // the mean of all masked pixels, once needed
	grid := make([]float64, gw*gh)
	minCnt := 1e-3 * float64(cell*cell)
	for c := range grid {
		if cnt[c] > minCnt {
			grid[c] = sum[c] / cnt[c]
			continue
		}
		if math.IsNaN(global) {
			global = total() / math.Max(totN, 1)
		}
		grid[c] = global
	}
	return &fieldGrid{grid: grid, gw: gw, gh: gh, cell: cell, w: w, h: h}
}

// blurGrid convolves a gw x gh grid with a separable Gaussian of σ cells,
// truncated at 3σ, with zero padding (normalized convolution divides the
// zero-padding effect out).
func blurGrid(g []float64, gw, gh int, sigma float64) []float64 {
	if sigma <= 0 {
		return g
	}
	rad := int(math.Ceil(3 * sigma))
	k := make([]float64, 2*rad+1)
	for i := range k {
		d := float64(i - rad)
		k[i] = math.Exp(-d * d / (2 * sigma * sigma))
	}
	tmp := make([]float64, len(g))
	for y := 0; y < gh; y++ {
		for x := 0; x < gw; x++ {
			var s float64
			for t := -rad; t <= rad; t++ {
				if xx := x + t; xx >= 0 && xx < gw {
					s += k[t+rad] * g[y*gw+xx]
				}
			}
			tmp[y*gw+x] = s
		}
	}
	out := make([]float64, len(g))
	for y := 0; y < gh; y++ {
		for x := 0; x < gw; x++ {
			var s float64
			for t := -rad; t <= rad; t++ {
				if yy := y + t; yy >= 0 && yy < gh {
					s += k[t+rad] * tmp[yy*gw+x]
				}
			}
			out[y*gw+x] = s
		}
	}
	return out
}

// objectShare is the fraction of the image covered by the largest
// connected piece (4-neighbours) of pixels outside the background class of
// cls (area per region).
func objectShare(cls []int32, regions labelmap.Map, area []float64, C int, background Background, workers int) float64 {
	w, h, reg := regions.Width, regions.Height, regions.Pix
	ref := referenceClass(cls, area, C, background)
	group := make([]int32, len(cls)) // per region
	for r, c := range cls {
		group[r] = -1
		if c != ref {
			group[r] = 0
		}
	}
	lab, n := componentsOfRegions(reg, group, w, h, 0, workers)
	size := make([]int, n+1)
	countLabels(lab, size)
	big := 0
	for l := 1; l <= n; l++ {
		big = max(big, size[l])
	}
	return float64(big) / float64(len(reg))
}
