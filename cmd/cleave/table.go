package main

import (
	"encoding/csv"
	"io"
	"math"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"
)

// regionRow holds the measurements of one label.
type regionRow struct {
	label                  int32
	area                   int
	sumX, sumY             float64
	x0, y0, x1, y1         int
	sum, sumSq, minV, maxV float64
	perimeter              int
}

// measureRegions measures every label > 0 of labels on the raw intensity
// plane (the image's own units). The perimeter is the crack length: the
// number of unit pixel edges between the label and anything else
// (another label or the image border), common practice for a
// 4-connected boundary. The equivalent diameter is that of the disc of
// the same area, sqrt(4 A / pi).
func measureRegions(labels []int32, raw []float32, w, h int) []*regionRow {
	var maxLabel int32
	for _, l := range labels {
		maxLabel = max(maxLabel, l)
	}
	rows := make([]*regionRow, maxLabel+1)
	at := func(x, y int) int32 {
		if x < 0 || y < 0 || x >= w || y >= h {
			return -1
		}
		return labels[y*w+x]
	}
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			l := labels[y*w+x]
			if l <= 0 {
				continue
			}
			r := rows[l]
			if r == nil {
				r = &regionRow{label: l, x0: x, y0: y, x1: x, y1: y, minV: math.Inf(1), maxV: math.Inf(-1)}
				rows[l] = r
			}
			v := float64(raw[y*w+x])
			r.area++
			r.sumX += float64(x)
			r.sumY += float64(y)
			r.x0, r.y0, r.x1, r.y1 = min(r.x0, x), min(r.y0, y), max(r.x1, x), max(r.y1, y)
			r.sum += v
			r.sumSq += v * v
			r.minV, r.maxV = math.Min(r.minV, v), math.Max(r.maxV, v)
			for _, d := range [4][2]int{{1, 0}, {-1, 0}, {0, 1}, {0, -1}} {
				if at(x+d[0], y+d[1]) != l {
					r.perimeter++
				}
			}
		}
	}
	var out []*regionRow
	for _, r := range rows {
		if r != nil {
			out = append(out, r)
		}
	}
	return out
}

// writeRegionTable writes the region table as CSV (encoding/csv), one row
// per label in ascending order. With pixelSize > 0, area and diameter are
// also given in unit² and unit; unit has passed checkUnit, so the header
// needs no quoting and starts no formula. Every other cell is a number.
func writeRegionTable(w io.Writer, rows []*regionRow, pixelSize float64, unit string) error {
	cw := csv.NewWriter(w)
	head := []string{"label", "area_px", "centroid_x", "centroid_y", "bbox_x0", "bbox_y0", "bbox_x1", "bbox_y1", "mean", "std", "min", "max", "perimeter_px", "equiv_diameter_px"}
	if pixelSize > 0 {
		head = append(head, "area_"+unit+"2", "equiv_diameter_"+unit)
	}
	if err := cw.Write(head); err != nil {
		return err
	}
	f := func(v float64, prec int) string { return strconv.FormatFloat(v, 'f', prec, 64) }
	d := strconv.Itoa
	for _, r := range rows {
		a := float64(r.area)
		mean := r.sum / a
		variance := math.Max(r.sumSq/a-mean*mean, 0)
		diam := math.Sqrt(4 * a / math.Pi)
		rec := []string{d(int(r.label)), d(r.area), f(r.sumX/a, 2), f(r.sumY/a, 2), d(r.x0), d(r.y0), d(r.x1), d(r.y1),
			f(mean, 3), f(math.Sqrt(variance), 3), f(r.minV, 3), f(r.maxV, 3), d(r.perimeter), f(diam, 3)}
		if pixelSize > 0 {
			rec = append(rec, strconv.FormatFloat(a*pixelSize*pixelSize, 'g', 6, 64), strconv.FormatFloat(diam*pixelSize, 'g', 6, 64))
		}
		if err := cw.Write(rec); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// maxUnitLen is the longest --unit, in characters.
const maxUnitLen = 16

// checkUnit accepts a short unit name for the region table's column
// names: 1 to maxUnitLen letters (µ included), digits, '/', '^' or '_'.
// No such name needs CSV quoting or can start a spreadsheet formula.
func checkUnit(unit string) error {
	n := 0
	for _, r := range unit {
		n++
		if !unicode.IsLetter(r) && !unicode.IsDigit(r) && !strings.ContainsRune("µ/^_", r) {
			return usagef("--unit must be a short unit name (letters, digits, µ, /, ^ or _), got %q", unit)
		}
	}
	if n == 0 || n > maxUnitLen || !utf8.ValidString(unit) {
		return usagef("--unit must be a unit name of 1 to %d characters, got %q", maxUnitLen, unit)
	}
	return nil
}

// csvText neutralizes a text cell of a CSV table (a file name, a path, an
// error message) that a spreadsheet would read as a formula: a cell
// starting with =, +, -, @, a tab or a carriage return gets a leading
// single quote, as the OWASP guidance on CSV injection recommends. Number
// cells are never passed through it, so -1.5 stays a number.
func csvText(s string) string {
	if s != "" && strings.ContainsRune("=+-@\t\r", rune(s[0])) {
		return "'" + s
	}
	return s
}
