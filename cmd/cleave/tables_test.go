package main

import (
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/segment/score"
)

// --unit names a column of the region table: a short unit name is
// accepted, anything that would break the header or start a formula is a
// usage error naming --unit.
func TestUnitValidated(t *testing.T) {
	for _, u := range []string{"um", "µm", "nm", "mm^2", "px_2", "m/s", "μm"} {
		_, s, c, err := parseSegment([]string{"--pixel-size", "0.5", "--unit", u, "x.png"}, nil)
		if err == nil {
			_, err = resolve(*s, c.workers)
		}
		if err != nil {
			t.Errorf("--unit %q refused: %v", u, err)
		}
	}
	for _, u := range []string{"um,x", "a\nb", "=HYPERLINK(1)", "-um", "@um", "u m", `u"m`, "", "abcdefghijklmnopq"} {
		_, s, c, err := parseSegment([]string{"--pixel-size", "0.5", "--unit", u, "x.png"}, nil)
		if err == nil {
			_, err = resolve(*s, c.workers)
		}
		if err == nil || !strings.Contains(err.Error(), "--unit") {
			t.Errorf("--unit %q: error %v, want one naming --unit", u, err)
		}
	}
}

// regions.csv is RFC 4180 CSV: every row has the header's columns, every
// cell below the header is a number (none quoted or neutralized), and the
// physical area is the pixel area times the pixel size squared.
func TestRegionTableCSV(t *testing.T) {
	dir := t.TempDir()
	img := filepath.Join(dir, "ramp.png")
	writeTestPNG(t, img, 40, 30)
	if code, _, stderr := runCleave("segment", "--out", dir, "--pixel-size", "0.25", "--unit", "µm", img); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	recs := readCSV(t, filepath.Join(dir, "ramp.regions.csv"))
	if len(recs) < 2 {
		t.Fatalf("%d rows, want a header and at least one region", len(recs))
	}
	head := recs[0]
	col := map[string]int{}
	for k, name := range head {
		col[name] = k
	}
	for _, name := range []string{"area_µm2", "perimeter_µm", "equiv_diameter_µm", "major_axis_µm", "minor_axis_µm", "convex_area_µm2", "feret_max_µm"} {
		if _, ok := col[name]; !ok {
			t.Errorf("header %v lacks %s", head, name)
		}
	}
	for _, r := range recs[1:] {
		vals := make([]float64, len(r))
		for k, cell := range r {
			var err error
			if vals[k], err = strconv.ParseFloat(cell, 64); err != nil {
				t.Fatalf("cell %q of %v is not a number", cell, r)
			}
		}
		if px, um2 := vals[col["area_px"]], vals[col["area_µm2"]]; um2 != px*0.0625 {
			t.Errorf("label %v: area %v px but %v µm², want %v", r[0], px, um2, px*0.0625)
		}
	}
}

// score --csv neutralizes names and paths that start like a formula and
// writes the metrics as plain numbers.
func TestScoreCSVNeutralized(t *testing.T) {
	t.Chdir(t.TempDir())
	writeTestPNG(t, "=cmd.png", 20, 20)
	writeTestPNG(t, "-truth.png", 20, 20)
	if code, _, stderr := runCleave("score", "--csv", "s.csv", "--", "=cmd.png", "-truth.png"); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	recs := readCSV(t, "s.csv")
	if len(recs) != 2 {
		t.Fatalf("%d rows, want 2", len(recs))
	}
	row := recs[1]
	if want := []string{"'=cmd", "'=cmd.png", "'-truth.png"}; strings.Join(row[:3], "|") != strings.Join(want, "|") {
		t.Errorf("name, pred, truth cells %q, want %q", row[:3], want)
	}
	for _, cell := range row[3 : 3+len(score.Metrics())] {
		if _, err := strconv.ParseFloat(cell, 64); err != nil {
			t.Errorf("metric cell %q is not a number", cell)
		}
	}
}
