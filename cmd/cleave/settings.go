package main

import (
	"encoding/json"
	"fmt"
	"os"
	"sort"
	"strings"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/segment"
	"github.com/spf13/pflag"
)

// settings are the parameters of one segmentation as the user gives them,
// by flag or in a --params file. Every field is a flag of the same name
// (the json tag); "auto" values are resolved per image by segment.Run.
type settings = pipeline.Request

// Ranges of the parameters that only the command uses (the libraries
// state theirs: segment.MaxRadius and the rest, imageio.MaxMaxMegapixels).
const (
	// maxWorkers bounds --workers and --jobs: threads beyond this share
	// the same cores and only cost memory.
	maxWorkers = 1024
)

// addParamFlags registers the parameter flags on fs, bound to s, with
// the defaults of pipeline.DefaultRequest.
func addParamFlags(fs *pflag.FlagSet, s *settings) {
	d := pipeline.DefaultRequest()
	fs.Float64Var(&s.MaxMegapixels, "max-megapixels", d.MaxMegapixels, fmt.Sprintf("refuse images larger than this many megapixels (read from the header, before decoding); %g (one pixel) to %d", imageio.MinMaxMegapixels, imageio.MaxMaxMegapixels))
	fs.StringVar(&s.Normalize, "normalize", d.Normalize, "intensity normalization: percentile (0.1 and 99.9 percentiles to 0 and 1), range (min..max) or bitdepth")
	fs.Float64Var(&s.Flatten, "flatten", d.Flatten, "shading correction: divide by a smooth background estimated at this scale in pixels (0 = off; at most the image diagonal)")
	fs.Float64Var(&s.FlattenRadii, "flatten-radii", d.FlattenRadii, fmt.Sprintf("shading correction at this many object radii, the radius estimated on each image (its record gives it); instead of --flatten; 0 = off, at most %d", pipeline.MaxFlattenRadii))
	fs.StringVar(&s.FlattenMode, "flatten-mode", d.FlattenMode, "how --flatten and --flatten-radii remove the background: divide, or subtract (which also brings the noise to one level across the field)")
	fs.StringVar(&s.Features, "features", d.Features, "features the graph is built on: gray (luminance) or lab (CIE L*a*b*)")
	s.Channel = d.Channel
	fs.Var(&s.Channel, "channel", "use only this channel of a multi-channel image: an index from 0, or a name the file gives its channels; -1 = a colour image's three colours, else the first channel")
	fs.IntVar(&s.Plane, "plane", d.Plane, "plane (Z, from 0) of a stack to segment")
	fs.IntVar(&s.Frame, "frame", d.Frame, "time point (from 0) of a time series to segment")
	fs.StringVar(&s.Planes, "planes", d.Planes, "planes of a stack: one (the --plane), all (each plane segmented on its own, outputs STEM.z007.*; segment adds a summary STEM.stack.json, batch a plane column in manifest.csv and objects.csv; not for tune) or brightest (each pixel's largest value through the planes, a maximum-intensity projection)")
	fs.StringVar(&s.Superpixels, "superpixels", d.Superpixels, fmt.Sprintf("graph nodes: N SLIC superpixels (at most %d), 0 = one node per pixel, auto = pixels up to %d px, else one superpixel per %d px (%d..%d); "+
		"on larger frames auto estimates the typical object radius r and gives %d superpixels per object, %d x pixels / (pi r^2), at least %d, at most pixels/%d and %d (without a clear object scale: %d)",
		segment.MaxSuperpixels, segment.PixelGraphMaxPixels, segment.PixelsPerSuperpixel, segment.MinAutoSuperpixels, segment.MaxAutoSuperpixels,
		segment.SuperpixelsPerObject, segment.SuperpixelsPerObject, segment.MaxAutoSuperpixels, segment.MinPixelsPerScaledSuperpixel, segment.MaxScaledSuperpixels, segment.MaxAutoSuperpixels))
	fs.Float64Var(&s.Compactness, "compactness", d.Compactness, fmt.Sprintf("SLIC compactness: higher gives rounder superpixels, lower follows edges more closely (above 0, at most %d)", segment.MaxCompactness))
	fs.IntVar(&s.Radius, "radius", d.Radius, fmt.Sprintf("pixel graph: join pixels up to this distance (pixels, 1 to %d)", segment.MaxRadius))
	fs.StringVar(&s.SigmaI, "sigma-i", d.SigmaI, fmt.Sprintf("intensity kernel width in normalized intensity units (0..1), %g to %g, or auto", segment.MinSigmaI, segment.MaxSigmaI))
	fs.StringVar(&s.SigmaX, "sigma-x", d.SigmaX, fmt.Sprintf("spatial kernel width in pixels, %g to %g, or auto (0.8 x radius; 2 x superpixel spacing)", segment.MinSigmaX, segment.MaxSigmaX))
	fs.StringVar(&s.Smooth, "smooth", d.Smooth, fmt.Sprintf("Gaussian smoothing of the image before the graph, in pixels: auto (only where the typical object stands less than %d noise standard deviations above its surroundings, just enough to reach that, at most a fifth of the object radius; the value used is in the record), 0 = none, or %g to %g", segment.SmoothSNR, segment.MinSmooth, segment.MaxSmooth))
	fs.StringVar(&s.Contour, "contour", d.Contour, "superpixel graph: on = affinities also fall across edges and thin boundary lines between nodes (intervening contour), off = intensity and distance only")
	fs.StringVar(&s.Grain, "grain", d.Grain, "machined surfaces: on = a directional texture (grinding or milling marks) is measured along its dominant orientation and subtracted before the graph is built, so grain lines are not taken for defects; off = features as they are")
	fs.StringVar(&s.Method, "method", d.Method, "bisect (recursive two-way cuts) or kway (k-way spectral clustering)")
	fs.IntVar(&s.Segments, "segments", d.Segments, fmt.Sprintf("bisect: stop at this many regions (0 = no limit, at most %d); kway: K (0 = from the largest eigengap; at most %d and the nodes of the graph)", segment.MaxBisectSegments, segment.MaxKwaySegments))
	fs.IntVar(&s.MaxSegments, "max-segments", d.MaxSegments, fmt.Sprintf("kway with --segments 0: the largest K considered (2 to %d)", segment.MaxKwaySegments))
	fs.Float64Var(&s.MaxNcut, "max-ncut", d.MaxNcut, fmt.Sprintf("bisect: accept a split only when its normalized cut is at most this (above 0, at most %d: no cut exceeds it)", segment.MaxNcutLimit))
	fs.IntVar(&s.MinArea, "min-area", d.MinArea, fmt.Sprintf("smallest region or object kept, in pixels (0 to %d); smaller regions merge into a neighbour, smaller objects go to the background", segment.MaxMinArea))
	fs.IntVar(&s.Classes, "classes", d.Classes, fmt.Sprintf("group regions into this many intensity classes (2 to %d, and at most the nodes of the graph; 0 = off)", segment.MaxClasses))
	fs.StringVar(&s.Background, "background", d.Background, "with --classes: dark or bright; that class becomes label 0 and the rest split into objects 1..N. lines (without --classes): packed objects that fill the field, separated by thin lines that become label 0")
	fs.StringVar(&s.Necks, "necks", d.Necks, "with --background dark or bright: on = touching objects are also cut apart where their outline is pinched (a neck) or notched at both ends of a cut, off = only along a seam of lower or changing contrast that does not run through a neck; off suits lobed or branched objects that never touch")
	fs.IntVar(&s.Faint, "faint", d.Faint, fmt.Sprintf("with --classes 2 and --background dark or bright: also make objects of background superpixels that stand this many robust spreads beyond the background around them, measured over about three object radii (0 = off, or %d to %d; lower finds dimmer objects and, on textured or mottled backgrounds, false ones: choose it with cleave tune; superpixel graphs only, so not on images of at most %d px with automatic superpixels)", segment.MinFaint, segment.MaxFaint, segment.PixelGraphMaxPixels))
	fs.Float64Var(&s.PixelSize, "pixel-size", d.PixelSize, fmt.Sprintf("size of one pixel in --unit, for physical areas and diameters in the region table (%g to %g; 0 = the size the file states, from OME-XML, a hyperstack description or the resolution tags, if any)", pipeline.MinPixelSize, pipeline.MaxPixelSize))
	fs.StringVar(&s.Unit, "unit", d.Unit, fmt.Sprintf("unit of --pixel-size (default um), used in column names: up to %d letters, digits, µ, /, ^ or _; without --pixel-size, the unit the file's own pixel size is converted to (metric lengths)", pipeline.MaxUnitLen))
	fs.StringVar(&s.MaxMemory, "max-memory", d.MaxMemory, "memory bound of the process: images whose estimated memory (decode, features, graph, cuts, objects, outputs; from the header) is above it are refused, images run at once share it, and it is the runtime's soft memory limit (e.g. 512MiB, 8GiB; at least 1MiB)")
	fs.StringVar(&s.LabelsFormat, "labels-format", d.LabelsFormat, fmt.Sprintf("file format of the label and class maps: png (16-bit gray; a map with labels above %d is written as a 32-bit TIFF instead, with a warning) or tiff (16-bit, or 32-bit unsigned above %d; with --pixel-size in a length unit, the resolution tags carry it)", imageio.MaxPNGLabel, imageio.MaxPNGLabel))
	fs.Uint64Var(&s.Seed, "seed", d.Seed, "seed for k-means restarts (--method kway, --classes) and for the random start vectors the eigensolver adds when its coarse levels supply too few; the eigensolver usually starts from the coarse levels alone, and then the seed does not change the cut (any whole number from 0 to 2^64-1)")
}

