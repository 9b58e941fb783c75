// Package scoring is cleave score's work, shared with tune: pairing
// predictions (or images) with their truth files by name (pairs.go),
// reading a label image for scoring, a binary mask split into its
// 8-connected components (Read), scoring pairs of files with every
// measure of segment/score (Files, Score) and the report as CSV and JSON
// (WriteCSV, WriteJSON). It holds no flag syntax: a parameter named in an
// error is in backquotes ("`tolerance`") for the command to word.
package scoring

import (
	"context"
	"fmt"
	"math"

	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/segment/labelmap"
	"github.com/cleave-seg/cleave/segment/score"
)

// How a label image was read for scoring (Reading.Kind).
const (
	KindLabels         = "labels"          // a label map: values as they are
	KindMaskComponents = "mask-components" // a binary mask, its 8-connected components numbered 1..n
	KindMaskUnsplit    = "mask-unsplit"    // a binary mask kept as one label (not split)
)

// Reading says how one label image was read: as labels or as a binary
// mask, and how many objects (labels above 0) were scored.
type Reading struct {
	Kind    string `json:"kind"`
	Objects int    `json:"objects"`
}

// Map is a label image as read for scoring: its labels and how they
// were read.
type Map struct {
	labelmap.Map
	Reading
}

// Read reads a label image for scoring (imageio.ReadLabels) and, when
// split is set and it is a binary mask (score.BinaryValue: 0 and one
// other value), replaces it by its 8-connected components
// (score.MaskComponents): hand-drawn annotations and thresholded masks are
// saved that way, and read as one label they would make every object one.
func Read(path string, split bool) (Map, error) {
	lm, err := imageio.ReadLabels(path)
	if err != nil {
		return Map{}, err
	}
	m := Map{Map: lm}
	if _, binary := score.BinaryValue(lm.Pix); binary {
		if !split {
			m.Reading = Reading{Kind: KindMaskUnsplit, Objects: 1}
			return m, nil
		}
		m.Map, m.Objects = score.MaskComponents(lm)
		m.Kind = KindMaskComponents
		return m, nil
	}
	seen := map[int32]bool{}
	for _, l := range lm.Pix {
		if l != 0 {
			seen[l] = true
		}
	}
	m.Reading = Reading{Kind: KindLabels, Objects: len(seen)}
	return m, nil
}

// ToleranceError is a boundary tolerance above the diagonal of a label
// map: no two pixels lie farther apart, so a larger tolerance is a
// mistake, not a stricter or looser score.
type ToleranceError struct {
	Tolerance     float64
	Path          string
	Width, Height int
}

func (e *ToleranceError) Error() string {
	diag := math.Hypot(float64(e.Width), float64(e.Height))
	return fmt.Sprintf("`tolerance` %g is larger than the diagonal of %s (%dx%d: %.0f pixels); give at most %.0f", e.Tolerance, e.Path, e.Width, e.Height, diag, math.Floor(diag))
}

// CheckTolerance refuses a boundary tolerance tol above the diagonal of a
// width x height label map (file path) with a *ToleranceError.
func CheckTolerance(tol float64, path string, width, height int) error {
	if diag := math.Hypot(float64(width), float64(height)); tol > diag {
		return &ToleranceError{Tolerance: tol, Path: path, Width: width, Height: height}
	}
	return nil
}

// Scored is one scored pair: every measure and how each side was read.
type Scored struct {
	Name  string `json:"name"`
	Pred  string `json:"pred"`
	Truth string `json:"truth"`
	score.Report
	PredMap  Reading `json:"-"`
	TruthMap Reading `json:"-"`
	// PredMask and TruthMask are set when that side is a binary mask
	// (absent for label maps).
	PredMask  *Reading `json:"pred_map,omitempty"`
	TruthMask *Reading `json:"truth_map,omitempty"`
}

// masksOnly is r when it is a binary mask, else nil (the JSON keys).
func masksOnly(r Reading) *Reading {
	if r.Kind == KindLabels {
		return nil
	}
	return &r
}

// Files reads a prediction and a truth label image (Read) and scores them
// with boundary tolerance tol (pixels); it returns how each was read.
// Errors name the file; a tolerance above the diagonal is a
// *ToleranceError.
func Files(ctx context.Context, predPath, truthPath string, tol float64, split bool) (m score.Report, pr, tr Reading, err error) {
	pred, err := Read(predPath, split)
	if err != nil {
		return score.Report{}, pr, tr, fmt.Errorf("prediction %w", err)
	}
	pr = pred.Reading
	truth, err := Read(truthPath, split)
	if err != nil {
		return score.Report{}, pr, tr, fmt.Errorf("truth %w", err)
	}
	tr = truth.Reading
	if pred.Width != truth.Width || pred.Height != truth.Height {
		return score.Report{}, pr, tr, fmt.Errorf("%s is %dx%d but its truth %s is %dx%d; a prediction and its truth must have the same size", predPath, pred.Width, pred.Height, truthPath, truth.Width, truth.Height)
	}
	if err := CheckTolerance(tol, predPath, pred.Width, pred.Height); err != nil {
		return score.Report{}, pr, tr, err
	}
	m, err = score.Compare(ctx, pred.Map, truth.Map, tol)
	return m, pr, tr, err
}

// Result is every scored pair and their mean.
type Result struct {
	Pairs []Scored
	Mean  score.Report
}

// Score scores the pairs in order (Files) and their mean. It stops at the
// first error, and returns ctx.Err() when ctx is done.
func Score(ctx context.Context, pairs []Pair, tol float64, split bool) (*Result, error) {
	var r Result
	for _, p := range pairs {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		m, pr, tr, err := Files(ctx, p.Image, p.Truth, tol, split)
		if cerr := ctx.Err(); cerr != nil {
			return nil, cerr
		}
		if err != nil {
			return nil, err
		}
		r.Pairs = append(r.Pairs, Scored{Name: p.Name, Pred: p.Image, Truth: p.Truth, Report: m, PredMap: pr, TruthMap: tr, PredMask: masksOnly(pr), TruthMask: masksOnly(tr)})
	}
	all := make([]score.Report, len(r.Pairs))
	for i, s := range r.Pairs {
		all[i] = s.Report
	}
	r.Mean = score.Mean(all)
	return &r, nil
}
