package segment

import (
	"errors"
	"fmt"
	"math"

	"github.com/cleave-seg/cleave/segment/eigen"
	"github.com/cleave-seg/cleave/segment/labelmap"
	"github.com/cleave-seg/cleave/segment/parallel"
)

// Warning is a finding about a result that its user should check before
// trusting it: Run produced the result, but something in it is likely not
// what was wanted (no cut at all, no objects, one object over most of the
// image) or was computed less accurately than asked (an eigensolve that
// stopped above its residual target).
type Warning struct {
	// Code is a stable identifier (one of the Warn constants).
	Code string
	// Message says what happened and what to try, in a user's words.
	// Parameters are named in backquotes (`max-ncut`), so that a command
	// can write them in its own syntax.
	Message string
}

// Warning codes.
const (
	// WarnNoSplit: the image came out as one region.
	WarnNoSplit = "no-split"
	// WarnNoObjects: an object mode found no object.
	WarnNoObjects = "no-objects"
	// WarnOneObject: one object covers most of the image.
	WarnOneObject = "one-object"
	// WarnSolver: an eigensolve stopped above its residual target; the
	// best vectors it reached were used.
	WarnSolver = "solver-residual"
)

// oneObjectShare is the share of the image above which a single object is
// reported (WarnOneObject): objects on a background rarely fill more than
// half of the field, while background taken for an object usually does
// (common practice for a plausibility check; our threshold).
const oneObjectShare = 0.5

// shortfall records the worst eigensolve (by residual over target) that
// stopped above its residual target. The zero value records none.
type shortfall struct {
	residual, tol float64
	nodes         int
}

// note records a solve of an n-node graph that returned err with result
// r at target tol. It reports whether the solve is usable: err is nil,
// or it only says the target was not met and r holds the best pairs
// reached (eigen.Smallest returns them with eigen.ErrNotConverged).
func (s *shortfall) note(err error, r *eigen.Result, tol float64, n int) bool {
	if err == nil {
		return true
	}
	if !errors.Is(err, eigen.ErrNotConverged) || r == nil {
		return false
	}
	if tol == 0 {
		tol = eigen.DefaultTol
	}
	worst := 0.0
	for _, v := range r.Residuals {
		worst = math.Max(worst, v)
	}
	if s.residual == 0 || worst/tol > s.residual/s.tol {
		s.residual, s.tol, s.nodes = worst, tol, n
	}
	return true
}

// merge keeps the worse of s and o.
func (s *shortfall) merge(o shortfall) {
	if o.residual > 0 && (s.residual == 0 || o.residual/o.tol > s.residual/s.tol) {
		*s = o
	}
}

// warning returns the WarnSolver warning, or nil when every solve met its
// target.
func (s shortfall) warning() *Warning {
	if s.residual == 0 {
		return nil
	}
	return &Warning{Code: WarnSolver, Message: fmt.Sprintf(
		"the eigensolver stopped at residual %.3g, above its target %.3g, on a graph of %d nodes; the cut there uses the best vectors it reached and was checked like any other, but may be placed less precisely: compare with another \x60seed\x60, or change \x60sigma-i\x60 slightly",
		s.residual, s.tol, s.nodes)}
}

// rootSplit is what the first (whole-graph) two-way cut found, kept to
// explain a result of one region.
type rootSplit struct {
	tried  bool    // a Fiedler vector was swept
	found  bool    // a split leaving min-area on both sides exists
	ncut   float64 // Ncut of the best split
	stable bool    // the Fiedler vector passed the stability test
}

