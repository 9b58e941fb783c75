package pipeline

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/segment"
)

// MinMaxMemory is the least memory bound (max-memory): the limit is a
// size, and a value that rounds to nothing would otherwise read as "no
// limit".
const MinMaxMemory = 1 << 20

// MaxFlattenRadii bounds Request.FlattenRadii: a background smoothed
// over a hundred object radii is as flat as the image's own shading gets.
const MaxFlattenRadii = 100

// Options checks the request and converts it into the pipeline's typed
// options, segmentations running on workers threads. Every error is in
// what was asked: the imageio.OptionError or segment.ParamError of the
// libraries' checks, or a message naming the parameter in backquotes
// ("`max-memory` must be ..."), for the command to word as it names its
// parameters (Voice).
func (r Request) Options(workers int) (*Options, error) {
	o := &Options{}
	if !(r.MaxMegapixels >= imageio.MinMaxMegapixels && r.MaxMegapixels <= imageio.MaxMaxMegapixels) {
		return nil, fmt.Errorf("`max-megapixels` must be %g (one pixel) to %d, got %v", imageio.MinMaxMegapixels, imageio.MaxMaxMegapixels, r.MaxMegapixels)
	}
	// No image within max-megapixels has a diagonal above its pixel
	// count (a 1 x N image comes closest); the diagonal of each image is
	// checked once it is known (imageio.MakeFeatures).
	if maxDiag := r.MaxMegapixels * 1e6; r.Flatten > maxDiag {
		return nil, fmt.Errorf("`flatten` %g is larger than the diagonal of any image within `max-megapixels` %g (at most %g pixels)", r.Flatten, r.MaxMegapixels, maxDiag)
	}
	if !(r.FlattenRadii >= 0 && r.FlattenRadii <= MaxFlattenRadii) {
		return nil, fmt.Errorf("`flatten-radii` must be 0 (off) to %d object radii, got %v", MaxFlattenRadii, r.FlattenRadii)
	}
	if r.FlattenRadii > 0 && r.Flatten > 0 {
		return nil, fmt.Errorf("give one of `flatten` (%g pixels) and `flatten-radii` (%g object radii), not both", r.Flatten, r.FlattenRadii)
	}
	o.FlattenRadii = r.FlattenRadii
	o.Load = imageio.LoadOptions{MaxMegapixels: r.MaxMegapixels}
	ch, ok := r.Channel.Index()
	if !ok {
		ch = 0 // a channel name: one channel
	}
	o.Features = imageio.FeatureOptions{Space: imageio.ColorSpace(r.Features), Channel: ch, Normalize: imageio.Normalization(r.Normalize), Flatten: r.Flatten, FlattenMode: imageio.FlattenMode(r.FlattenMode)}
	if err := o.Features.Validate(); err != nil {
		return nil, err
	}
	sel, err := r.selection()
	if err != nil {
		return nil, err
	}
	o.Selection = sel
	p := segment.Params{
		Compactness: r.Compactness, Radius: r.Radius, Method: segment.Method(r.Method), Segments: r.Segments,
		MaxSegments: r.MaxSegments, MaxNcut: r.MaxNcut, MinArea: r.MinArea, Classes: r.Classes,
		Background: segment.Background(r.Background), Faint: r.Faint, Workers: workers, Seed: r.Seed,
	}
	if p.Contour, err = onOff("contour", r.Contour); err != nil {
		return nil, err
	}
	if p.Grain, err = onOff("grain", r.Grain); err != nil {
		return nil, err
	}
	necks, err := onOff("necks", r.NecksAsked())
	if err != nil {
		return nil, fmt.Errorf("`necks` must be on or off, got %q", r.Necks)
	}
	p.SeamsOnly = !necks
	if p.SigmaI, p.AutoSigmaI, err = ParseAuto("sigma-i", r.SigmaI); err != nil {
		return nil, err
	}
	if p.SigmaX, p.AutoSigmaX, err = ParseAuto("sigma-x", r.SigmaX); err != nil {
		return nil, err
	}
	if p.Smooth, p.AutoSmooth, err = ParseAuto("smooth", r.Smooth); err != nil {
		return nil, err
	}
	sp, auto, err := ParseAuto("superpixels", r.Superpixels)
	if err != nil {
		return nil, err
	}
	switch {
	case auto:
		p.Superpixels = -1
	case sp < 0 || sp != math.Trunc(sp) || sp > math.MaxInt32:
		return nil, fmt.Errorf("`superpixels` must be auto, 0 (pixel graph) or a positive whole number, got %q", r.Superpixels)
	default:
		p.Superpixels = int(sp)
	}
	if p.MaxMemory, err = ParseBytes("max-memory", r.MaxMemory); err != nil {
		return nil, err
	}
	if p.MaxMemory < MinMaxMemory {
		return nil, fmt.Errorf("`max-memory` must be at least 1MiB, got %q", r.MaxMemory)
	}
	if err := p.Validate(); err != nil {
		return nil, err
	}
	if !(r.PixelSize == 0 || r.PixelSize >= MinPixelSize && r.PixelSize <= MaxPixelSize) {
		return nil, fmt.Errorf("`pixel-size` must be 0 (off) or %g to %g, got %v", MinPixelSize, MaxPixelSize, r.PixelSize)
	}
	if f := r.LabelsFormatAsked(); f != imageio.LabelsPNG && f != imageio.LabelsTIFF {
		return nil, fmt.Errorf("`labels-format` must be png or tiff, got %q", r.LabelsFormat)
	}
	if r.Unit != "" || r.PixelSize > 0 {
		switch err := CheckUnit(r.Unit); {
		case errors.Is(err, ErrUnitChars):
			return nil, fmt.Errorf("`unit` must be a short unit name (letters, digits, µ, /, ^ or _), got %q", r.Unit)
		case err != nil:
			return nil, fmt.Errorf("`unit` must be a unit name of 1 to %d characters, got %q", MaxUnitLen, r.Unit)
		}
	}
	o.Params = p
	o.PixelSize, o.Unit = r.PixelSize, r.Unit
	o.LabelsFormat = r.LabelsFormatAsked()
	o.EveryPlane = r.Planes == PlanesAll
	return o, nil
}

