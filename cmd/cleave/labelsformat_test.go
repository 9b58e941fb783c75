package main

import (
	"bytes"
	"encoding/json"
	"errors"
	"image"
	"image/color"
	"image/png"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/examples/loudskip"
	"github.com/cleave-seg/cleave/imageio"
)

// debianPython is Debian's interpreter, whose python3-tifffile and
// python3-skimage are the reference readers; others may lack them.
const debianPython = "/usr/bin/python3"

// pythonJSON runs a script with Debian's interpreter and decodes the JSON
// it prints into v; the test is skipped, loudly, when the interpreter or
// the package pkg is missing.
func pythonJSON(t *testing.T, pkg, script string, v any, args ...string) {
	t.Helper()
	cmd := exec.Command(debianPython, append([]string{"-c", script}, args...)...)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		if strings.Contains(stderr.String(), "ModuleNotFoundError") || errors.Is(err, exec.ErrNotFound) || errors.Is(err, os.ErrNotExist) {
			loudskip.Skip(t, "install Debian's %s to run this cross-check (%v: %s)", pkg, err, stderr.String())
		}
		t.Fatalf("%s: %v\n%s", debianPython, err, stderr.String())
	}
	if err := json.Unmarshal(out, v); err != nil {
		t.Fatalf("%v: %s", err, out)
	}
}

// readTIFFs reads label TIFFs with tifffile: dtype, shape, values and the
// resolution tags of each.
const readTIFFs = `
import json, sys, tifffile
out = []
for p in sys.argv[1:]:
    with tifffile.TiffFile(p) as tf:
        page = tf.pages[0]
        a = page.asarray()
        x = page.tags.get("XResolution")
        u = page.tags.get("ResolutionUnit")
        out.append({"dtype": str(a.dtype), "shape": list(a.shape), "values": [int(v) for v in a.ravel()],
                    "x": list(x.value) if x else None, "unit": int(u.value) if u else None})
json.dump(out, sys.stdout)
`

type tiffRead struct {
	Dtype  string   `json:"dtype"`
	Shape  []int    `json:"shape"`
	Values []int64  `json:"values"`
	X      []uint32 `json:"x"`
	Unit   *int     `json:"unit"`
}

// checkerPNG writes a w x h 8-bit checkerboard of 0 and 255.
func checkerPNG(t *testing.T, path string, w, h int) {
	t.Helper()
	img := image.NewGray(image.Rect(0, 0, w, h))
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			img.SetGray(x, y, color.Gray{uint8(255 * ((x + y) % 2))})
		}
	}
	var buf bytes.Buffer
	if err := png.Encode(&buf, img); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestSegmentLabelsTIFF: --labels-format tiff writes the label and class
