package scoring

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"errors"
	"image"
	"image/color"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// writeLabels writes rows of labels as a 16-bit gray PNG.
func writeLabels(t *testing.T, path string, rows [][]uint16) {
	t.Helper()
	img := image.NewGray16(image.Rect(0, 0, len(rows[0]), len(rows)))
	for y, r := range rows {
		for x, v := range r {
			img.SetGray16(x, y, color.Gray16{Y: v})
		}
	}
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if err := png.Encode(f, img); err != nil {
		t.Fatal(err)
	}
}

// Two blobs touching at a corner and a third apart: a binary mask (0 and
// one other value) splits into 2 components with 8-connectivity (counted
// by hand: the corner joins the first two); unsplit it is one object; a
// map of labels 0, 3, 7 is read as it is, 2 objects.
func TestRead(t *testing.T) {
	dir := t.TempDir()
	mask := filepath.Join(dir, "mask.png")
	writeLabels(t, mask, [][]uint16{
		{255, 255, 0, 0, 0, 0},
		{255, 255, 0, 0, 0, 255},
		{0, 0, 255, 0, 0, 255},
		{0, 0, 0, 0, 0, 0},
	})
	m, err := Read(mask, true)
	if err != nil || m.Kind != KindMaskComponents || m.Objects != 2 || m.Width != 6 || m.Height != 4 {
		t.Fatalf("split: %+v, %v", m.Reading, err)
	}
	if m.Pix[0] == 0 || m.Pix[0] != m.Pix[2*6+2] || m.Pix[1*6+5] == m.Pix[0] || m.Pix[1*6+5] != m.Pix[2*6+5] {
		t.Errorf("components %v", m.Pix)
	}
	if u, err := Read(mask, false); err != nil || u.Kind != KindMaskUnsplit || u.Objects != 1 || u.Pix[0] != 255 {
		t.Errorf("unsplit: %+v, %v", u.Reading, err)
	}
	labels := filepath.Join(dir, "labels.png")
	writeLabels(t, labels, [][]uint16{{0, 3, 3}, {7, 7, 0}})
	if l, err := Read(labels, true); err != nil || l.Kind != KindLabels || l.Objects != 2 || l.Pix[1] != 3 {
		t.Errorf("labels: %+v %v, %v", l.Reading, l.Pix, err)
	}
	if _, err := Read(filepath.Join(dir, "none.png"), true); err == nil || !strings.Contains(err.Error(), "none.png") {
		t.Errorf("missing file: %v", err)
	}
}

// Identical partitions score ARI 1 and object F1 1; a prediction of one
// label against two truth objects scores ARI 0 (a single cluster is the
// expected index, Hubert and Arabie 1985). A size mismatch names both
// files; a tolerance above the diagonal (3 x 4: 5 pixels) is a
// *ToleranceError naming the parameter in backquotes.
func TestFiles(t *testing.T) {
	dir := t.TempDir()
	truth, same, one, wide := filepath.Join(dir, "t.png"), filepath.Join(dir, "s.png"), filepath.Join(dir, "o.png"), filepath.Join(dir, "w.png")
	two := [][]uint16{{1, 1, 0}, {1, 0, 0}, {0, 0, 2}, {0, 2, 2}}
	writeLabels(t, truth, two)
	writeLabels(t, same, [][]uint16{{5, 5, 0}, {5, 0, 0}, {0, 0, 9}, {0, 9, 9}})
	writeLabels(t, one, [][]uint16{{4, 4, 4}, {4, 4, 4}, {4, 4, 4}, {4, 4, 4}})
	writeLabels(t, wide, [][]uint16{{1, 1, 0, 0}})
	ctx := context.Background()
	m, pr, tr, err := Files(ctx, same, truth, 1, true)
	if err != nil || m.ARI != 1 || m.F1 != 1 || pr.Kind != KindLabels || tr.Objects != 2 {
		t.Errorf("identical: ARI %v F1 %v, %+v %+v, %v", m.ARI, m.F1, pr, tr, err)
	}
	m, pr, _, err = Files(ctx, one, truth, 1, true)
	if err != nil || math.Abs(m.ARI) > 1e-12 || pr.Kind != KindMaskUnsplit && pr.Kind != KindLabels {
		t.Errorf("one label: ARI %v, %+v, %v", m.ARI, pr, err)
	}
	if _, _, _, err := Files(ctx, wide, truth, 1, true); err == nil || !strings.Contains(err.Error(), "4x1") || !strings.Contains(err.Error(), "3x4") {
		t.Errorf("size mismatch: %v", err)
	}
	_, _, _, err = Files(ctx, same, truth, 6, true)
	var te *ToleranceError
	if !errors.As(err, &te) || te.Width != 3 || te.Height != 4 || !strings.Contains(err.Error(), "`tolerance` 6") || !strings.Contains(err.Error(), "give at most 5") {
		t.Errorf("tolerance 6 on 3x4: %v", err)
	}
	if err := CheckTolerance(5, "x", 3, 4); err != nil {
		t.Errorf("tolerance 5 on the 5-pixel diagonal refused: %v", err)
	}
}

