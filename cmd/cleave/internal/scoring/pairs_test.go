package scoring

import (
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

func touch(t *testing.T, dir string, names ...string) {
	t.Helper()
	for _, n := range names {
		if err := os.WriteFile(filepath.Join(dir, n), nil, 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

// The pairing rule of the issue: image NAME.ext goes with the truth whose
// stem is NAME, NAME.truth, NAME_mask or NAME_truth (any image extension);
// in a shared folder the suffix tells them apart.
func TestPairImages(t *testing.T) {
	shared := t.TempDir()
	touch(t, shared, "a.png", "a.truth.png", "b.tif", "b_mask.png", "c.png", "d_truth.png", "notes.txt", "e.jpg", "e_truth.tiff")
	pairs, unpaired, err := PairImages(shared, shared)
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, p := range pairs {
		got = append(got, p.Name+"="+filepath.Base(p.Image)+"+"+filepath.Base(p.Truth))
	}
	want := []string{"a=a.png+a.truth.png", "b=b.tif+b_mask.png", "e=e.jpg+e_truth.tiff"}
	if !reflect.DeepEqual(got, want) || len(unpaired) != 1 || filepath.Base(unpaired[0]) != "c.png" {
		t.Errorf("shared folder: pairs %v, unpaired %v; want %v and c.png", got, unpaired, want)
	}
	// Separate folders: a truth named like the image pairs too.
	imgs, truths := t.TempDir(), t.TempDir()
	touch(t, imgs, "x.png", "y.png")
	touch(t, truths, "x.png", "y_mask.png")
	pairs, unpaired, err = PairImages(imgs, truths)
	if err != nil || len(pairs) != 2 || len(unpaired) != 0 {
		t.Errorf("separate folders: %v, %v, %v", pairs, unpaired, err)
	}
	// Two truths of one kind for one image are ambiguous.
	touch(t, truths, "y_truth.png")
	if _, _, err := PairImages(imgs, truths); err == nil || !strings.Contains(err.Error(), "y_mask.png and y_truth.png") {
		t.Errorf("ambiguous truth: %v", err)
	}
}

// The folder rule of cleave score: NAME.labels.png (cleave segment's label map)
// pairs with NAME's truth; overlays and class maps beside it are ignored.
func TestPairPredictions(t *testing.T) {
	preds, truths := t.TempDir(), t.TempDir()
	touch(t, preds, "a.labels.png", "a.overlay.png", "a.classes.png", "b.labels.png")
	touch(t, truths, "a.png", "a.truth.png", "b_mask.png")
	pairs, un, err := PairPredictions(preds, truths)
	if err != nil || un.Count() != 0 || len(pairs) != 2 || filepath.Base(pairs[0].Truth) != "a.truth.png" || filepath.Base(pairs[1].Truth) != "b_mask.png" {
		t.Errorf("pairs %v, err %v", pairs, err)
	}
}

// Unpaired files on either side are returned, not an error; a folder
// with two predictions for one name is refused naming both.
func TestPairPredictionsUnpaired(t *testing.T) {
	preds, truths := t.TempDir(), t.TempDir()
	touch(t, preds, "a.png", "b.png", "a_truth.png")
	touch(t, truths, "a.png", "c_mask.png")
	pairs, un, err := PairPredictions(preds, truths)
	if err != nil || len(pairs) != 1 || pairs[0].Name != "a" || len(un.NoTruth) != 1 || filepath.Base(un.NoTruth[0]) != "b.png" ||
		len(un.NoPred) != 1 || filepath.Base(un.NoPred[0]) != "c_mask.png" || un.Count() != 2 {
		t.Errorf("pairs %v, unpaired %+v, err %v", pairs, un, err)
	}
	touch(t, preds, "a.jpg")
	if _, _, err := PairPredictions(preds, truths); err == nil || !strings.Contains(err.Error(), "a.jpg and a.png") {
		t.Errorf("two predictions for a: %v", err)
	}
	empty := t.TempDir()
	if _, _, err := PairPredictions(empty, truths); err == nil || !strings.Contains(err.Error(), "holds no image files") {
		t.Errorf("empty prediction folder: %v", err)
	}
	if IsTruthName("x.png") || !IsTruthName("dir/x_mask.tif") || !IsTruthName("x.truth.png") || IsTruthName("_mask.png") {
		t.Error("IsTruthName")
	}
}
