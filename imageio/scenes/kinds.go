package scenes

import (
	"fmt"
	"slices"
)

// family is one scene family: the short name the commands use, whether its
// objects are darker than their background, and its generator at default
// options for a frame of the given size, seed and bit depth.
type family struct {
	name string
	dark bool
	gen  func(f frame) (*Scene, error)
}

// frame is the size, seed and bit depth Generate passes to a family.
type frame struct {
	w, h  int
	seed  uint64
	depth int
}

// families lists the scene families in the order Kinds reports them.
func families() []family {
	return []family{
		{"nuclei", false, func(f frame) (*Scene, error) {
			return generate(NucleiOptions{Width: f.w, Height: f.h, Seed: f.seed, BitDepth: f.depth}, Nuclei)
		}},
		{"plates", true, func(f frame) (*Scene, error) {
			return generate(PlateOptions{Width: f.w, Height: f.h, Seed: f.seed, BitDepth: f.depth}, Plate)
		}},
		{"clusters", false, func(f frame) (*Scene, error) {
			return generate(ClustersOptions{Width: f.w, Height: f.h, Seed: f.seed, BitDepth: f.depth}, Clusters)
		}},
		{"haze", false, func(f frame) (*Scene, error) {
			return generate(HazeOptions{Width: f.w, Height: f.h, Seed: f.seed, BitDepth: f.depth}, Haze)
		}},
		{"stained", true, func(f frame) (*Scene, error) {
			return generate(StainedOptions{Width: f.w, Height: f.h, Seed: f.seed, BitDepth: f.depth}, Stained)
		}},
		{"surface", true, func(f frame) (*Scene, error) {
			return generate(SurfaceOptions{Width: f.w, Height: f.h, Seed: f.seed, BitDepth: f.depth}, Surface)
		}},
		{"grains", false, func(f frame) (*Scene, error) {
			return generate(GrainsOptions{Width: f.w, Height: f.h, Seed: f.seed, BitDepth: f.depth}, Grains)
		}},
	}
}

// generate returns the scene gen makes from o, or o's Validate error
// instead of gen's panic.
func generate[O interface{ Validate() error }](o O, gen func(O) *Scene) (*Scene, error) {
	if err := o.Validate(); err != nil {
		return nil, err
	}
	return gen(o), nil
}

// Kinds returns the scene families by the short names the commands use;
// the slice is the caller's.
func Kinds() []string {
	var names []string
	for _, f := range families() {
		names = append(names, f.name)
	}
	return names
}

// lookup returns the family of the given short name.
func lookup(kind string) (family, bool) {
	fs := families()
	i := slices.IndexFunc(fs, func(f family) bool { return f.name == kind })
	if i < 0 {
		return family{}, false
	}
	return fs[i], true
}

// Generate makes the scene of the named kind with the given size, seed
// and bit depth, all other options at their defaults. Invalid options are
// returned as the generator's Validate error; an unknown kind is an error
// naming it.
func Generate(kind string, width, height int, seed uint64, depth int) (*Scene, error) {
	f, ok := lookup(kind)
	if !ok {
		return nil, fmt.Errorf("scenes: unknown kind %q (want one of %v)", kind, Kinds())
	}
	return f.gen(frame{w: width, h: height, seed: seed, depth: depth})
}

// DarkObjects reports whether the objects of the named kind are darker
// than their background (plates, stained, surface). Surface inclusions may
// be bright too; most of its objects are dark. Grains are bright regions
// separated by dark boundaries, so false.
func DarkObjects(kind string) bool {
	f, ok := lookup(kind)
	return ok && f.dark
}
