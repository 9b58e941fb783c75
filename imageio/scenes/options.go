package scenes

import (
	"fmt"
	"math"
)

// The options every generator shares: the frame (Width, Height, BitDepth)
// and the camera (Photons, ReadNoise). Each generator's withDefaults fills
// zero fields and its Validate lists its checks in the order they are
// reported, so the first invalid option is the one named.

// Size limits shared by the generators' option checks.
const (
	minSide = 32
	maxSide = 8192
)

// defaultFrame fills a zero width, height or bit depth with the default
// every generator shares: 512 x 512 pixels at 16 bits.
func defaultFrame(w, h, depth *int) {
	*w = orDefault(*w, 512)
	*h = orDefault(*h, 512)
	*depth = orDefault(*depth, 16)
}

// defaultCamera fills a zero photon count and read noise with the
// generator's defaults; a negative read noise means none (see defaultFrac).
func defaultCamera(photons, read *float64, defPhotons, defRead float64) {
	*read = defaultFrac(*read, defRead)
	*photons = orDefault(*photons, defPhotons)
}

// defaultRadii fills zero radius bounds with the generator's defaults; a
// zero upper bound becomes max(defMax, lower bound).
func defaultRadii(rmin, rmax *float64, defMin, defMax float64) {
	*rmin = orDefault(*rmin, defMin)
	*rmax = orDefault(*rmax, max(defMax, *rmin))
}

// orDefault returns v, or def when v is the zero value.
func orDefault[T comparable](v, def T) T {
	var zero T
	if v == zero {
		return def
	}
	return v
}

// defaultFrac maps 0 to def and a negative value to 0: the convention of
// the options whose zero means "default" and whose negative means "none".
func defaultFrac(v, def float64) float64 {
	switch {
	case v == 0:
		return def
	case v < 0:
		return 0
	}
	return v
}

// firstError returns the first non-nil error of errs, or nil.
func firstError(errs ...error) error {
	for _, err := range errs {
		if err != nil {
			return err
		}
	}
	return nil
}

// invalidIf returns the error "scenes: KIND: " followed by the formatted
// problem when bad holds, and nil otherwise.
func invalidIf(bad bool, kind, format string, args ...any) error {
	if !bad {
		return nil
	}
	return fmt.Errorf("scenes: %s: %s", kind, fmt.Sprintf(format, args...))
}

// checkGeometry reports a side outside [minSide, maxSide] pixels or a bit
// depth other than 8 or 16, in that order.
func checkGeometry(kind string, w, h, depth int) error {
	return firstError(
		invalidIf(w < minSide || w > maxSide, kind, "Width %d out of range [%d, %d]", w, minSide, maxSide),
		invalidIf(h < minSide || h > maxSide, kind, "Height %d out of range [%d, %d]", h, minSide, maxSide),
		invalidIf(depth != 8 && depth != 16, kind, "BitDepth %d is not 8 or 16", depth),
	)
}

// checkCamera reports a photon count outside [10, 1e6] electrons or a read
// noise above 1000 electrons, in that order.
func checkCamera(kind string, photons, read float64) error {
	return firstError(
		invalidIf(photons < 10 || photons > 1e6, kind, "Photons %g outside [10, 1e6]", photons),
		invalidIf(read > 1000, kind, "ReadNoise %g exceeds 1000", read),
	)
}

// checkFraction reports a fraction option above 1 (a negative one means
// none, see defaultFrac).
func checkFraction(kind, name string, v float64) error {
	return invalidIf(v > 1, kind, "%s %g exceeds 1", name, v)
}

// checkNuclei reports, in order, a negative count, radius bounds that do
// not satisfy lowest <= RadiusMin <= RadiusMax, and a RadiusMax whose
// cluster (4·RadiusMax + 8 px) would not fit across the shorter side.
func checkNuclei(kind string, count int, rmin, rmax, lowest float64, w, h int) error {
	return firstError(
		invalidIf(count < 0, kind, "Count %d is negative", count),
		invalidIf(rmin < lowest || rmax < rmin, kind, "RadiusMin %g and RadiusMax %g must satisfy %g <= RadiusMin <= RadiusMax", rmin, rmax, lowest),
		invalidIf(4*rmax+8 > float64(min(w, h)), kind, "RadiusMax %g too large for a %dx%d image", rmax, w, h),
	)
}

// checkCrowding reports a count of nuclei whose doubled mean area,
// count·2π r² with r the mid radius (rmin + rmax)/2, exceeds half the
// field: such a field leaves no room to keep them apart.
func checkCrowding(kind string, count int, rmin, rmax float64, w, h int) error {
	r := (rmin + rmax) / 2
	return invalidIf(float64(count)*2*math.Pi*r*r > 0.5*float64(w*h), kind,
		"Count %d too large for a %dx%d image with radii %g-%g", count, w, h, rmin, rmax)
}

// checkLineRoom reports a field smaller than the 96 x 96 pixels its line
// defect (named what: a scratch, a crack) needs.
func checkLineRoom(kind, what string, w, h int) error {
	return invalidIf(w < 96 || h < 96, kind, "size %dx%d below the 96x96 a %s needs", w, h, what)
}

// checkDefectCount reports a count of small defects (named name) above 60
// per 512² pixels.
func checkDefectCount(kind, name string, n, w, h int) error {
	area := float64(w*h) / (512 * 512)
	return invalidIf(float64(n) > 60*area, kind, "%s %d too many for a %dx%d image", name, n, w, h)
}

// mustValidate returns o with its defaults filled, or panics with the error
// of o.Validate: the generators' contract is that options from users are
// checked with Validate first.
func mustValidate[O interface {
	Validate() error
	withDefaults() O
}](o O) O {
	if err := o.Validate(); err != nil {
		panic(err)
	}
	return o.withDefaults()
}
