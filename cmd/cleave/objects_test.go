package main

import (
	"bytes"
	"image"
	"image/color"
	"os"
	"path"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/batch"
	"github.com/cleave-seg/cleave/examples/loudskip"
	"github.com/cleave-seg/cleave/imageio"
)

// writeColourDiscs writes a colour PNG: four discs of different hues on a
// dark ground, so that its region table has the per-channel columns.
func writeColourDiscs(t *testing.T, p string) {
	t.Helper()
	img := image.NewNRGBA(image.Rect(0, 0, 96, 96))
	discs := []struct {
		x, y, r int
		c       color.NRGBA
	}{
		{24, 24, 12, color.NRGBA{230, 60, 40, 255}},
		{70, 26, 10, color.NRGBA{50, 210, 70, 255}},
		{26, 70, 11, color.NRGBA{60, 80, 235, 255}},
		{70, 70, 13, color.NRGBA{220, 210, 60, 255}},
	}
	for y := range 96 {
		for x := range 96 {
			c := color.NRGBA{20 + uint8((x*7+y*3)%9), 18, 25, 255}
			for _, d := range discs {
				if (x-d.x)*(x-d.x)+(y-d.y)*(y-d.y) <= d.r*d.r {
					c = d.c
				}
			}
			img.SetNRGBA(x, y, c)
		}
	}
	writePNGFile(t, p, img)
}

