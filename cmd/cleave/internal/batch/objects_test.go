package batch

import (
	"bytes"
	"io"
	"maps"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestObjectsColumns(t *testing.T) {
	cases := []struct {
		heads [][]string
		want  string
	}{
		{nil, ""},
		{[][]string{{"a", "b", "c"}}, "a,b,c"},
		{[][]string{{"a", "b", "c"}, {"a", "b", "x", "c", "y"}}, "a,b,x,c,y"},
		{[][]string{{"a", "b", "x", "c", "y"}, {"a", "b", "c"}}, "a,b,x,c,y"},
		{[][]string{{"b", "c"}, {"a", "b", "c"}}, "a,b,c"},
		{[][]string{{"a", "b"}, {"a", "u", "v"}, {"a", "b", "w"}}, "a,u,v,b,w"},
	}
	for _, c := range cases {
		if got := strings.Join(objectsColumns(c.heads), ","); got != c.want {
			t.Errorf("objectsColumns(%v) = %s, want %s", c.heads, got, c.want)
		}
	}
}

// An index of a version that wrote only manifest.csv and report.html (no
// files list) does not make a user's objects.csv cleave's.
func TestObjectsNotOwnedByLegacyIndex(t *testing.T) {
	dir := t.TempDir()
	for _, name := range []string{ManifestName, ReportName, ObjectsName} {
		if err := os.WriteFile(filepath.Join(dir, name), []byte("x\n"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	err := checkTopFiles(dir, &Index{Tool: "cleave"})
	if err == nil || !strings.Contains(err.Error(), ObjectsName) {
		t.Errorf("checkTopFiles with an index without files: %v, want a refusal naming %s", err, ObjectsName)
	}
	if err := os.Remove(filepath.Join(dir, ObjectsName)); err != nil {
		t.Fatal(err)
	}
	if err := checkTopFiles(dir, &Index{Tool: "cleave"}); err != nil {
		t.Errorf("manifest.csv and report.html of an earlier version: %v, want them taken as cleave's", err)
	}
}

// writeObjects neutralizes a text cell and the input path but copies
// numbers, negative ones included, as they are.
func TestWriteObjectsCells(t *testing.T) {
	dir := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "a.regions.csv"), []byte("label,orientation_deg,note\n1,-45.00,=cmd()\n2,NaN,ok\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "b.regions.csv"), []byte("label,area_um2\n1,3.5\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	rows := []manifestRow{
		{Input: "-a.png", Status: rowOK, Table: "a.regions.csv"},
		{Input: "b.png", Status: rowOK, Table: "b.regions.csv"},
		{Input: "c.png", Status: rowFailed},
	}
	var buf bytes.Buffer
	if err := writeObjects(&buf, dir, rows, newSizeHistogram()); err != nil {
		t.Fatal(err)
	}
	// area_um2 follows label in b's table, so it goes right after label.
	want := "input,label,area_um2,orientation_deg,note\n'-a.png,1,,-45.00,'=cmd()\n'-a.png,2,,NaN,ok\nb.png,1,3.5,,\n"
	if buf.String() != want {
		t.Errorf("objects.csv:\n%s\nwant\n%s", buf.String(), want)
	}
	// A table that went missing is an error naming it, not a silent gap.
	if err := os.Remove(filepath.Join(dir, "b.regions.csv")); err != nil {
		t.Fatal(err)
	}
	if err := writeObjects(&buf, dir, rows, newSizeHistogram()); err == nil || !strings.Contains(err.Error(), "b.regions.csv") {
		t.Errorf("missing table: %v, want an error naming it", err)
	}
}

// The size histogram is counted while objects.csv is copied: area_px of
// every ok table in doubling bins (1 -> bin 0, 3 -> 1, 300 and 511 -> 8);
// a table without the column adds nothing; a cell that is not a pixel
// count is kept as the error that stops the report, objects.csv still
// written.
func TestWriteObjectsCountsSizes(t *testing.T) {
	dir := t.TempDir()
	for name, body := range map[string]string{
		"a.regions.csv": "label,area_px\n1,1\n2,3\n3,300\n",
		"b.regions.csv": "label,area_um2\n1,3.5\n",
		"c.regions.csv": "label,area_px\n1,511\n",
		"d.regions.csv": "label,area_px\n1,x\n",
	} {
		if err := os.WriteFile(filepath.Join(dir, name), []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	rows := []manifestRow{
		{Input: "a.png", Status: rowOK, Table: "a.regions.csv"},
		{Input: "b.png", Status: rowOK, Table: "b.regions.csv"},
		{Input: "c.png", Status: rowOK, Table: "c.regions.csv"},
	}
	h := newSizeHistogram()
	if err := writeObjects(io.Discard, dir, rows, h); err != nil {
		t.Fatal(err)
	}
	if want := map[int]int{0: 1, 1: 1, 8: 2}; h.Total != 4 || !maps.Equal(h.counts, want) || h.err != nil {
		t.Errorf("histogram %v total %d err %v; want %v total 4", h.counts, h.Total, h.err, want)
	}
	h = newSizeHistogram()
	if err := writeObjects(io.Discard, dir, append(rows, manifestRow{Input: "d.png", Status: rowOK, Table: "d.regions.csv"}), h); err != nil {
		t.Fatal(err)
	}
	if h.err == nil || !strings.Contains(h.err.Error(), "d.regions.csv") {
		t.Errorf("bad area_px cell: %v, want an error naming d.regions.csv", h.err)
	}
}
