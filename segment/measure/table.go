package measure

import (
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"unicode"
)

// TableOptions shape the region table of WriteTable.
type TableOptions struct {
	// Planes are the column suffixes of the intensity planes measured, in
	// the order of Region.Intensity ("" for a plane without one).
	Planes []string
	// Class adds the class column.
	Class bool
	// PixelSize > 0 adds lengths and areas in Unit and Unit² (Unit is a
	// short name of letters, digits, µ, /, ^ or _, so that no header cell
	// needs quoting or starts a spreadsheet formula).
	PixelSize float64
	Unit      string
}

// WriteTable writes the region table as CSV (encoding/csv), one row per
// region in the order given: label, area, centroid, inclusive box,
// perimeter, circularity, equivalent diameter, axes, eccentricity,
// orientation in degrees, convex area, solidity, maximum Feret diameter,
// touches_border (0 or 1), then the options' columns. Every cell but the
// header is a number.
func WriteTable(w io.Writer, regions []Region, o TableOptions) error {
	names, withClass, pixelSize, unit := o.Planes, o.Class, o.PixelSize, o.Unit
	if pixelSize > 0 && !safeUnit(unit) {
		return fmt.Errorf("measure: unit %q is not a short unit name", unit)
	}
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

// safeUnit reports whether a unit name is 1 to 16 letters (µ included),
// digits, '/', '^' or '_': no CSV quoting, no leading formula character.
func safeUnit(unit string) bool {
	n := 0
	for _, r := range unit {
		n++
		if !unicode.IsLetter(r) && !unicode.IsDigit(r) && !strings.ContainsRune("µ/^_", r) {
			return false
		}
	}
	return n > 0 && n <= 16
}
