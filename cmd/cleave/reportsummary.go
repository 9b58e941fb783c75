package main

import (
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
)

// sizeHistogram counts the areas of the labels of the region tables in
// bins that double: bin k holds areas from 2^k to 2^(k+1) - 1 pixels.
// Its geometry fields place it in the report's SVG.
type sizeHistogram struct {
	counts map[int]int
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

// objectSizes reads the area_px column of the region table of every ok
// row; nil when there is none or no label.
func objectSizes(dir string, rows []manifestRow) (*sizeHistogram, error) {
	h := &sizeHistogram{counts: map[int]int{}}
	for _, r := range rows {
		if r.Status != rowOK || r.Table == "" {
			continue
		}
		if err := h.addTable(filepath.Join(dir, filepath.FromSlash(r.Table))); err != nil {
			return nil, err
		}
	}
	if h.Total == 0 {
		return nil, nil
	}
	return h, nil
}

func (h *sizeHistogram) addTable(p string) error {
	f, err := os.Open(p)
	if err != nil {
		return err
	}
	defer f.Close()
	cr := csv.NewReader(f)
	cr.ReuseRecord = true
	head, err := cr.Read()
	if err != nil {
		return fmt.Errorf("%s: %w", p, err)
	}
	col := slices.Index(head, "area_px")
	if col < 0 {
		return nil // a table of an earlier version
	}
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			return nil
		}
		if err != nil {
			return fmt.Errorf("%s: %w", p, err)
		}
		a, err := strconv.Atoi(rec[col])
		if err != nil || a < 1 {
			return fmt.Errorf("%s: area_px %q is not a pixel count", p, rec[col])
		}
		h.counts[binOf(a)]++
		h.Total++
	}
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
// no image has objects: a run without --background) for the report.
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