// maps as TIFF with the same values as the PNG run (read by Debian's
// python3-tifffile against cleave's PNG reader), with the resolution of
// --pixel-size 0.5 --unit um (2e4 pixels per centimetre, TIFF 6.0
// ResolutionUnit 3), named in the record.
func TestSegmentLabelsTIFF(t *testing.T) {
	img := filepath.Join("..", "..", "examples", "nuclei", "nuclei-1.png")
	dir := t.TempDir()
	pngOut, tifOut := filepath.Join(dir, "png"), filepath.Join(dir, "tif")
	args := []string{"segment", "--classes", "2", "--background", "dark", "--pixel-size", "0.5", "--unit", "um"}
	runOK(t, append(args, "--out", pngOut, img)...)
	runOK(t, append(args, "--labels-format", "tiff", "--out", tifOut, img)...)
	for _, n := range []string{"nuclei-1.labels.png", "nuclei-1.classes.png"} {
		if _, err := os.Stat(filepath.Join(tifOut, n)); err == nil {
			t.Errorf("%s written with --labels-format tiff", n)
		}
	}
	var got []tiffRead
	pythonJSON(t, "python3-tifffile", readTIFFs, &got, filepath.Join(tifOut, "nuclei-1.labels.tif"), filepath.Join(tifOut, "nuclei-1.classes.tif"))
	for k, kind := range []string{"labels", "classes"} {
		lm, err := imageio.ReadLabels(filepath.Join(pngOut, "nuclei-1."+kind+".png"))
		if err != nil {
			t.Fatal(err)
		}
		want, w, h := lm.Pix, lm.Width, lm.Height
		g := got[k]
		if g.Dtype != "uint16" || !slices.Equal(g.Shape, []int{h, w}) {
			t.Fatalf("%s: tifffile read %s %v; want uint16 [%d %d]", kind, g.Dtype, g.Shape, h, w)
		}
		for i := range want {
			if g.Values[i] != int64(want[i]) {
				t.Fatalf("%s: pixel (%d, %d): TIFF %d, PNG %d", kind, i%w, i/w, g.Values[i], want[i])
			}
		}
		if len(g.X) != 2 || float64(g.X[0])/float64(g.X[1]) != 2e4 || g.Unit == nil || *g.Unit != 3 {
			t.Errorf("%s: XResolution %v, ResolutionUnit %v; want 20000/1 per centimetre (3)", kind, g.X, g.Unit)
		}
	}
	rec, err := pipeline.ReadRecord(filepath.Join(tifOut, "nuclei-1.json"))
	if err != nil {
		t.Fatal(err)
	}
	if len(rec.LabelMaps) != 2 || rec.LabelMaps[0].File != "nuclei-1.labels.tif" || rec.LabelMaps[0].Bits != 16 ||
		rec.LabelMaps[0].PixelsPerUnit != 2e4 || rec.LabelMaps[0].ResolutionUnit != "centimetre" || rec.LabelMaps[1].File != "nuclei-1.classes.tif" {
		t.Errorf("label_maps %+v", rec.LabelMaps)
	}
	if !slices.Contains(rec.Outputs, "nuclei-1.labels.tif") || slices.Contains(rec.Outputs, "nuclei-1.labels.png") {
		t.Errorf("outputs %v", rec.Outputs)
	}
	// A unit that is no length (asked for in a params file, key
	// labels-format): the TIFF carries no resolution, and the record says
	// why.
	pxOut := filepath.Join(dir, "px")
	params := filepath.Join(dir, "params.json")
	if err := os.WriteFile(params, []byte(`{"labels-format": "tiff", "pixel-size": 2, "unit": "px"}`), 0o644); err != nil {
		t.Fatal(err)
	}
	runOK(t, "segment", "--params", params, "--out", pxOut, img)
	rec, err = pipeline.ReadRecord(filepath.Join(pxOut, "nuclei-1.json"))
	if err != nil {
		t.Fatal(err)
	}
	if m := rec.LabelMaps[0]; m.PixelsPerUnit != 0 || !strings.Contains(m.ResolutionNote, `unit "px"`) {
		t.Errorf("unit px: %+v; want no resolution and a note naming the unit", m)
	}
	if code, _, stderr := runCleave("segment", "--labels-format", "jpeg", "--out", pxOut, img); code != exitUsage || !strings.Contains(stderr, "--labels-format must be png or tiff") {
		t.Errorf("--labels-format jpeg: exit %d, %s", code, stderr)
	}
}

// TestSegmentLabelsOverflow: a 300 x 300 checkerboard on the pixel graph
// with radius 1 (the four neighbours) and sigma-i 1e-6 has no edge of
// positive weight (exp(-(1/1e-6)^2) is 0 in float32), so each of its
// 90,000 pixels is a region of its own (worked out by hand): more labels
// than a 16-bit PNG holds. Asked for PNG, cleave writes a 32-bit TIFF
// instead, never wrapped labels, and says so on stderr and in the
// record; tifffile reads 90,000 distinct labels 1..90000.
func TestSegmentLabelsOverflow(t *testing.T) {
	dir := t.TempDir()
	img := filepath.Join(dir, "checker.png")
	checkerPNG(t, img, 300, 300)
	out := filepath.Join(dir, "out")
	code, _, stderr := runCleave("segment", "--superpixels", "0", "--radius", "1", "--sigma-i", "1e-6", "--min-area", "0", "--normalize", "range", "--out", out, img)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	if !strings.Contains(stderr, "warning: the label map holds labels up to 90000") || !strings.Contains(stderr, "checker.labels.tif") {
		t.Errorf("stderr does not name the switch to TIFF: %s", stderr)
	}
	if _, err := os.Stat(filepath.Join(out, "checker.labels.png")); err == nil {
		t.Error("a PNG label map was written for 90000 labels")
	}
	rec, err := pipeline.ReadRecord(filepath.Join(out, "checker.json"))
	if err != nil {
		t.Fatal(err)
	}
	if len(rec.Warnings) != 1 || rec.Warnings[0].Code != pipeline.LabelWarningCode || rec.LabelMaps[0].Bits != 32 || rec.LabelMaps[0].Format != "tiff" || rec.LabelMaps[0].MaxLabel != 90000 {
		t.Errorf("record: warnings %+v, label_maps %+v", rec.Warnings, rec.LabelMaps)
	}
	var got []tiffRead
	pythonJSON(t, "python3-tifffile", readTIFFs, &got, filepath.Join(out, "checker.labels.tif"))
	g := got[0]
	seen := map[int64]bool{}
	for _, v := range g.Values {
		seen[v] = true
	}
	if g.Dtype != "uint32" || len(seen) != 90000 || slices.Max(g.Values) != 90000 || slices.Min(g.Values) != 1 {
		t.Errorf("tifffile: %s, %d distinct labels %d..%d; want uint32, 90000 labels 1..90000", g.Dtype, len(seen), slices.Min(g.Values), slices.Max(g.Values))
	}
}

