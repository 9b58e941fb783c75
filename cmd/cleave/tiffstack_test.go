package main

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/imageio"
)

// tiffData holds the TIFF variants written by testdata/tiff/make.py with
// python3-tifffile, and manifest.json with what tifffile reports of them.
const tiffData = "../../testdata/tiff"

type tiffManifest struct {
	Files map[string]struct {
		Width, Height int
		Ref           string
		OME           struct {
			PhysicalSizeX     float64
			PhysicalSizeXUnit string
			SizeC, SizeZ      int
			Channels          []string
		} `json:"ome"`
		Hyperstack struct {
			Channels, Slices, Frames int
			Unit                     string
		} `json:"hyperstack"`
		Resolution []float64
	}
}

func readTIFFManifest(t *testing.T) tiffManifest {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(tiffData, "manifest.json"))
	if err != nil {
		t.Fatal(err)
	}
	var m tiffManifest
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	return m
}

func readRecordFile(t *testing.T, p string) *pipeline.Record {
	t.Helper()
	b, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	var rec pipeline.Record
	if err := json.Unmarshal(b, &rec); err != nil {
		t.Fatal(err)
	}
	return &rec
}

// An OME-TIFF with two named channels and three planes (written by
// tifffile from CZYX data with Channel Name DAPI and GFP and
// PhysicalSizeX 0.325 µm): --channel GFP picks channel 1 by name, the
// record gives the pixel size tifffile reports with its source, the
// region table has physical columns in that unit, and the unused plane
// and channel are warned about. An explicit --pixel-size wins.
func TestSegmentOMEChannelByName(t *testing.T) {
	m := readTIFFManifest(t).Files["ome-cz.ome.tif"]
	img := filepath.Join(tiffData, "ome-cz.ome.tif")
	out := t.TempDir()
	code, _, stderr := runCleave("segment", "--channel", "GFP", "--plane", "2", "--out", out, img)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	rec := readRecordFile(t, filepath.Join(out, "ome-cz.ome.json"))
	st, ps := rec.Input.Stack, rec.Input.PixelSize
	if st == nil || st.Channel != 1 || st.ChannelName != "GFP" || st.Plane != 2 || st.Channels != m.OME.SizeC || st.Planes != m.OME.SizeZ || st.Layout != "ome-xml" {
		t.Fatalf("stack %+v; tifffile reports SizeC %d SizeZ %d", st, m.OME.SizeC, m.OME.SizeZ)
	}
	if ps == nil || ps.Size != m.OME.PhysicalSizeX || ps.Unit != m.OME.PhysicalSizeXUnit || ps.Source != "ome-xml" {
		t.Fatalf("pixel size %+v; tifffile reports %v %s", ps, m.OME.PhysicalSizeX, m.OME.PhysicalSizeXUnit)
	}
	codes := map[string]bool{}
	for _, w := range rec.Warnings {
		codes[w.Code] = true
	}
	if !codes["unused-channels"] || !codes["unused-pages"] || !strings.Contains(stderr, "channel 1 (GFP) was segmented") {
		t.Fatalf("warnings %+v, stderr %s", rec.Warnings, stderr)
	}
	table, err := os.ReadFile(filepath.Join(out, "ome-cz.ome.regions.csv"))
	if err != nil || !strings.Contains(strings.SplitN(string(table), "\n", 2)[0], "area_µm2") {
		t.Fatalf("region table head: %.200s (%v)", table, err)
	}
	// A TIFF label map carries the file's pixel size in its resolution
	// tags: 10^4 / 0.325 pixels per centimetre.
	code, _, stderr = runCleave("segment", "--force", "--labels-format", "tiff", "--out", out, img)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	rec = readRecordFile(t, filepath.Join(out, "ome-cz.ome.json"))
	if len(rec.LabelMaps) == 0 || math.Abs(rec.LabelMaps[0].PixelsPerUnit-1e4/m.OME.PhysicalSizeX) > 1e-6 || rec.LabelMaps[0].ResolutionUnit != "centimetre" {
		t.Fatalf("label maps %+v, want %v pixels per centimetre", rec.LabelMaps, 1e4/m.OME.PhysicalSizeX)
	}
	code, _, stderr = runCleave("segment", "--force", "--pixel-size", "2", "--unit", "nm", "--out", out, img)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	rec = readRecordFile(t, filepath.Join(out, "ome-cz.ome.json"))
	if ps := rec.Input.PixelSize; ps == nil || ps.Size != 2 || ps.Unit != "nm" || ps.Source != "flag" {
		t.Fatalf("explicit pixel size: %+v", ps)
	}
}

