package main

import (
	"encoding/json"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/scoring"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/tuning"
	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/segment/labelmap"
	"github.com/cleave-seg/cleave/segment/score"
)

// maskReference is one case of testdata/score/masks/reference.json,
// written by testdata/score/make_mask_reference.py with Debian's
// python3-sklearn 1.2.1 and python3-skimage 0.19.3.
type maskReference struct {
	Name        string  `json:"name"`
	PredBinary  bool    `json:"pred_binary"`
	PredComp8   *int    `json:"pred_components_8"`
	TruthComp8  int     `json:"truth_components_8"`
	TruthComp4  int     `json:"truth_components_4"`
	ARI         float64 `json:"ari"`
	ARIUnsplit  float64 `json:"ari_unsplit"`
	predPath    string
	truthPath   string
	labelledMap string
}

func loadMaskReference(t *testing.T) []maskReference {
	t.Helper()
	dir := filepath.Join("..", "..", "testdata", "score", "masks")
	raw, err := os.ReadFile(filepath.Join(dir, "reference.json"))
	if err != nil {
		t.Fatal(err)
	}
	var doc struct {
		Cases []maskReference `json:"cases"`
	}
	if err := json.Unmarshal(raw, &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.Cases) != 3 {
		t.Fatalf("reference.json holds %d cases, want 3", len(doc.Cases))
	}
	for k := range doc.Cases {
		c := &doc.Cases[k]
		c.predPath = filepath.Join(dir, "pred", c.Name+".png")
		c.truthPath = filepath.Join(dir, "truth", c.Name+"_mask.png")
		c.labelledMap = filepath.Join(dir, "labelled", c.Name+".png")
	}
	return doc.Cases
}

type scoreJSON struct {
	score.Report
	PredMap  scoring.Reading `json:"pred_map"`  // Kind "" when absent: a label map
	TruthMap scoring.Reading `json:"truth_map"` // likewise
}

func scoreJSONOf(t *testing.T, args ...string) scoreJSON {
	t.Helper()
	var got scoreJSON
	if err := json.Unmarshal([]byte(runOK(t, append([]string{"score", "--json"}, args...)...)), &got); err != nil {
		t.Fatal(err)
	}
	return got
}

// TestMaskComponentsSkimage: score.MaskComponents on each committed mask
// gives the labels of scikit-image's measure.label(mask, connectivity=2)
// (labelled/NAME.png), both numbered in raster order of each component's
// first pixel; the counts differ from 4-connectivity's where the
// generator built corner contacts and diagonal strokes.
func TestMaskComponentsSkimage(t *testing.T) {
	for _, c := range loadMaskReference(t) {
		lm, err := imageio.ReadLabels(c.truthPath)
		if err != nil {
			t.Fatal(err)
		}
		mask, w, h := lm.Pix, lm.Width, lm.Height
		if _, ok := score.BinaryValue(mask); !ok {
			t.Fatalf("%s: not read as a binary mask", c.truthPath)
		}
		lm, err = imageio.ReadLabels(c.labelledMap)
		if err != nil {
			t.Fatal(err)
		}
		want := lm.Pix
		got, n := score.MaskComponents(labelmap.Map{Pix: mask, Width: w, Height: h})
		if n != c.TruthComp8 || !slices.Equal(got.Pix, want) {
			t.Errorf("%s: %d components; scikit-image's label (connectivity 2) gives %d; maps equal: %v", c.Name, n, c.TruthComp8, slices.Equal(got.Pix, want))
		}
	}
}

