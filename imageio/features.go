package imageio

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"

	"github.com/cleave-seg/cleave/segment/parallel"
)

// ColorSpace is the feature space of FeatureOptions.Space.
type ColorSpace string

// Normalization is the intensity normalization of FeatureOptions.Normalize.
type Normalization string

// FlattenMode is how FeatureOptions.Flatten removes the background.
type FlattenMode string

// Values accepted by FeatureOptions ("" means the first of each).
const (
	SpaceGray ColorSpace = "gray"
	SpaceLab  ColorSpace = "lab"

	NormalizePercentile Normalization = "percentile"
	NormalizeRange      Normalization = "range"
	NormalizeBitDepth   Normalization = "bitdepth"

	FlattenDivide   FlattenMode = "divide"
	FlattenSubtract FlattenMode = "subtract"
)

// FeatureOptions selects the per-pixel features. The zero value of each
// string field means its default.
type FeatureOptions struct {
	// Space is "gray" (default): one plane, the Rec. 709 luma of the stored
	// samples (or the channel chosen by Channel), normalized to [0, 1] by
	// Normalize; or "lab": CIE L*a*b* (CIE 15:2004, D65) of sRGB samples
	// (IEC 61966-2-1), scaled by a fixed 1/100 (L*/100 in [0, 1], a*/100
	// and b*/100 about -1.3..1.3) so that one intensity sigma suits gray
	// and lab alike; Normalize does not apply to lab. A gray image in lab
	// gives the L*/100 plane only.
	Space ColorSpace
	// Channel is -1 for all channels (luminance); N >= 0 uses channel N
	// only (gray space; an error if the image has no channel N).
	Channel int
	// Normalize is "percentile" (default: the 0.1 and 99.9 percentiles map
	// to 0 and 1, clipped), "range" (min..max) or "bitdepth" (divide by
	// 2^bits - 1, clipped). A constant plane normalizes to all zeros.
	Normalize Normalization
	// Flatten is the shading-correction scale R in pixels (Gaussian sigma
	// of the background estimate); 0 turns it off. It must not exceed the
	// image diagonal (MakeFeatures refuses it before allocating): a
	// larger scale estimates no shading the image can hold, and the
	// filter's padded rows grow with it.
	Flatten float64
	// FlattenMode is "divide" (default) or "subtract".
	FlattenMode FlattenMode
}

// OptionError reports an invalid option by its name (the name of the
// FeatureOptions or LoadOptions field in lower case, hyphenated); the
// command layer maps names to its flags.
type OptionError struct {
	Name, Problem string
}

func (e *OptionError) Error() string { return e.Name + " " + e.Problem }

// Validate reports the first invalid option as an *OptionError.
func (o FeatureOptions) Validate() error {
	switch o.Space {
	case "", SpaceGray, SpaceLab:
	default:
		return &OptionError{"features", fmt.Sprintf("%q is not a feature space (want gray or lab)", o.Space)}
	}
	if o.Channel < -1 {
		return &OptionError{"channel", fmt.Sprintf("must be -1 (all) or a channel index >= 0, got %d", o.Channel)}
	}
	if o.Space == SpaceLab && o.Channel >= 0 {
		return &OptionError{"channel", fmt.Sprintf("%d selects one channel, but lab features need all three (use gray)", o.Channel)}
	}
	switch o.Normalize {
	case "", NormalizePercentile, NormalizeRange, NormalizeBitDepth:
	default:
		return &OptionError{"normalize", fmt.Sprintf("%q is not a method (want percentile, range or bitdepth)", o.Normalize)}
	}
	if !(o.Flatten >= 0) || math.IsInf(o.Flatten, 0) {
		return &OptionError{"flatten", fmt.Sprintf("must be a finite scale >= 0 in pixels, got %v", o.Flatten)}
	}
	switch o.FlattenMode {
	case "", FlattenDivide, FlattenSubtract:
	default:
		return &OptionError{"flatten-mode", fmt.Sprintf("%q is not a mode (want divide or subtract)", o.FlattenMode)}
	}
	return nil
}

// Features are the per-pixel inputs of the graph and of the reports.
type Features struct {
	Width, Height int
	// Planes are the normalized features the graph is built on: one plane
	// for gray, three (L*, a*, b*, each /100) for lab of a colour image.
	Planes [][]float32
	// Display is the luma, contrast-stretched from its 0.1 and 99.9
	// percentiles to [0, 1] (no shading correction), for overlays. When
	// the one feature plane is that very stretch (gray features of the
	// luma, no shading correction, percentile normalization: the
	// defaults) Display is Planes[0] itself, not a copy; the planes are
	// read-only to every stage.
	Display []float32
	// Raw is the luma (or the chosen channel) in the image's own units
	// (e.g. 0..65535), for region tables. For a one-channel image it is
	// the image's own plane, not a copy (read-only, as the planes are),
	// when that plane is a slice of its own.
	Raw []float32
	// Invalid marks the pixels whose samples are not numbers (NaN or
	// infinite floating-point samples), nil when there are none. Their
	// features, display and raw values are the median of the valid
	// pixels, a value that neither stretches the normalization nor
	// spreads through the shading correction; segment.Input.Invalid
	// keeps them out of every region.
	Invalid []bool
	// InvalidCount is the number of pixels marked in Invalid.
	InvalidCount int
}

