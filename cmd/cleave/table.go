package main

import (
	"encoding/csv"
	"io"
	"math"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"

	"github.com/cleave-seg/cleave/segment/measure"
)

// channelNames names the colour channels of a three-channel image in the
// region table's columns.
var channelNames = []string{"red", "green", "blue"}

// intensityPlanes are the planes measured in the region table, in the
// image's own units: the intensity plane (the luma, or the channel chosen
// with --channel) and, for a colour image, each of its channels; names
// are the column suffixes ("" for the intensity plane).
func intensityPlanes(raw []float32, channels [][]float32) (planes [][]float32, names []string) {
	planes, names = [][]float32{raw}, []string{""}
	if len(channels) == len(channelNames) {
		for c, p := range channels {
			planes, names = append(planes, p), append(names, "_"+channelNames[c])
		}
	}
	return planes, names
}

// writeRegionTable writes the region table as CSV (encoding/csv), one row
// per label in ascending order (the measurements of segment/measure; the
// README lists the columns). names are the column suffixes of the
// intensity planes measured; withClass adds the class column. With
// pixelSize > 0, lengths and areas are also given in unit and unit²;
// unit has passed checkUnit, so the header needs no quoting and starts
// no formula. Every other cell is a number (touches_border is 0 or 1).
func writeRegionTable(w io.Writer, regions []measure.Region, names []string, withClass bool, pixelSize float64, unit string) error {
	cw := csv.NewWriter(w)
	head := []string{"label", "area_px", "centroid_x", "centroid_y", "bbox_x0", "bbox_y0", "bbox_x1", "bbox_y1",
		"perimeter_px", "circularity", "equiv_diameter_px", "major_axis_px", "minor_axis_px", "eccentricity", "orientation_deg",
		"convex_area_px", "solidity", "feret_max_px", "touches_border"}
	if withClass {
		head = append(head, "class")
	}
	for _, n := range names {
		head = append(head, "mean"+n, "std"+n, "min"+n, "max"+n, "integrated"+n)
	}
	if pixelSize > 0 {
		head = append(head, "area_"+unit+"2", "perimeter_"+unit, "equiv_diameter_"+unit, "major_axis_"+unit, "minor_axis_"+unit,
			"convex_area_"+unit+"2", "feret_max_"+unit)
	}
	if err := cw.Write(head); err != nil {
		return err
	}
	f := func(v float64, prec int) string { return strconv.FormatFloat(v, 'f', prec, 64) }
	g := func(v float64) string { return strconv.FormatFloat(v, 'g', 6, 64) }
	d := strconv.Itoa
	for _, r := range regions {
		border := "0"
		if r.TouchesBorder {
			border = "1"
		}
		rec := []string{d(int(r.Label)), d(r.Area), f(r.CentroidX, 2), f(r.CentroidY, 2), d(r.MinX), d(r.MinY), d(r.MaxX), d(r.MaxY),
			f(r.Perimeter, 3), f(r.Circularity, 4), f(r.EquivDiameter, 3), f(r.MajorAxis, 3), f(r.MinorAxis, 3), f(r.Eccentricity, 4),
			f(r.Orientation*180/math.Pi, 2), d(r.ConvexArea), f(r.Solidity, 4), f(r.FeretMax, 3), border}
		if withClass {
			rec = append(rec, d(int(r.Class)))
		}
		for c := range names {
			s := r.Intensity[c]
			rec = append(rec, f(s.Mean, 3), f(s.Std, 3), f(s.Min, 3), f(s.Max, 3), f(s.Sum, 3))
		}
		if pixelSize > 0 {
			a2 := pixelSize * pixelSize
			rec = append(rec, g(float64(r.Area)*a2), g(r.Perimeter*pixelSize), g(r.EquivDiameter*pixelSize), g(r.MajorAxis*pixelSize),
				g(r.MinorAxis*pixelSize), g(float64(r.ConvexArea)*a2), g(r.FeretMax*pixelSize))
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
