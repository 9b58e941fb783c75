package scoring

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sort"
	"strings"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
)

// truthSuffixes mark a ground-truth file: NAME.truth.png, NAME_mask.tif,
// NAME_truth.png all belong to the image NAME.
var truthSuffixes = [...]string{".truth", "_mask", "_truth"}

// LabelsSuffix marks the label map cleave segment writes (NAME.labels.png).
const LabelsSuffix = ".labels"

// TrimTruth returns the image name a truth stem belongs to and whether the
// stem carries a truth suffix.
func TrimTruth(stem string) (string, bool) {
	for _, s := range truthSuffixes {
		if n, ok := strings.CutSuffix(stem, s); ok && n != "" {
			return n, true
		}
	}
	return stem, false
}

// IsTruthName reports whether a file name (or path) follows the truth-naming
// rule of tune and score: its stem is NAME.truth, NAME_mask or NAME_truth.
func IsTruthName(name string) bool {
	_, ok := TrimTruth(pipeline.Stem(name))
	return ok
}

// ListImageFiles lists the image files of a folder (by extension), sorted
// by name. It errors when dir is not a readable folder.
func ListImageFiles(dir string) ([]string, error) {
	st, err := os.Stat(dir)
	if err != nil {
		return nil, err
	}
	if !st.IsDir() {
		return nil, fmt.Errorf("%s is not a folder", dir)
	}
	ents, err := os.ReadDir(dir)
	if err != nil {
		return nil, err
	}
	var files []string
	for _, e := range ents {
		if e.Type().IsRegular() || e.Type()&os.ModeSymlink != 0 {
			if pipeline.IsImageName(e.Name()) && !strings.HasPrefix(e.Name(), ".") {
				files = append(files, filepath.Join(dir, e.Name()))
			}
		}
	}
	sort.Strings(files)
	return files, nil
}

// Pair is an image (or a prediction) with its truth.
type Pair struct {
	Name, Image, Truth string
}

// truthIndex maps image names to truth files found in dir. A truth file is
// one whose stem is NAME.truth, NAME_mask or NAME_truth; when plain is true
// (the truth folder is not the images folder) a file whose stem is NAME
// alone is the truth of NAME unless a suffixed one exists (so a folder
// holding NAME.png and NAME.truth.png serves as a truth folder too). Two
// truth files of the same kind for one name are an error.
func truthIndex(dir string, plain bool) (map[string]string, error) {
	files, err := ListImageFiles(dir)
	if err != nil {
		return nil, fmt.Errorf("truth folder: %w", err)
	}
	suffixed, bare := map[string]string{}, map[string]string{}
	for _, f := range files {
		name, ok := TrimTruth(pipeline.Stem(f))
		idx := suffixed
		if !ok {
			if !plain {
				continue
			}
			idx = bare
		}
		if prev, dup := idx[name]; dup {
			return nil, fmt.Errorf("truth folder %s: both %s and %s are a truth for %s; keep one", dir, filepath.Base(prev), filepath.Base(f), name)
		}
		idx[name] = f
	}
	for name, f := range bare {
		if _, ok := suffixed[name]; !ok {
			suffixed[name] = f
		}
	}
	return suffixed, nil
}

// sameDir reports whether two paths name the same folder.
func sameDir(a, b string) bool {
	sa, err1 := os.Stat(a)
	sb, err2 := os.Stat(b)
	return err1 == nil && err2 == nil && os.SameFile(sa, sb)
}

// PairImages pairs the images of imagesDir with truths in truthDir (the
// rule of tune): image NAME.ext goes with the truth whose stem is NAME, NAME.truth,
// NAME_mask or NAME_truth. Files with a truth suffix are never images.
// It returns the pairs sorted by name and the unpaired images.
func PairImages(imagesDir, truthDir string) (pairs []Pair, unpaired []string, err error) {
	files, err := ListImageFiles(imagesDir)
	if err != nil {
		return nil, nil, fmt.Errorf("images folder: %w", err)
	}
	idx, err := truthIndex(truthDir, !sameDir(imagesDir, truthDir))
	if err != nil {
		return nil, nil, err
	}
	for _, f := range files {
		stem := pipeline.Stem(f)
		if IsTruthName(f) {
			continue
		}
		if t, ok := idx[stem]; ok {
			pairs = append(pairs, Pair{Name: stem, Image: f, Truth: t})
		} else {
			unpaired = append(unpaired, f)
		}
	}
	return pairs, unpaired, nil
}