// TestScoreBinaryMasks: cleave score with a binary-mask truth (and, for
// blobs, a binary-mask prediction) gives
//   - the ARI of scikit-learn's adjusted_rand_score on the masks labelled
//     by scikit-image's measure.label, connectivity 2 (reference.json);
//   - every metric equal to scoring against that labelled map itself
//     (labelled/NAME.png), so the object matching counts the components;
//   - with --split-masks off, scikit-learn's ARI of the unsplit mask;
//
// and --json, --csv and the text say how each image was read.
func TestScoreBinaryMasks(t *testing.T) {
	for _, c := range loadMaskReference(t) {
		got := scoreJSONOf(t, c.predPath, c.truthPath)
		// Reference: sklearn adjusted_rand_score on skimage-labelled maps.
		if math.Abs(got.ARI-c.ARI) > 1e-12 {
			t.Errorf("%s: ari %.15g; scikit-learn on scikit-image's labels %.15g", c.Name, got.ARI, c.ARI)
		}
		if got.TruthMap.Kind != scoring.KindMaskComponents || got.TruthMap.Objects != c.TruthComp8 {
			t.Errorf("%s: truth read as %+v; want %s with scikit-image's %d components", c.Name, got.TruthMap, scoring.KindMaskComponents, c.TruthComp8)
		}
		if c.PredBinary && (got.PredMap.Kind != scoring.KindMaskComponents || got.PredMap.Objects != *c.PredComp8) {
			t.Errorf("%s: prediction read as %+v; want %s with scikit-image's %d components", c.Name, got.PredMap, scoring.KindMaskComponents, *c.PredComp8)
		}
		if !c.PredBinary && got.PredMap.Kind != "" {
			t.Errorf("%s: prediction read as %+v; want a label map (no pred_map key)", c.Name, got.PredMap)
		}
		// Reference: the project's own scoring of the map labelled by
		// scikit-image (the same numbers for every metric).
		lab := scoreJSONOf(t, c.predPath, c.labelledMap)
		if lab.TruthMap.Kind != "" && c.TruthComp8 > 1 {
			t.Errorf("%s: the labelled truth read as %+v", c.Name, lab.TruthMap)
		}
		for i, n := range score.Metrics() {
			if a, b := got.Values()[i], lab.Values()[i]; a != b {
				t.Errorf("%s: %s %.15g on the mask, %.15g on scikit-image's labelled map", c.Name, n, a, b)
			}
		}
		// Reference: sklearn adjusted_rand_score on the masks as stored.
		off := scoreJSONOf(t, "--split-masks", "off", c.predPath, c.truthPath)
		if math.Abs(off.ARI-c.ARIUnsplit) > 1e-12 || off.TruthMap.Kind != scoring.KindMaskUnsplit {
			t.Errorf("%s: --split-masks off: ari %.15g (%+v); scikit-learn on the unsplit mask %.15g", c.Name, off.ARI, off.TruthMap, c.ARIUnsplit)
		}
	}

	cases := loadMaskReference(t)
	shapes := cases[0]
	text := runOK(t, "score", shapes.predPath, shapes.truthPath)
	if !strings.Contains(text, "truth:      a binary mask (0 and one other value): its 5 objects, the 8-connected components, were scored") {
		t.Errorf("text output does not say how the truth was read:\n%s", text)
	}
	csvPath := filepath.Join(t.TempDir(), "s.csv")
	runOK(t, "score", "--csv", csvPath, shapes.predPath, shapes.truthPath)
	rows := readCSV(t, csvPath)
	n := len(rows[0])
	if strings.Join(rows[0][n-4:], ",") != "pred_map,pred_objects,truth_map,truth_objects" || strings.Join(rows[1][n-4:], ",") != "labels,5,mask-components,5" {
		t.Errorf("csv: %v / %v", rows[0][n-4:], rows[1][n-4:])
	}
	if code, _, stderr := runCleave("score", "--split-masks", "maybe", shapes.predPath, shapes.truthPath); code != exitUsage || !strings.Contains(stderr, "--split-masks must be on or off") {
		t.Errorf("--split-masks maybe: exit %d, %s", code, stderr)
	}
}

// TestBinaryValue: exactly 0 and one other value make a mask; one value
// alone, or three, do not (the definition of a binary mask used here).
func TestBinaryValue(t *testing.T) {
	for _, c := range []struct {
		labels []int32
		value  int32
		ok     bool
	}{
		{[]int32{0, 255, 0, 255}, 255, true},
		{[]int32{7, 0, 7}, 7, true},
		{[]int32{0, 0}, 0, false},
		{[]int32{3, 3}, 0, false},
		{[]int32{0, 1, 2}, 0, false},
	} {
		if v, ok := score.BinaryValue(c.labels); v != c.value && c.ok || ok != c.ok {
			t.Errorf("%v: %d %v; want %d %v", c.labels, v, ok, c.value, c.ok)
		}
	}
}

