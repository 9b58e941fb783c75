// Package tune chooses segmentation parameters from images with ground
// truth. It searches over segment.Params directly: a typed search space
// (Space, one Axis per searched parameter), a coarse grid, a pattern search
// around the grid's best (Hooke and Jeeves 1961), the widening of a range
// whose end holds the best, ties broken by a cost model instead of the
// clock, and K-fold cross-validation over the images. What a setting is
// worth on an image is the caller's business, behind one seam, the
// Objective; the package knows nothing of files or flags.
package tune

import (
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"github.com/cleave-seg/cleave/segment"
)

// Param is one searched parameter of segment.Params.
type Param int

// The searched parameters, in this order in every Point, table and file.
const (
	SigmaI Param = iota
	SigmaX
	MaxNcut
	Radius
	Superpixels
	Compactness
	// Necks is the shape split of touching objects: on (1) re-cuts them
	// through the neck of their joined shape as well as along seams, off
	// (0) only along seams that do not run through a neck
	// (segment.Params.SeamsOnly).
	Necks
	// Faint is the level of the second faint-object search, against the
	// local background (segment.Params.Faint): 0 off, else whole robust
	// spreads. Its values are tried, never refined or widened.
	Faint
	NumParams
)

// The values of a switch (Param.Switch) in a Point.
const (
	Off = 0.0
	On  = 1.0
)

var paramNames = [NumParams]string{"sigma-i", "sigma-x", "max-ncut", "radius", "superpixels", "compactness", "necks", "faint"}

// String is the parameter's name, as segment.ParamError names it.
func (d Param) String() string {
	if d < 0 || d >= NumParams {
		return fmt.Sprintf("Param(%d)", int(d))
	}
	return paramNames[d]
}

// Params lists the searched parameters in order.
func Params() []Param {
	ps := make([]Param, NumParams)
	for i := range ps {
		ps[i] = Param(i)
	}
	return ps
}

// Integer reports whether the parameter takes whole numbers.
func (d Param) Integer() bool { return d == Radius || d == Superpixels || d == Faint }

// Switch reports whether the parameter is on or off (Off, On in a Point;
// "off", "on" in text): never refined or widened, only its values tried.
func (d Param) Switch() bool { return d == Necks }

// CanBeAuto reports whether segment.Params can leave the parameter to the
// image (AutoSigmaI, AutoSigmaX, Superpixels < 0).
func (d Param) CanBeAuto() bool { return d == SigmaI || d == SigmaX || d == Superpixels }

// Bounds is the range a searched value must keep: the ranges of
// segment.Params.Validate (the lower end of max-ncut is exclusive, checked
// as positive). Axes, refinement and widening all stay within it, so no
// setting of a search is refused.
func (d Param) Bounds() (lo, hi float64) {
	switch d {
	case SigmaI:
		return segment.MinSigmaI, segment.MaxSigmaI
	case SigmaX:
		return segment.MinSigmaX, segment.MaxSigmaX
	case MaxNcut:
		return 0, segment.MaxNcutLimit
	case Radius:
		return 1, segment.MaxRadius
	case Superpixels:
		return 0, segment.MaxSuperpixels
	case Compactness:
		return 0, segment.MaxCompactness
	case Necks:
		return Off, On
	case Faint:
		return 0, segment.MaxFaint
	}
	panic("tune: no bounds for " + d.String())
}

// Point is one setting of the searched parameters (the value of an
// automatic axis is unused).
type Point [NumParams]float64

// Axis is the search of one parameter: its grid values, ascending, or
// Auto (left to the image).
type Axis struct {
	Param  Param
	Values []float64
	Auto   bool
	// Spec is how the axis was given, for reports.
	Spec string
}

// Refinable reports whether the pattern search moves this parameter: a
// continuous parameter (not a whole number, not a switch) with at least
// two grid values.
func (a Axis) Refinable() bool {
	return !a.Param.Integer() && !a.Param.Switch() && !a.Auto && len(a.Values) > 1
}

// Texts are the axis' values as reports print them (Space.Text).
func (a Axis) Texts() []string {
	t := make([]string, len(a.Values))
	for i, v := range a.Values {
		t[i] = valueText(a.Param, v)
	}
	return t
}

// logStep is the mean spacing of the grid values in log space.
func (a Axis) logStep() float64 {
	n := len(a.Values)
	return math.Log(a.Values[n-1]/a.Values[0]) / float64(n-1)
}

// Round is a value as an axis keeps it: whole for an integer parameter or
// a switch, else rounded to 4 significant digits, so that every evaluated
// value is short in files and exactly the value a parameters file
// reproduces.
func (d Param) Round(v float64) float64 {
	if d.Integer() || d.Switch() {
		return math.Round(v)
	}
	return Sig4(v)
}

// Sig4 rounds to 4 significant digits.
func Sig4(v float64) float64 {
	x, _ := strconv.ParseFloat(strconv.FormatFloat(v, 'g', 4, 64), 64)
	return x
}