// onOff reads a switch, on or off.
func onOff(name, v string) (bool, error) {
	switch v {
	case "on":
		return true, nil
	case "off":
		return false, nil
	}
	return false, fmt.Errorf("`%s` must be on or off, got %q", name, v)
}

// selection is the stack choice of the request as an imageio.Selection.
func (r Request) selection() (imageio.Selection, error) {
	sel := imageio.Selection{Channel: r.Channel.Selection(), Plane: r.Plane, Frame: r.Frame}
	if r.Plane < 0 {
		return sel, fmt.Errorf("`plane` must be a plane index from 0, got %d", r.Plane)
	}
	if r.Frame < 0 {
		return sel, fmt.Errorf("`frame` must be a time point index from 0, got %d", r.Frame)
	}
	switch r.Planes {
	case "", PlanesOne, PlanesAll:
	case PlanesBrightest:
		sel.Brightest = true
	default:
		return sel, fmt.Errorf("`planes` must be one, all or brightest, got %q", r.Planes)
	}
	return sel, nil
}

// ParseAuto reads the parameter name's value v: "auto" (any case) or a
// finite number.
func ParseAuto(name, v string) (x float64, auto bool, err error) {
	if strings.EqualFold(strings.TrimSpace(v), "auto") {
		return 0, true, nil
	}
	x, err = strconv.ParseFloat(strings.TrimSpace(v), 64)
	if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
		return 0, false, fmt.Errorf("`%s` must be a number or auto, got %q", name, v)
	}
	return x, false, nil
}

// ParseBytes reads the size v of the parameter name: a byte count with an
// optional unit, decimal (KB, MB, GB, TB: powers of 1000) or binary (KiB,
// MiB, GiB, TiB: powers of 1024, IEC 80000-13), or B; any case.
func ParseBytes(name, v string) (int64, error) {
	s := strings.TrimSpace(v)
	mult := 1.0
	units := []struct {
		suffix string
		m      float64
	}{{"KiB", 1 << 10}, {"MiB", 1 << 20}, {"GiB", 1 << 30}, {"TiB", 1 << 40}, {"KB", 1e3}, {"MB", 1e6}, {"GB", 1e9}, {"TB", 1e12}, {"B", 1}}
	up := strings.ToUpper(s)
	for _, u := range units {
		if strings.HasSuffix(up, strings.ToUpper(u.suffix)) {
			s, mult = strings.TrimSpace(s[:len(s)-len(u.suffix)]), u.m
			break
		}
	}
	x, err := strconv.ParseFloat(s, 64)
	if err != nil || !(x > 0) || math.IsInf(x, 0) || x*mult > math.MaxInt64/2 {
		return 0, fmt.Errorf("`%s` must be a positive size such as 512MiB or 8GiB, got %q", name, v)
	}
	if x*mult < 1 {
		return 0, fmt.Errorf("`%s` %q is less than one byte", name, v)
	}
	return int64(x * mult), nil
}

// DefaultRequest is the request that asks for nothing: segment's default
// parameters (segment.DefaultParams), 100 megapixels at most, percentile
// normalization, gray features, every channel, one plane, automatic
// superpixels, kernel widths and smoothing, intervening contours on, grain off,
// necks on, segment's memory bound and PNG label maps. A command's flags
// take their defaults from it.
func DefaultRequest() Request {
	p := segment.DefaultParams()
	return Request{MaxMegapixels: imageio.DefaultMaxMegapixels, Normalize: string(imageio.NormalizePercentile), FlattenMode: string(imageio.FlattenDivide),
		Features: string(imageio.SpaceGray), Channel: "-1", Planes: PlanesOne, Superpixels: "auto", Compactness: p.Compactness,
		Radius: p.Radius, SigmaI: "auto", SigmaX: "auto", Smooth: "auto", Contour: "on", Grain: "off", Method: string(p.Method),
		MaxSegments: p.MaxSegments, MaxNcut: p.MaxNcut, MinArea: p.MinArea, Necks: "on", MaxMemory: FormatBytes(p.MaxMemory),
		LabelsFormat: imageio.LabelsPNG, Seed: p.Seed}
}

// FormatBytes writes a size as ParseBytes reads it back: in GiB or MiB
// when it is a whole number of them, else in bytes.
func FormatBytes(n int64) string {
	switch {
	case n > 0 && n%(1<<30) == 0:
		return strconv.FormatInt(n>>30, 10) + "GiB"
	case n > 0 && n%(1<<20) == 0:
		return strconv.FormatInt(n>>20, 10) + "MiB"
	}
	return strconv.FormatInt(n, 10)
}