// objects.csv holds every row of every ok image's region table, cell for
// cell, under one header even when gray and colour images give tables
// with different columns; failed images are not in it; --rebuild writes
// the same bytes; the report links it; a user's objects.csv is never
// replaced.
func TestBatchObjectsTable(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	in, good := makeBatchFolder(t, 3, true)
	writeColourDiscs(t, filepath.Join(in, "colour-discs.png"))
	good = append(good, "colour-discs.png")
	out := filepath.Join(t.TempDir(), "out")
	code, _, stderr := runCleave("batch", "-r", "-q", "--classes", "2", "--superpixels", "150", "--out", out, in)
	if code != exitFail {
		t.Fatalf("exit %d, want 1 (the broken files fail): %s", code, stderr)
	}
	manifest := readManifest(t, out)
	for _, g := range good {
		if manifest[g] == nil || manifest[g][1] != "ok" {
			t.Fatalf("manifest row of %s: %v", g, manifest[g])
		}
	}

	objects := readCSV(t, filepath.Join(out, batch.ObjectsName))
	head := objects[0]
	if head[0] != "input" {
		t.Fatalf("objects.csv starts with column %q, want input", head[0])
	}
	col := map[string]int{}
	for k, c := range head {
		if _, dup := col[c]; dup {
			t.Fatalf("column %q twice in objects.csv", c)
		}
		col[c] = k
	}
	byInput := map[string][][]string{}
	for _, r := range objects[1:] {
		byInput[r[0]] = append(byInput[r[0]], r)
	}
	for in := range byInput {
		if !slices.Contains(good, in) {
			t.Errorf("objects.csv has rows of %s, which is not an ok input", in)
		}
	}
	total := 0
	heads := map[string][]string{}
	for _, g := range good {
		stem := strings.TrimSuffix(g, path.Ext(g))
		table := readCSV(t, filepath.Join(out, filepath.FromSlash(stem)+".regions.csv"))
		heads[g] = table[0]
		rows := byInput[g]
		if len(rows) != len(table)-1 {
			t.Errorf("%s: %d rows in objects.csv, %d in its regions.csv", g, len(rows), len(table)-1)
			continue
		}
		total += len(rows)
		inTable := map[string]bool{}
		for k, c := range table[0] {
			inTable[c] = true
			j, ok := col[c]
			if !ok {
				t.Errorf("%s: column %q of its table is not in objects.csv", g, c)
				continue
			}
			for n, r := range table[1:] {
				if rows[n][j] != r[k] {
					t.Errorf("%s row %d column %s: objects.csv %q, regions.csv %q", g, n+1, c, rows[n][j], r[k])
				}
			}
		}
		for c, j := range col {
			if c == "input" || inTable[c] {
				continue
			}
			for n, r := range rows {
				if r[j] != "" {
					t.Errorf("%s row %d: cell %q in column %s, which its table lacks", g, n+1, r[j], c)
				}
			}
		}
	}
	if total == 0 || total != len(objects)-1 {
		t.Errorf("objects.csv has %d rows, the ok images' tables %d", len(objects)-1, total)
	}
	// The colour image's table has columns the gray ones lack: the test
	// covers the union.
	if !slices.Contains(heads["colour-discs.png"], "mean_red") || slices.Contains(heads[good[0]], "mean_red") {
		t.Errorf("want a colour table with mean_red and a gray one without: %v / %v", heads["colour-discs.png"], heads[good[0]])
	}
	if len(byInput["colour-discs.png"]) == 0 {
		t.Error("no rows of the colour image in objects.csv")
	}

	report := string(fileBytes(t, filepath.Join(out, batch.ReportName)))
	if !strings.Contains(report, `<a href="./objects.csv">objects.csv</a>`) {
		t.Error("report.html does not link objects.csv")
	}
	idx, err := batch.ReadIndex(out)
	if err != nil || !slices.Contains(idx.Files, batch.ObjectsName) {
		t.Errorf("the index does not list objects.csv as cleave's: %v, %v", err, idx)
	}

	// --rebuild writes the same bytes (the file is removed first, so it is
	// really written again).
	before := fileBytes(t, filepath.Join(out, batch.ObjectsName))
	if err := os.Remove(filepath.Join(out, batch.ObjectsName)); err != nil {
		t.Fatal(err)
	}
	if code, _, stderr := runCleave("batch", "--rebuild", "-q", out); code != exitFail {
		t.Fatalf("--rebuild: exit %d, want 1 (the broken files): %s", code, stderr)
	}
	if after := fileBytes(t, filepath.Join(out, batch.ObjectsName)); !bytes.Equal(before, after) {
		t.Errorf("--rebuild gave other bytes:\n%s\nthen\n%s", before, after)
	}

	// A user's objects.csv in a fresh folder: exit 2, left as it was.
	fresh := filepath.Join(t.TempDir(), "fresh")
	if err := os.Mkdir(fresh, 0o755); err != nil {
		t.Fatal(err)
	}
	userCSV := []byte("sample,count\na,3\n")
	if err := os.WriteFile(filepath.Join(fresh, batch.ObjectsName), userCSV, 0o644); err != nil {
		t.Fatal(err)
	}
	code, _, stderr = runCleave("batch", "-q", "--out", fresh, in)
	if code != exitUsage || !strings.Contains(stderr, "objects.csv exists and was not written by cleave") {
		t.Errorf("user's objects.csv: exit %d, %q; want 2 naming it", code, stderr)
	}
	if !bytes.Equal(fileBytes(t, filepath.Join(fresh, batch.ObjectsName)), userCSV) {
		t.Error("the user's objects.csv was replaced")
	}
}

// scikit-image's coins.png (a photograph of 24 coins on a dark ground,
// counted by eye) comes out as 24 objects, one a coin: the coins' relief
// makes dips in contrast inside them, which must not part slivers of
// their rims from them.
func TestSegmentCoinsCount(t *testing.T) {
	const img = "/usr/lib/python3/dist-packages/skimage/data/coins.png"
	if _, err := os.Stat(img); err != nil {
		loudskip.Skip(t, "scikit-image data not installed (apt-get install -y python3-skimage); the coins were not counted: %v", err)
	}
	out := t.TempDir()
	code, _, stderr := runCleave("segment", "--classes", "2", "--background", "dark", "--out", out, img)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	lm, err := imageio.ReadLabels(filepath.Join(out, "coins.labels.png"))
	if err != nil {
		t.Fatal(err)
	}
	labels := lm.Pix
	if n := slices.Max(labels); n != 24 {
		t.Errorf("%d objects, want the 24 coins", n)
	}
}