// TestTuneBinaryMaskTruth: tune against a 0/255 binary mask (the
// generator's exact truth with its labels dropped) scores every setting
// as against the mask's 8-connected components saved as a label map
// (score.MaskComponents, checked against scikit-image's label in
// TestMaskComponentsSkimage), says so on stdout and in tune.json, and with
// --split-masks off scores the mask as one object, so that object F1
// falls (one truth object against several found).
func TestTuneBinaryMaskTruth(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	dir := t.TempDir()
	images, labelled, masks := filepath.Join(dir, "images"), filepath.Join(dir, "labelled"), filepath.Join(dir, "masks")
	for _, d := range []string{images, labelled, masks} {
		if err := os.MkdirAll(d, 0o755); err != nil {
			t.Fatal(err)
		}
	}
	sc := writeNuclei(t, images, 7400, 1, 224)[0]
	truthPath := filepath.Join(images, sc.Name+".truth.png")
	lm, err := imageio.ReadLabels(truthPath)
	if err != nil {
		t.Fatal(err)
	}
	truth, w, h := lm.Pix, lm.Width, lm.Height
	if err := os.Remove(truthPath); err != nil {
		t.Fatal(err)
	}
	mask := make([]int32, len(truth))
	for i, l := range truth {
		if l != 0 {
			mask[i] = 255
		}
	}
	comp, n := score.MaskComponents(labelmap.Map{Pix: mask, Width: w, Height: h})
	if n < 3 {
		t.Fatalf("seed 7400: %d nuclei; the test needs several", n)
	}
	for _, f := range []struct {
		path   string
		labels []int32
	}{{filepath.Join(masks, sc.Name+"_mask.png"), mask}, {filepath.Join(labelled, sc.Name+"_mask.png"), comp.Pix}} {
		if err := imageio.WriteAtomic(f.path, false, func(wr io.Writer) error {
			return imageio.EncodeLabels(wr, labelmap.Map{Pix: f.labels, Width: w, Height: h}, 0)
		}); err != nil {
			t.Fatal(err)
		}
	}
	args := []string{"--classes", "2", "--background", "dark", "--superpixels", "200", "--sigma-i", "0.01", "--sigma-x", "8", "--max-ncut", "0.15", "--budget", "0", "--folds", "0"}
	tuneWith := func(truthDir string, extra ...string) (tuning.Report, string) {
		out := filepath.Join(t.TempDir(), "tuned")
		stdout := runOK(t, append(append([]string{"tune", "--images", images, "--truth", truthDir, "--out", out}, args...), extra...)...)
		raw, err := os.ReadFile(filepath.Join(out, "tune.json"))
		if err != nil {
			t.Fatal(err)
		}
		var rep tuning.Report
		if err := json.Unmarshal(raw, &rep); err != nil {
			t.Fatal(err)
		}
		return rep, stdout
	}
	ref, _ := tuneWith(labelled)
	got, stdout := tuneWith(masks)
	if *got.BestMetrics != *ref.BestMetrics {
		t.Errorf("mask truth: %+v; its components as labels: %+v", *got.BestMetrics, *ref.BestMetrics)
	}
	if len(got.TruthMaps) != 1 || got.TruthMaps[0].Kind != scoring.KindMaskComponents || got.TruthMaps[0].Objects != n {
		t.Errorf("tune.json truth_maps %+v; want one mask of %d components", got.TruthMaps, n)
	}
	if !strings.Contains(stdout, "1 of 1 truth is a binary mask, scored by their 8-connected components") {
		t.Errorf("stdout does not say the truth was a mask:\n%s", stdout)
	}
	off, stdout := tuneWith(masks, "--split-masks", "off")
	if off.TruthMaps[0].Kind != scoring.KindMaskUnsplit || !strings.Contains(stdout, "each scored as one label (--split-masks off)") || !(off.BestMetrics.F1 < ref.BestMetrics.F1) {
		t.Errorf("--split-masks off: %+v, f1 %g (with components %g)\n%s", off.TruthMaps, off.BestMetrics.F1, ref.BestMetrics.F1, stdout)
	}
}
