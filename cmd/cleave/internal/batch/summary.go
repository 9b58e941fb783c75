package batch

import (
	"fmt"
	"math"
	"slices"
	"strconv"
)

// sizeHistogram counts the areas of the labels of the region tables in
// bins that double: bin k holds areas from 2^k to 2^(k+1) - 1 pixels.
// Its geometry fields place it in the report's SVG.
type sizeHistogram struct {
	counts map[int]int
	err    error // the first area_px cell that was not a pixel count
	Total  int
	// Drawing, set by layout.
	Bars          []sizeBar
	Ticks         []sizeTick
	X0, X1, Base  int
	TickY, LabelY int
}

type sizeBar struct {
	X, Y, W, H, Mid, CountY int
	Count                   int
	Lo, Hi                  int // the bin's areas, inclusive
}

type sizeTick struct {
	X    int
	Text string
}

// binOf is the doubling bin of an area: floor(log2 area).
func binOf(area int) int {
	k := 0
	for area > 1 {
		area >>= 1
		k++
	}
	return k
}

// newSizeHistogram returns an empty histogram for add.
func newSizeHistogram() *sizeHistogram {
	return &sizeHistogram{counts: map[int]int{}}
}

// add counts one area_px cell of the region table at p. A cell that is
// not a pixel count is kept as the histogram's error (the first one),
// which stops the report.
func (h *sizeHistogram) add(p, cell string) {
	a, err := strconv.Atoi(cell)
	if err != nil || a < 1 {
		if h.err == nil {
			h.err = fmt.Errorf("%s: area_px %q is not a pixel count", p, cell)
		}
		return
	}
	h.counts[binOf(a)]++
	h.Total++
}

// Histogram size in the report, pixels.
const histW, histH = 560, 190

// layout places the bars: one per bin from the smallest to the largest
// bin holding an area, heights proportional to the counts, the count
// above each bar and the lower end of every other bin below.
func (h *sizeHistogram) layout() {
	lo, hi := math.MaxInt, math.MinInt
	maxCount := 0
	for k, c := range h.counts {
		lo, hi = min(lo, k), max(hi, k)
		maxCount = max(maxCount, c)
	}
	n := hi - lo + 1
	h.X0, h.X1, h.Base = 10, histW-10, histH-40
	top := 18
	slot := (h.X1 - h.X0) / n
	w := max(2, slot*4/5)
	h.TickY, h.LabelY = h.Base+14, h.Base+32
	h.Bars, h.Ticks = nil, nil
	for i := range n {
		k := lo + i
		c := h.counts[k]
		bh := int(math.Round(float64(h.Base-top) * float64(c) / float64(maxCount)))
		x := h.X0 + i*slot + (slot-w)/2
		h.Bars = append(h.Bars, sizeBar{X: x, Y: h.Base - bh, W: w, H: bh, Mid: x + w/2, CountY: h.Base - bh - 4, Count: c, Lo: 1 << k, Hi: 1<<(k+1) - 1})
		if i%2 == 0 || n <= 8 {
			h.Ticks = append(h.Ticks, sizeTick{X: h.X0 + i*slot, Text: strconv.Itoa(1 << k)})
		}
	}
}

// summarize counts the ok images and their objects (their regions when
// no image has objects: a run without a background) for the report.
func summarize(rows []manifestRow, sizes *sizeHistogram) reportSummary {
	var counts []int
	objects := false
	for _, r := range rows {
		if r.Status == rowOK && r.Objects > 0 {
			objects = true
		}
	}
	s := reportSummary{Unit: "regions"}
	if objects {
		s.Unit = "objects"
	}
	for _, r := range rows {
		if r.Status != rowOK {
			continue
		}
		n := r.Regions
		if objects {
			n = r.Objects
		}
		counts = append(counts, n)
		s.Count += n
	}
	s.Images = len(counts)
	if s.Images > 0 {
		slices.Sort(counts)
		s.Min, s.Max = counts[0], counts[len(counts)-1]
		m := float64(counts[len(counts)/2])
		if len(counts)%2 == 0 {
			m = (m + float64(counts[len(counts)/2-1])) / 2
		}
		s.Median = strconv.FormatFloat(m, 'f', -1, 64)
		s.Mean = strconv.FormatFloat(float64(s.Count)/float64(s.Images), 'f', 1, 64)
	}
	if sizes != nil {
		sizes.layout()
		s.Histogram, s.HistogramW, s.HistogramH = sizes, histW, histH
	}
	return s
}