func sampleTypeName(t string) string {
	switch t {
	case SampleFloat:
		return "floating-point"
	case SampleSigned:
		return "signed integer"
	}
	return "unsigned integer"
}

// withoutNonFinite returns im, or, when a plane holds NaN or infinite
// samples, a copy whose such samples are the median of that plane's
// finite samples, with the mask of the pixels that had any.
func withoutNonFinite(im *Image) (*Image, []bool, int) {
	if im.SampleType != SampleFloat {
		return im, nil, 0
	}
	var mask []bool
	count := 0
	for _, p := range im.Planes {
		for i, v := range p {
			if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
				if mask == nil {
					mask = make([]bool, len(p))
				}
				if !mask[i] {
					mask[i] = true
					count++
				}
			}
		}
	}
	if mask == nil {
		return im, nil, 0
	}
	out := *im
	out.Planes = make([][]float32, len(im.Planes))
	for c, p := range im.Planes {
		q := make([]float32, len(p))
		finite := make([]float32, 0, len(p)-count)
		for i, v := range p {
			if !mask[i] {
				finite = append(finite, v)
			}
		}
		fill := float32(0)
		if len(finite) > 0 {
			slices.Sort(finite)
			fill = finite[len(finite)/2]
		}
		for i, v := range p {
			if mask[i] {
				v = fill
			}
			q[i] = v
		}
		out.Planes[c] = q
	}
	return &out, mask, count
}

// checkImage rejects an Image whose fields disagree.
func checkImage(im *Image) error {
	if im == nil {
		return errors.New("no image")
	}
	if im.Width <= 0 || im.Height <= 0 {
		return fmt.Errorf("image has zero size (%dx%d)", im.Width, im.Height)
	}
	if im.Channels != 1 && im.Channels != 3 {
		return fmt.Errorf("image has %d channels; want 1 or 3", im.Channels)
	}
	switch {
	case im.SampleType == SampleFloat && (im.BitDepth == 16 || im.BitDepth == 32 || im.BitDepth == 64):
	case im.SampleType != SampleFloat && (im.BitDepth == 8 || im.BitDepth == 16 || im.BitDepth == 32 || im.BitDepth == 64):
	default:
		return fmt.Errorf("image has bit depth %d (%s samples); want 8, 16, 32 or 64 (16 to 64 for floats)", im.BitDepth, sampleTypeName(im.SampleType))
	}
	if len(im.Planes) != im.Channels {
		return fmt.Errorf("image has %d planes for %d channels", len(im.Planes), im.Channels)
	}
	for c, p := range im.Planes {
		if len(p) != im.Width*im.Height {
			return fmt.Errorf("image plane %d has %d samples; want %dx%d", c, len(p), im.Width, im.Height)
		}
	}
	return nil
}

// MakeFeatures derives the feature planes, display plane and raw plane of
// im. The work is shared among workers goroutines (workers < 1: GOMAXPROCS)
// and the result is identical for any worker count.
//
// Order of operations: the source plane (luma Y' = 0.2126 R + 0.7152 G +
// 0.0722 B of the stored samples, ITU-R BT.709; or the chosen channel; or
// L* for lab) is shading-corrected when Flatten > 0 (see flatten: Gaussian
// background estimate at sigma = Flatten, then division or subtraction),
// and only then normalized, so the result lies in [0, 1]. For lab the
// correction applies to L* alone, which is then clipped to 0..100.
func MakeFeatures(im *Image, opt FeatureOptions, workers int) (*Features, error) {
	return MakeFeaturesContext(context.Background(), im, opt, workers)
}