// FormatValue is the shortest text of v that reads back as v.
func FormatValue(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

// OnOff is the text of a switch's value: "on" for On, else "off".
func OnOff(v float64) string {
	if v == On {
		return "on"
	}
	return "off"
}

// valueText is a value of d as text: on or off for a switch, else the
// number (FormatValue).
func valueText(d Param, v float64) string {
	if d.Switch() {
		return OnOff(v)
	}
	return FormatValue(v)
}

// NewAxis is the axis of the given values: rounded (Param.Round), sorted,
// duplicates removed. It does not check the bounds (see Clamped).
func NewAxis(d Param, values []float64, spec string) Axis {
	vals := slices.Clone(values)
	for i, v := range vals {
		vals[i] = d.Round(v)
	}
	slices.Sort(vals)
	return Axis{Param: d, Values: slices.Compact(vals), Spec: spec}
}

// AutoAxis is the axis of a parameter left to the image.
func AutoAxis(d Param, spec string) Axis { return Axis{Param: d, Auto: true, Spec: spec} }

// DefaultAxis is the search of a parameter the user did not give: the
// values rounded (integers are taken as given) and clamped to the
// parameter's bounds (an automatic value times a default spread can leave
// them), in the order given with neighbouring repeats removed; its Spec
// lists them, followed by " (default)".
func DefaultAxis(d Param, values []float64) Axis {
	lo, hi := d.Bounds()
	vals := slices.Clone(values)
	for i, v := range vals {
		if !d.Integer() {
			v = d.Round(v)
		}
		vals[i] = min(max(v, lo), hi)
	}
	vals = slices.Compact(vals)
	parts := make([]string, len(vals))
	for i, v := range vals {
		parts[i] = valueText(d, v)
	}
	return Axis{Param: d, Values: vals, Spec: strings.Join(parts, ",") + " (default)"}
}

// LogSpaced returns n values log-spaced from a to b, both included
// (a geometric sequence, as numpy.geomspace).
func LogSpaced(a, b float64, n int) []float64 {
	v := make([]float64, n)
	for k := range v {
		v[k] = a
		if n > 1 {
			v[k] = a * math.Pow(b/a, float64(k)/float64(n-1))
		}
	}
	return v
}

// Space is the search space: one axis per parameter.
type Space [NumParams]Axis

// Grid is every combination of the axes' values (automatic axes
// contribute nothing), the first parameter varying slowest.
func (s *Space) Grid() []Point {
	pts := []Point{{}}
	for d := range NumParams {
		if s[d].Auto {
			continue
		}
		var next []Point
		for _, p := range pts {
			for _, v := range s[d].Values {
				q := p
				q[d] = v
				next = append(next, q)
			}
		}
		pts = next
	}
	return pts
}

// Text is the value of parameter d at p as reports print it: "auto" for
// an automatic axis, on or off for a switch.
func (s *Space) Text(p Point, d Param) string {
	if s[d].Auto {
		return "auto"
	}
	return valueText(d, p[d])
}

// Key identifies a point: the values of the parameters in order.
func (s *Space) Key(p Point) string {
	parts := make([]string, NumParams)
	for d := range NumParams {
		parts[d] = s.Text(p, d)
	}
	return strings.Join(parts, " ")
}

// Strings are the searched parameters of a point as text, by name.
func (s *Space) Strings(p Point) map[string]string {
	m := map[string]string{}
	for d := range NumParams {
		m[d.String()] = s.Text(p, d)
	}
	return m
}

// Apply returns base with the searched parameters set to p (automatic
// axes: left to the image).
func (s *Space) Apply(base segment.Params, p Point) segment.Params {
	for d := range NumParams {
		base = With(base, d, p[d], s[d].Auto)
	}
	return base
}

// With sets one parameter of ps to v, or leaves it to the image (auto;
// only for parameters that CanBeAuto).
func With(ps segment.Params, d Param, v float64, auto bool) segment.Params {
	switch d {
	case SigmaI:
		ps.SigmaI, ps.AutoSigmaI = v, auto
		if auto {
			ps.SigmaI = 0
		}
	case SigmaX:
		ps.SigmaX, ps.AutoSigmaX = v, auto
		if auto {
			ps.SigmaX = 0
		}
	case Superpixels:
		ps.Superpixels = int(v)
		if auto {
			ps.Superpixels = -1
		}
	case MaxNcut:
		ps.MaxNcut = v
	case Radius:
		ps.Radius = int(v)
	case Compactness:
		ps.Compactness = v
	case Necks:
		ps.SeamsOnly = v != On
	case Faint:
		ps.Faint = int(v)
	}
	return ps
}

// smoother orders settings from the smoothest: wider kernels (a larger
// sigma-x, then a larger sigma-i make affinities vary less), a stricter
// stop threshold (smaller max-ncut: fewer splits), fewer superpixels, a
// larger radius, rounder superpixels (larger compactness); then necks on
// before off: when nothing else differs and the scores tie, the truth
// cannot tell the two apart, and on is the library's default
// (segment.DefaultParams); last, the faint search off, then the higher
// level (fewer objects from the background).
func smoother(a, b Point) bool {
	for _, c := range []struct {
		d    Param
		sign float64
	}{{SigmaX, 1}, {SigmaI, 1}, {MaxNcut, -1}, {Superpixels, -1}, {Radius, 1}, {Compactness, 1}, {Necks, 1}, {Faint, 1}} {
		x, y := a[c.d], b[c.d]
		if c.d == Faint { // off (0) is the smoothest
			x, y = faintOrder(x), faintOrder(y)
		}
		if x != y {
			return c.sign*(x-y) > 0
		}
	}
	return false
}

// faintOrder ranks a Faint level for smoother: off above every level.
func faintOrder(v float64) float64 {
	if v == 0 {
		return math.Inf(1)
	}
	return v
}