// The hyperstack written by tifffile (its hyperstack option, TZCYX 2 x 3 x 2,
// resolution 2 pixels per unit, unit um) gives its layout and a pixel
// size of 1/2 um from the description's unit and the resolution tags;
// --unit nm converts it.
func TestSegmentHyperstackCalibration(t *testing.T) {
	m := readTIFFManifest(t).Files["hyperstack.tif"]
	out := t.TempDir()
	code, _, stderr := runCleave("segment", "--unit", "nm", "--frame", "1", "--out", out, filepath.Join(tiffData, "hyperstack.tif"))
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	rec := readRecordFile(t, filepath.Join(out, "hyperstack.json"))
	st, ps := rec.Input.Stack, rec.Input.PixelSize
	if st == nil || st.Channels != m.Hyperstack.Channels || st.Planes != m.Hyperstack.Slices || st.Frames != m.Hyperstack.Frames || st.Frame != 1 {
		t.Fatalf("stack %+v; tifffile reports %+v", st, m.Hyperstack)
	}
	want := 1 / m.Resolution[0] * 1000 // um -> nm
	if ps == nil || math.Abs(ps.Size-want) > 1e-9*want || ps.Unit != "nm" || ps.Source != "hyperstack description" {
		t.Fatalf("pixel size %+v, want %v nm from the hyperstack description", ps, want)
	}
}

// --planes all writes STEM.z000.* .. STEM.z003.* for the 4-page stack
// and a summary listing every plane; no plane is reported unused.
func TestSegmentPlanesAll(t *testing.T) {
	out := t.TempDir()
	code, stdout, stderr := runCleave("segment", "--planes", "all", "--out", out, filepath.Join(tiffData, "stack.tif"))
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	for z := 0; z < 4; z++ {
		rec := readRecordFile(t, filepath.Join(out, "stack.z00"+string(rune('0'+z))+".json"))
		if rec.Input.Stack == nil || rec.Input.Stack.Plane != z || len(rec.Warnings) != 0 && rec.Warnings[0].Code == "unused-pages" {
			t.Fatalf("plane %d: stack %+v warnings %+v", z, rec.Input.Stack, rec.Warnings)
		}
	}
	b, err := os.ReadFile(filepath.Join(out, "stack.stack.json"))
	if err != nil {
		t.Fatal(err)
	}
	var sum pipeline.StackSummary
	if err := json.Unmarshal(b, &sum); err != nil || sum.Planes != 4 || len(sum.Results) != 4 || sum.Failed != 0 || sum.Results[3].Record != "stack.z003.json" {
		t.Fatalf("summary %+v (%v)", sum, err)
	}
	if !strings.Contains(stdout, "4 planes segmented") {
		t.Fatalf("stdout: %s", stdout)
	}
}

// NaN and infinite pixels of a float TIFF (six of them, placed by
// make.py; tifffile reads them back as NaN and +-inf) get label 0, and
// the record counts them.
func TestSegmentNaNPixelsLabelZero(t *testing.T) {
	m := readTIFFManifest(t).Files["float32-nan.tif"]
	ref, err := os.ReadFile(filepath.Join(tiffData, m.Ref))
	if err != nil {
		t.Fatal(err)
	}
	out := t.TempDir()
	code, _, stderr := runCleave("segment", "--classes", "2", "--background", "dark", "--out", out, filepath.Join(tiffData, "float32-nan.tif"))
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	lm, err := imageio.ReadLabels(filepath.Join(out, "float32-nan.labels.png"))
	if err != nil {
		t.Fatal(err)
	}
	labels, w := lm.Pix, lm.Width
	bad := 0
	for i := range labels {
		v := math.Float64frombits(binary.LittleEndian.Uint64(ref[8*i:]))
		if math.IsNaN(v) || math.IsInf(v, 0) {
			bad++
			if labels[i] != 0 {
				t.Fatalf("pixel (%d, %d) is %v in the file but has label %d", i%w, i/w, v, labels[i])
			}
		}
	}
	rec := readRecordFile(t, filepath.Join(out, "float32-nan.json"))
	if bad != 6 || rec.Input.InvalidPixels != bad || rec.Objects != 3 {
		t.Fatalf("%d non-finite pixels in the reference, %d in the record, %d objects (three discs)", bad, rec.Input.InvalidPixels, rec.Objects)
	}
}

