package scenes

import "fmt"

// Kinds returns the scene families by the short names the commands use;
// the slice is the caller's.
func Kinds() []string {
	return []string{"nuclei", "plates", "clusters", "haze", "stained", "surface", "grains"}
}

// Generate makes the scene of the named kind with the given size, seed
// and bit depth, all other options at their defaults. Invalid options are
// returned as the generator's Validate error; an unknown kind is an error
// naming it.
func Generate(kind string, width, height int, seed uint64, depth int) (*Scene, error) {
	var validate func() error
	var make1 func() *Scene
	switch kind {
	case "nuclei":
		o := NucleiOptions{Width: width, Height: height, Seed: seed, BitDepth: depth}
		validate, make1 = o.Validate, func() *Scene { return Nuclei(o) }
	case "plates":
		o := PlateOptions{Width: width, Height: height, Seed: seed, BitDepth: depth}
		validate, make1 = o.Validate, func() *Scene { return Plate(o) }
	case "clusters":
		o := ClustersOptions{Width: width, Height: height, Seed: seed, BitDepth: depth}
		validate, make1 = o.Validate, func() *Scene { return Clusters(o) }
	case "haze":
		o := HazeOptions{Width: width, Height: height, Seed: seed, BitDepth: depth}
		validate, make1 = o.Validate, func() *Scene { return Haze(o) }
	case "stained":
		o := StainedOptions{Width: width, Height: height, Seed: seed, BitDepth: depth}
		validate, make1 = o.Validate, func() *Scene { return Stained(o) }
	case "surface":
		o := SurfaceOptions{Width: width, Height: height, Seed: seed, BitDepth: depth}
		validate, make1 = o.Validate, func() *Scene { return Surface(o) }
	case "grains":
		o := GrainsOptions{Width: width, Height: height, Seed: seed, BitDepth: depth}
		validate, make1 = o.Validate, func() *Scene { return Grains(o) }
	default:
		return nil, fmt.Errorf("scenes: unknown kind %q (want one of %v)", kind, Kinds())
	}
	if err := validate(); err != nil {
		return nil, err
	}
	return make1(), nil
}

// DarkObjects reports whether the objects of the named kind are darker
// than their background (plates, stained, surface). Surface inclusions may
// be bright too; most of its objects are dark. Grains are bright regions
// separated by dark boundaries, so false.
func DarkObjects(kind string) bool {
	switch kind {
	case "plates", "stained", "surface":
		return true
	}
	return false
}