// MakeFeaturesContext is MakeFeatures that stops, with ctx's error,
// when ctx is done (the shading correction checks it between passes).
func MakeFeaturesContext(ctx context.Context, im *Image, opt FeatureOptions, workers int) (*Features, error) {
	if err := opt.Validate(); err != nil {
		return nil, err
	}
	if err := checkImage(im); err != nil {
		return nil, err
	}
	if diag := math.Hypot(float64(im.Width), float64(im.Height)); opt.Flatten > diag {
		return nil, &OptionError{"flatten", fmt.Sprintf("%g is larger than the image diagonal (%.0f pixels for %dx%d); the background scale must lie within the image",
			opt.Flatten, diag, im.Width, im.Height)}
	}
	if opt.Channel >= im.Channels {
		return nil, &OptionError{"channel", fmt.Sprintf("%d is out of range: the image has %d channel(s) (0..%d)", opt.Channel, im.Channels, im.Channels-1)}
	}
	if opt.Normalize == NormalizeBitDepth && im.SampleType != "" {
		return nil, &OptionError{"normalize", fmt.Sprintf("bitdepth needs unsigned integer samples, and the image has %d-bit %s samples (use percentile or range)", im.BitDepth, sampleTypeName(im.SampleType))}
	}
	if opt.Space == SpaceLab && im.Channels == 3 && (im.SampleType != "" || im.BitDepth > 16) {
		return nil, &OptionError{"features", fmt.Sprintf("lab needs 8- or 16-bit unsigned colour samples (sRGB), and the image has %d-bit %s samples (use gray)", im.BitDepth, sampleTypeName(im.SampleType))}
	}
	im, invalid, ninvalid := withoutNonFinite(im)
	w, h := im.Width, im.Height
	mode := opt.FlattenMode
	if mode == "" {
		mode = FlattenDivide
	}
	f := &Features{Width: w, Height: h, Invalid: invalid, InvalidCount: ninvalid}
	luma := luminance(im, workers)

	lo, hi := percentileRange(luma, workers)
	// The display is the luma stretched from lo to hi; when the feature
	// plane is the same stretch of the same luma (below), it is that
	// plane.
	displayIsFeature := opt.Space != SpaceLab && opt.Flatten == 0 && opt.Channel < 0 && (opt.Normalize == "" || opt.Normalize == NormalizePercentile)
	if !displayIsFeature {
		f.Display = make([]float32, len(luma))
		copy(f.Display, luma)
		stretch(f.Display, lo, hi, workers)
	}

	if opt.Channel >= 0 {
		f.Raw = make([]float32, w*h)
		copy(f.Raw, im.Planes[opt.Channel])
	} else {
		f.Raw = luma
	}

	if opt.Space == SpaceLab {
		lab := labPlanes(im, workers)
		if opt.Flatten > 0 {
			L, err := flatten(ctx, lab[0], w, h, opt.Flatten, mode, workers)
			if err != nil {
				return nil, err
			}
			for i, v := range L {
				L[i] = min(max(v, 0), 100)
			}
			lab[0] = L
		}
		for _, p := range lab {
			parallel.Blocks(len(p), pixelBlock, workers, func(_, a, b int) {
				for i := a; i < b; i++ {
					p[i] /= 100
				}
			})
		}
		f.Planes = lab
		return f, nil
	}

	var feat []float32
	if opt.Flatten > 0 {
		var err error
		if feat, err = flatten(ctx, f.Raw, w, h, opt.Flatten, mode, workers); err != nil {
			return nil, err
		}
	} else if displayIsFeature {
		// The display's window, already computed from the same luma,
		// applied while the plane is copied.
		feat = make([]float32, len(f.Raw))
		stretchInto(feat, f.Raw, lo, hi, workers)
		f.Display = feat
		f.Planes = [][]float32{feat}
		return f, nil
	} else {
		feat = make([]float32, len(f.Raw))
		copy(feat, f.Raw)
	}
	normalize(feat, opt.Normalize, im.MaxValue(), workers)
	f.Planes = [][]float32{feat}
	return f, nil
}

// EstimateFeatureBytes estimates the memory of MakeFeatures for a w x h
// image of the given channels, beyond the image's own planes: peak while
// it runs, and kept, what the returned Features hold. It counts the
// float32 planes it allocates (4 bytes per pixel each: luminance,
// display unless it is the feature plane, raw, feature planes) and the shading correction's work
// (an int window count of 8 bytes and two float32 planes per pixel).
// Nonsensical sizes give 0.
func EstimateFeatureBytes(w, h, channels int, opt FeatureOptions) (peak, kept int64) {
	if w < 1 || h < 1 || channels < 1 {
		return 0, 0
	}
	n := int64(w) * int64(h)
	planes := int64(1)
	if opt.Space == SpaceLab {
		planes = 3
	}
	kept = 4 * n * (2 + planes) // luminance (the raw plane), display, features
	if opt.Channel >= 0 {
		kept += 4 * n
	}
	if opt.Space != SpaceLab && opt.Flatten == 0 && opt.Channel < 0 && (opt.Normalize == "" || opt.Normalize == NormalizePercentile) {
		kept -= 4 * n // the display is the feature plane (MakeFeaturesContext)
	}
	peak = kept
	if opt.Space == SpaceLab {
		peak += 4 * n * 3 // the Lab conversion's planes
	}
	if opt.Flatten > 0 {
		peak += 16 * n
	}
	return peak, kept
}