// Score scores pairs in order and their mean; the CSV has a row per pair
// and a mean row for folders; the JSON of folders holds pairs and mean,
// that of one pair its measures with truth_map only for a mask; a
// cancelled context stops it.
func TestScoreAndReports(t *testing.T) {
	dir := t.TempDir()
	truth, same, one, mask := filepath.Join(dir, "t.png"), filepath.Join(dir, "s.png"), filepath.Join(dir, "o.png"), filepath.Join(dir, "m.png")
	writeLabels(t, truth, [][]uint16{{1, 1, 0}, {1, 0, 0}, {0, 0, 2}, {0, 2, 2}})
	writeLabels(t, same, [][]uint16{{5, 5, 0}, {5, 0, 0}, {0, 0, 9}, {0, 9, 9}})
	writeLabels(t, one, [][]uint16{{4, 4, 4}, {4, 4, 4}, {4, 4, 4}, {4, 4, 4}})
	writeLabels(t, mask, [][]uint16{{255, 255, 0}, {255, 0, 0}, {0, 0, 255}, {0, 255, 255}})
	pairs := []Pair{{Name: "same", Image: same, Truth: truth}, {Name: "one", Image: one, Truth: truth}}
	r, err := Score(context.Background(), pairs, 1, true)
	if err != nil || len(r.Pairs) != 2 || r.Pairs[0].Name != "same" || math.Abs(r.Mean.ARI-(r.Pairs[0].ARI+r.Pairs[1].ARI)/2) > 1e-15 {
		t.Fatalf("score: %+v, %v", r, err)
	}
	var buf bytes.Buffer
	if err := WriteCSV(&buf, r, true); err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(&buf).ReadAll()
	if err != nil || len(rows) != 4 || rows[0][0] != "name" || rows[3][0] != "mean" || rows[1][len(rows[1])-4] != KindLabels {
		t.Errorf("csv %v, %v", rows, err)
	}
	buf.Reset()
	if err := WriteJSON(&buf, r, true); err != nil {
		t.Fatal(err)
	}
	var folders struct {
		Pairs []map[string]any `json:"pairs"`
		Mean  map[string]any   `json:"mean"`
	}
	if err := json.Unmarshal(buf.Bytes(), &folders); err != nil || len(folders.Pairs) != 2 || folders.Mean["ari"] != r.Mean.ARI || folders.Pairs[0]["truth_map"] != nil {
		t.Errorf("folders json %s, %v", buf.String(), err)
	}
	single, err := Score(context.Background(), []Pair{{Name: "s", Image: same, Truth: mask}}, 1, true)
	if err != nil {
		t.Fatal(err)
	}
	buf.Reset()
	if err := WriteJSON(&buf, single, false); err != nil {
		t.Fatal(err)
	}
	var one1 map[string]any
	if err := json.Unmarshal(buf.Bytes(), &one1); err != nil || one1["pred_map"] != nil || one1["truth_map"] == nil || one1["ari"] != 1.0 {
		t.Errorf("single json %s, %v", buf.String(), err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := Score(ctx, pairs, 1, true); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled: %v", err)
	}
}