// TestBatchLabelsFormat: the manifest and the report name the label map
// in the format written; a second run in the other format replaces
// cleave's own label map (the .png goes, the .tif comes), but a
// labels.tif that cleave did not write is left alone and fails its image.
func TestBatchLabelsFormat(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	in, names := makeBatchFolder(t, 1, false)
	out := filepath.Join(t.TempDir(), "out")
	stem := strings.TrimSuffix(names[0], filepath.Ext(names[0]))
	run := func(format string) (int, string) {
		code, _, stderr := runCleave("batch", "--labels-format", format, "--classes", "2", "--background", "dark", "--out", out, in)
		return code, stderr
	}
	if code, stderr := run("png"); code != exitOK {
		t.Fatalf("png: exit %d: %s", code, stderr)
	}
	m := readManifest(t, out)
	if got := m[names[0]][7]; got != stem+".labels.png" {
		t.Errorf("manifest labels %q; want %s.labels.png", got, stem)
	}
	if code, stderr := run("tiff"); code != exitOK {
		t.Fatalf("tiff: exit %d: %s", code, stderr)
	}
	for name, want := range map[string]bool{".labels.png": false, ".classes.png": false, ".labels.tif": true, ".classes.tif": true} {
		if _, err := os.Stat(filepath.Join(out, stem+name)); (err == nil) != want {
			t.Errorf("after the tiff run %s%s present: %v; want %v", stem, name, err == nil, want)
		}
	}
	m = readManifest(t, out)
	if got := m[names[0]][7]; got != stem+".labels.tif" {
		t.Errorf("manifest labels %q; want %s.labels.tif", got, stem)
	}
	report, err := os.ReadFile(filepath.Join(out, "report.html"))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(report), `href="./`+stem+`.labels.tif"`) {
		t.Errorf("report.html does not link %s.labels.tif", stem)
	}
	// In another --out, a labels.tif of the user's stands in the way of
	// the TIFF run: left as it is, the image fails naming it.
	other := filepath.Join(t.TempDir(), "out")
	if err := os.MkdirAll(other, 0o755); err != nil {
		t.Fatal(err)
	}
	mine := filepath.Join(other, stem+".labels.tif")
	if err := os.WriteFile(mine, []byte("my own file"), 0o644); err != nil {
		t.Fatal(err)
	}
	code, _, stderr := runCleave("batch", "--labels-format", "tiff", "--out", other, in)
	if code != exitFail || !strings.Contains(stderr, mine) || !strings.Contains(stderr, "was not written by cleave") {
		t.Errorf("a stranger's labels.tif: exit %d, %s", code, stderr)
	}
	if b, _ := os.ReadFile(mine); string(b) != "my own file" {
		t.Error("the user's labels.tif was replaced")
	}
	// Back to PNG in the first --out: cleave's own TIFF is removed.
	if code, stderr := run("png"); code != exitOK {
		t.Fatalf("png again: exit %d: %s", code, stderr)
	}
	if _, err := os.Stat(filepath.Join(out, stem+".labels.tif")); err == nil {
		t.Error("cleave's own labels.tif stayed after the png run")
	}
}