// noSplitWarning explains a result of a single region.
func noSplitWarning(p Params, r rootSplit, flat bool) Warning {
	w := Warning{Code: WarnNoSplit}
	switch {
	case flat:
		w.Message = "the image came out as one region: no feature varies across it (a blank or saturated image?)"
	case p.Segments == 1:
		w.Message = "the image came out as one region because \x60segments\x60 is 1"
	case !r.tried || !r.found:
		w.Message = fmt.Sprintf("the image came out as one region: no split leaves at least %d pixels (\x60min-area\x60) on both sides; lower \x60min-area\x60", p.MinArea)
	case r.ncut > p.MaxNcut:
		w.Message = fmt.Sprintf("the image came out as one region: the best two-way split found has Ncut %.3g, above the limit %.3g (\x60max-ncut\x60); raise \x60max-ncut\x60 above %.3g, or lower \x60sigma-i\x60 so that smaller contrasts count", r.ncut, p.MaxNcut, r.ncut)
	case !r.stable:
		w.Message = fmt.Sprintf("the image came out as one region: the best two-way split (Ncut %.3g) was refused because the cut vector changes smoothly, with no clear place to cut (gradual shading, or one texture over the whole field); for uneven light try \x60flatten\x60, for low contrast lower \x60sigma-i\x60", r.ncut)
		if p.Background != "lines" {
			// A field packed with touching objects (scikit-image's
			// gravel.png) is one texture to the whole-image cut; the
			// packed mode parts it along the lines between them.
			w.Message += "; if the field is packed with touching objects (grains, gravel, a cell monolayer), \x60background\x60 lines parts it along the lines between them"
		}
	default:
		w.Message = "the image came out as one region: the only splits found left pieces smaller than \x60min-area\x60, which were merged back; lower \x60min-area\x60"
	}
	return w
}

// objectWarnings checks the objects of a label map (1..n on background 0):
// none at all, or one covering more than oneObjectShare of the image.
// classPixels is the number of pixels the classes put outside the
// background class: with none, no region looked like an object; with
// some and still no object, the pieces were too small or were taken for
// shading.
func objectWarnings(p Params, objects labelmap.Map, n, classPixels int) []Warning {
	labels := objects.Pix
	if p.Background == "" {
		return nil
	}
	if n == 0 {
		w := Warning{Code: WarnNoObjects}
		switch {
		case p.Background == BackgroundLines:
			w.Message = "no objects found: no closed network of thin dark or bright lines separates the field into pieces; packed objects separated by wider gaps may segment better with \x60classes\x60 2 and a \x60background\x60 of dark or bright"
		case classPixels > 0:
			w.Message = fmt.Sprintf("no objects found: %d pixels fell outside the %s background class, but in pieces smaller than \x60min-area\x60 (%d pixels) or with no edge on their outline (taken for shading); for small objects lower \x60min-area\x60", classPixels, p.Background, max(p.MinArea, 1))
		default:
			other := BackgroundDark
			if p.Background == BackgroundDark {
				other = BackgroundBright
			}
			w.Message = fmt.Sprintf("no objects found: every region fell into the %s class, the one taken as background; if the objects are %s than their surroundings use \x60background\x60 %s, for faint objects try \x60classes\x60 3, for uneven light try \x60flatten\x60 (about twice the object diameter)",
				p.Background, map[Background]string{BackgroundBright: "darker", BackgroundDark: "brighter"}[other], other)
		}
		return []Warning{w}
	}
	// The areas are counted on bands of rows (a run of one label at a
	// time) on the workers and added: counts, so exact in any order.
	h := objects.Height
	nb := max(1, min(h, 8))
	bandArea := make([][]int, nb)
	for c := range bandArea {
		bandArea[c] = make([]int, n+1)
	}
	parallel.Blocks(h, (h+nb-1)/nb, p.Workers, func(c, ya, yb int) {
		a := bandArea[c]
		row := labels[ya*objects.Width : yb*objects.Width]
		for i := 0; i < len(row); {
			l := row[i]
			e := i + 1
			for e < len(row) && row[e] == l {
				e++
			}
			if l > 0 {
				a[l] += e - i
			}
			i = e
		}
	})
	area := bandArea[0]
	for _, a := range bandArea[1:] {
		for l, v := range a {
			area[l] += v
		}
	}
	for l := 1; l <= n; l++ {
		share := float64(area[l]) / float64(len(labels))
		if share > oneObjectShare {
			w := Warning{Code: WarnOneObject, Message: fmt.Sprintf(
				"object %d covers %.0f%% of the image: this is probably background taken for an object (uneven light, or the wrong polarity); try \x60flatten\x60 (about twice the object diameter) or the other \x60background\x60", l, 100*share)}
			if p.Background == BackgroundLines {
				w.Message = fmt.Sprintf("object %d covers %.0f%% of the image: the line network did not close around separate objects; packed objects separated by wider gaps may segment better with \x60classes\x60 2 and a \x60background\x60 of dark or bright", l, 100*share)
			}
			return []Warning{w}
		}
	}
	return nil
}