// PairPredictions pairs the predictions in predDir with the truths in truthDir:
// when predDir holds label maps written by cleave segment (NAME.labels.png)
// only those are predictions, named NAME; otherwise every image file that is
// not a truth is, named by its stem. Files unpaired on either side are
// returned in un (sorted), not as an error: the caller decides.
func PairPredictions(predDir, truthDir string) ([]Pair, Unpaired, error) {
	var un Unpaired
	files, err := ListImageFiles(predDir)
	if err != nil {
		return nil, un, fmt.Errorf("prediction folder: %w", err)
	}
	idx, err := truthIndex(truthDir, !sameDir(predDir, truthDir))
	if err != nil {
		return nil, un, err
	}
	if len(files) == 0 {
		return nil, un, fmt.Errorf("prediction folder %s holds no image files", predDir)
	}
	if len(idx) == 0 {
		return nil, un, fmt.Errorf("truth folder %s holds no truth images", truthDir)
	}
	hasLabels := false
	for _, f := range files {
		if strings.HasSuffix(pipeline.Stem(f), LabelsSuffix) {
			hasLabels = true
		}
	}
	preds := map[string]string{}
	for _, f := range files {
		stem := pipeline.Stem(f)
		name := stem
		if hasLabels {
			var ok bool
			if name, ok = strings.CutSuffix(stem, LabelsSuffix); !ok {
				continue
			}
		} else if _, isTruth := TrimTruth(stem); isTruth {
			continue
		}
		if prev, dup := preds[name]; dup {
			return nil, un, fmt.Errorf("prediction folder %s: both %s and %s are predictions for %s; keep one", predDir, filepath.Base(prev), filepath.Base(f), name)
		}
		preds[name] = f
	}
	var pairs []Pair
	for name, p := range preds {
		if t, ok := idx[name]; ok {
			pairs = append(pairs, Pair{Name: name, Image: p, Truth: t})
		} else {
			un.NoTruth = append(un.NoTruth, p)
		}
	}
	for name, t := range idx {
		if _, ok := preds[name]; !ok {
			un.NoPred = append(un.NoPred, t)
		}
	}
	sort.Slice(pairs, func(i, j int) bool { return pairs[i].Name < pairs[j].Name })
	sort.Strings(un.NoTruth)
	sort.Strings(un.NoPred)
	return pairs, un, nil
}

// Unpaired are the files of two folders left without a partner:
// predictions with no truth and truths with no prediction.
type Unpaired struct {
	NoTruth, NoPred []string
}

func (u Unpaired) Count() int { return len(u.NoTruth) + len(u.NoPred) }

// PairArgs pairs the two arguments of a score: two label images (one
// pair) or two folders (PairPredictions; folders is true). Unpaired files
// fail the pairing, naming them, unless pairedOnly: then each is named on
// log ("cleave score: not scored: ..."). A file and a folder are a
// *pipeline.RequestError; an argument that cannot be read, unpaired files
// and folders without a pair are plain errors. v words parameter names.
func PairArgs(pred, truth string, pairedOnly bool, log io.Writer, v pipeline.Voice) (pairs []Pair, folders bool, err error) {
	pst, err := os.Stat(pred)
	if err != nil {
		return nil, false, fmt.Errorf("prediction: %w", err)
	}
	tst, err := os.Stat(truth)
	if err != nil {
		return nil, false, fmt.Errorf("truth: %w", err)
	}
	folders = pst.IsDir()
	switch {
	case pst.IsDir() != tst.IsDir():
		dir, file := pred, truth
		if !pst.IsDir() {
			dir, file = truth, pred
		}
		return nil, false, &pipeline.RequestError{Err: fmt.Errorf("give two files or two folders; %s is a folder and %s is not", dir, file)}
	case !folders:
		return []Pair{{Name: pipeline.Stem(pred), Image: pred, Truth: truth}}, false, nil
	}
	pairs, un, err := PairPredictions(pred, truth)
	if err != nil {
		return nil, true, err
	}
	if un.Count() > 0 && !pairedOnly {
		return nil, true, fmt.Errorf("unpaired files: %s; %s scores the %s that pair up and names the rest", UnpairedMessage(un, pred, truth), v.Msg("`paired-only`"), pipeline.Plural(len(pairs), "pair"))
	}
	for _, f := range un.NoTruth {
		fmt.Fprintf(log, "cleave score: not scored: %s has no truth in %s (want NAME, NAME.truth, NAME_mask or NAME_truth)\n", f, truth)
	}
	for _, f := range un.NoPred {
		fmt.Fprintf(log, "cleave score: not scored: %s has no prediction in %s\n", f, pred)
	}
	if len(pairs) == 0 {
		return nil, true, fmt.Errorf("no prediction in %s pairs with a truth in %s", pred, truth)
	}
	return pairs, true, nil
}