// cleave score reads 32-bit integer label TIFFs (labels from 70000;
// the prediction zlib-compressed with the horizontal predictor, one
// block split and every label renumbered) and gives the adjusted Rand
// index scikit-learn computes for the same arrays (make.py:
// sklearn.metrics.adjusted_rand_score, stored in manifest.json).
func TestScore32BitLabelTIFFs(t *testing.T) {
	b, err := os.ReadFile(filepath.Join(tiffData, "manifest.json"))
	if err != nil {
		t.Fatal(err)
	}
	var m struct {
		Files map[string]struct {
			ARI *float64 `json:"ari_against_labels_uint32"`
		}
	}
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	want := m.Files["labels-int32-zlib.tif"].ARI
	if want == nil {
		t.Fatal("manifest.json has no scikit-learn ARI for labels-int32-zlib.tif (run make.py with python3-sklearn)")
	}
	out := runOK(t, "score", "--json", filepath.Join(tiffData, "labels-int32-zlib.tif"), filepath.Join(tiffData, "labels-uint32.tif"))
	var got map[string]float64
	if err := json.Unmarshal([]byte(out), &got); err != nil {
		t.Fatalf("%v in %s", err, out)
	}
	if math.Abs(got["ari"]-*want) > 1e-12 {
		t.Fatalf("ari %.17g, scikit-learn %.17g", got["ari"], *want)
	}
}

// batch --planes all: every plane of the 4-page stack is an image of its
// own (STEM.z000 .. STEM.z003, the same label maps as segment --planes
// all writes), a one-plane file gives STEM.z000, manifest.csv and
// objects.csv carry a plane column, and two shards plus --rebuild give
// the same manifest as one run (apart from the seconds column).
func TestBatchPlanesAll(t *testing.T) {
	in, seg := t.TempDir(), t.TempDir()
	for _, f := range []string{"stack.tif", "uint8.tif"} {
		b, err := os.ReadFile(filepath.Join(tiffData, f))
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(in, f), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	if code, _, stderr := runCleave("segment", "--planes", "all", "--out", seg, filepath.Join(in, "stack.tif")); code != 0 {
		t.Fatalf("segment: exit %d: %s", code, stderr)
	}
	manifest := func(out string, shards int) [][]string {
		t.Helper()
		for i := range shards {
			args := []string{"batch", in, "--out", out, "--planes", "all"}
			if shards > 1 {
				args = append(args, "--shard", fmt.Sprintf("%d/%d", i, shards))
			}
			if code, _, stderr := runCleave(args...); code != 0 {
				t.Fatalf("%v: exit %d: %s", args, code, stderr)
			}
		}
		if shards > 1 {
			if code, _, stderr := runCleave("batch", "--rebuild", out); code != 0 {
				t.Fatalf("rebuild: exit %d: %s", code, stderr)
			}
		}
		rows := readCSV(t, filepath.Join(out, "manifest.csv"))
		for _, r := range rows[1:] {
			r[5] = "" // seconds
		}
		return rows
	}
	one := t.TempDir()
	rows := manifest(one, 1)
	want := [][2]string{{"stack.tif", "0"}, {"stack.tif", "1"}, {"stack.tif", "2"}, {"stack.tif", "3"}, {"uint8.tif", "0"}}
	if len(rows) != len(want)+1 || strings.Join(rows[0][:3], ",") != "input,plane,status" {
		t.Fatalf("manifest %v; want a plane column and %d rows", rows, len(want))
	}
	for k, w := range want {
		if r := rows[k+1]; r[0] != w[0] || r[1] != w[1] || r[2] != "ok" {
			t.Errorf("row %d: %v; want %v ok", k, r, w)
		}
	}
	for z := range 4 {
		name := fmt.Sprintf("stack.z%03d.labels.png", z)
		a, err1 := os.ReadFile(filepath.Join(one, name))
		b, err2 := os.ReadFile(filepath.Join(seg, name))
		if err1 != nil || err2 != nil || !bytes.Equal(a, b) {
			t.Errorf("%s: batch and segment label maps differ (%v, %v)", name, err1, err2)
		}
		if rec := readRecordFile(t, filepath.Join(one, fmt.Sprintf("stack.z%03d.json", z))); rec.Input.Stack == nil || rec.Input.Stack.Plane != z {
			t.Errorf("plane %d: record stack %+v", z, rec.Input.Stack)
		}
	}
	head, err := os.ReadFile(filepath.Join(one, "objects.csv"))
	if err != nil || !strings.HasPrefix(string(head), "input,plane,label,") {
		t.Errorf("objects.csv starts %.40q (%v); want input,plane,label,", head, err)
	}
	if sharded := manifest(t.TempDir(), 2); !slices.EqualFunc(rows, sharded, slices.Equal) {
		t.Errorf("two shards and --rebuild: %v; one run: %v", sharded, rows)
	}
}