// paramNames lists the keys a --params file may hold (the json tags of
// settings), sorted.
func paramNames() []string { return pipeline.RequestNames() }

// applyParamsFile reads a JSON object of parameters named like the flags
// and sets every one the command line did not set (flags given on the
// command line win). Unknown keys and values of the wrong type are errors
// naming the file and the key.
func applyParamsFile(fs *pflag.FlagSet, path string) error {
	data, err := os.ReadFile(path)
	if err != nil {
		return fmt.Errorf("params file: %w", err)
	}
	return applyParams(fs, path, data)
}

func applyParams(fs *pflag.FlagSet, path string, data []byte) error {
	m, err := pipeline.ReadParamsObject(path, data)
	if err != nil {
		return err
	}
	names := paramNames()
	known := map[string]bool{}
	for _, n := range names {
		known[n] = true
	}
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		if !known[k] {
			return fmt.Errorf("params file %s: unknown parameter %q (known: %s)", path, k, strings.Join(names, ", "))
		}
		f := fs.Lookup(k)
		if f == nil {
			return fmt.Errorf("params file %s: parameter %q is not used by this command", path, k)
		}
		if f.Changed {
			continue // the command line wins
		}
		var text string
		switch v := m[k].(type) {
		case json.Number:
			if f.Value.Type() == "string" && !numericString(k) {
				return fmt.Errorf("params file %s: %s must be a string, got the number %s", path, k, v)
			}
			text = v.String()
		case string:
			if f.Value.Type() != "string" {
				return fmt.Errorf("params file %s: %s must be a number, got the string %q", path, k, v)
			}
			text = v
		default:
			return fmt.Errorf("params file %s: %s has a value of the wrong type (%T)", path, k, m[k])
		}
		if err := f.Value.Set(text); err != nil {
			return fmt.Errorf("params file %s: %s: %v", path, k, err)
		}
	}
	return nil
}

// numericString reports whether a string-typed flag also takes a number
// ("auto" or a value).
func numericString(name string) bool {
	switch name {
	case "sigma-i", "sigma-x", "superpixels", "smooth":
		return true
	}
	return false
}

// resolve checks the settings and converts them into the pipeline's
// options (pipeline.Request.Options); every error is a usage error naming
// the flag.
func resolve(s settings, workers int) (*pipeline.Options, error) {
	o, err := s.Options(workers)
	if err != nil {
		return nil, &usageError{err}
	}
	return o, nil
}
