package segment

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sync"
	"time"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/labelmap"
	"github.com/cleave-seg/cleave/segment/parallel"
)

// Method is the cutting method of Params.Method.
type Method string

// Methods accepted by Params.
const (
	MethodBisect Method = "bisect"
	MethodKway   Method = "kway"
)

// Background says which part of the image is background (Params.
// Background): "" none (the label map holds the regions of the cut),
// BackgroundDark, BackgroundBright or BackgroundLines.
type Background string

// Automatic choices (stated in the command's help and the README).
const (
	// PixelGraphMaxPixels is the largest image (in pixels) that gets a pixel
	// graph when Superpixels is automatic; larger images get superpixels:
	// the smallest image with MinAutoSuperpixels of PixelsPerSuperpixel
	// pixels. The superpixel graph carries the contour cue and the faint
	// object rule, and on small generated scenes it beat the pixel graph
	// at a fraction of the time (DEVELOPERS.md, "Measured choices", gives the measurement).
	PixelGraphMaxPixels = MinAutoSuperpixels * PixelsPerSuperpixel
	// PixelsPerSuperpixel sets the automatic superpixel count, clamped to
	// [MinAutoSuperpixels, MaxAutoSuperpixels].
	PixelsPerSuperpixel = 48
	MinAutoSuperpixels  = 64
	MaxAutoSuperpixels  = 4000

	// SuperpixelsPerObject is k, the number of superpixels an object of
	// the estimated radius r should span on a frame large enough for the
	// object scale to matter (see autoSuperpixels).
	SuperpixelsPerObject = 4
	// MinPixelsPerScaledSuperpixel bounds the scale rule to superpixels of
	// at least 16 pixels (a spacing of 4 pixels), below which SLIC has too
	// few pixels per centre to follow an edge.
	MinPixelsPerScaledSuperpixel = 16
	// MaxScaledSuperpixels is the absolute cap of the scale rule (DEVELOPERS.md,
	// "Measured choices", gives the measurement behind it).
	MaxScaledSuperpixels = 48000
)

// ScaleMinRadius: the superpixel count follows an object scale only for
// objects of at least this radius in pixels. affinity.ObjectScale
// reports the scale of the boundaries on packed grains and of the texture
// on machined surfaces, not the object size, and truly tiny objects would
// ask for superpixels barely larger than 16 pixels, too small to outline
// them, at many times the cost (DEVELOPERS.md, "Measured choices", gives the measurement). Below this
// radius the count stays at the per-pixel rule.
const ScaleMinRadius = 6

// Params are the segmentation parameters. Zero values are not defaults: the
// command layer fills defaults, Run validates and resolves the automatic
// ones (AutoSigmaI, AutoSigmaX, Superpixels < 0) and reports them in
// Result.Params.
type Params struct {
	Superpixels int     // < 0 automatic, 0 pixel graph, > 0 target SLIC count
	Compactness float64 // SLIC compactness
	Radius      int     // pixel-graph neighbourhood radius r in pixels
	SigmaI      float64 // intensity kernel width σ_I, normalized intensity units
	AutoSigmaI  bool    // estimate σ_I from the image
	SigmaX      float64 // spatial kernel width σ_X in pixels
	AutoSigmaX  bool    // σ_X = 0.8 r (pixel graph) or 2 S (superpixels, S the grid step)
	// Contour adds the intervening-contour cue to the superpixel graph
	// (affinity.RegionGraph): weights fall across edges and thin lines.
	Contour bool
	SigmaC  float64 // σ_C of the contour cue, resolved from the image (affinity.AutoSigmaContour)
	// Grain removes a directional texture (machining grain) from the
	// features and the luminance before anything else (see removeGrain);
	// GrainModel is the model measured on the image, resolved by Run.
	Grain      bool
	GrainModel affinity.Grain
	// Smooth is the standard deviation, in pixels, of a Gaussian that
	// smooths the feature planes and the luminance before the graph is
	// built (0: none); with AutoSmooth, Run chooses it from the image's
	// noise and object scale (autoSmooth) and reports it here.
	Smooth     float64
	AutoSmooth bool

	Method      Method  // MethodBisect or MethodKway
	Segments    int     // bisect: region limit (0 none); kway: K (0 from the eigengap)
	MaxSegments int     // kway with K = 0: largest K considered
	MaxNcut     float64 // bisect: largest Ncut value of an accepted split
	MinArea     int     // pixels: smallest region or object kept

	Classes    int        // 0: no grouping; >= 2: number of intensity classes
	Background Background // "", BackgroundDark, BackgroundBright or BackgroundLines
	// SeamsOnly re-cuts touching objects only along seams of lower or
	// changing contrast, and never at a neck of their shape, whether the
	// neck alone or the dip in contrast that blur gives a narrow neck
	// would call for it: for lobed or branched objects that are one
	// object each.
	SeamsOnly bool
	// Faint, when above 0, also looks for faint objects against the
	// local background: after the faint-object rule against the image's
	// smooth field, background superpixels standing Faint robust
	// spreads beyond a field that follows the background on the scale
	// of a few objects become objects too (faintObjects, localField).
	// Only with Classes 2 and a dark or bright Background; 0 is off. Both
	// searches score superpixels: on a pixel graph (Superpixels 0, or
	// automatic on an image of at most PixelGraphMaxPixels) neither runs.
	// With several feature planes (colour) no object scale is estimated,
	// and the second search's field is the smooth one (localField).
	Faint int

	Workers   int
	Seed      uint64
	MaxMemory int64 // bytes; Run refuses to start a stage estimated above it (EstimateStages)

}

// DefaultParams are the parameters cleave starts from: the superpixel
// count and both kernel widths left to the image, compactness 20, a
// pixel-graph radius of 5, recursive bisection up to a normalized cut of
// 0.15, regions and objects of at least 20 pixels, no classes, the
// intervening-contour cue on, smoothing left to the image, seed 1, an 8 GiB memory bound and all
// cores. They were chosen on the project's generated nuclei and plate
// scenes (DEVELOPERS.md lists the seeds). MaxSegments (12) matters only
// to the k-way method.
func DefaultParams() Params {
	return Params{
		Superpixels: -1, Compactness: 20, Radius: 5, AutoSigmaI: true, AutoSigmaX: true, Contour: true, AutoSmooth: true,
		Method: MethodBisect, MaxSegments: 12, MaxNcut: 0.15, MinArea: 20, Seed: 1, MaxMemory: 8 << 30,
	}
}

// Ranges of the parameters. Validate refuses values outside them, so that
// no value, however large, makes a run allocate or compute without bound;
// Run also refuses counts above the nodes of the image's graph. The
// command states them in its help.
const (
	// MinSigmaI and MaxSigmaI bound SigmaI (normalized units). Features
	// lie in 0..1 (lab a* and b* within about -1.3..1.3), so above 100
	// every intensity weight is 1 to float32 precision; below 1e-6 every
	// weight between different intensities is 0.
	MinSigmaI, MaxSigmaI = 1e-6, 100.0
	// MinSigmaX and MaxSigmaX bound SigmaX (pixels): below 0.01 every
	// weight between distinct pixels is 0, above a million pixels every
	// spatial weight is 1 on any image cleave accepts.
	MinSigmaX, MaxSigmaX = 0.01, 1e6
	// MinSmooth and MaxSmooth bound a fixed Smooth (pixels; 0 is off):
	// below a tenth of a pixel the sampled kernel is all but the identity,
	// and above 50 pixels it blurs away any object cleave could outline.
	MinSmooth, MaxSmooth = 0.1, 50.0
	// MaxRadius bounds Radius: the pixel graph has about pi r^2 neighbours
	// per pixel (12,900 at 64), beyond any useful kernel.
	MaxRadius = 64
	// MinFaint and MaxFaint bound a Faint level other than 0 (off), in
	// robust spreads: at 2 about one background superpixel in 44 of a
	// Gaussian spread stands out (normal tail beyond 2σ, 2.3 %), and
	// more below it; 50, seven times the smooth field's faintSigmas, is
	// a bound of ours.
	MinFaint, MaxFaint = 2, 50
	// MaxCompactness bounds Compactness: far above the default 20,
	// superpixels are already squares of the grid.
	MaxCompactness = 10000
	// MaxNcutLimit bounds MaxNcut: the normalized cut of a split,
	// cut/assoc(A) + cut/assoc(B), never exceeds 2.
	MaxNcutLimit = 2
	// MaxSuperpixels bounds a given superpixel count (the automatic one
	// stays within MaxScaledSuperpixels).
	MaxSuperpixels = 1000000
	// MaxKwaySegments bounds K of the k-way method and MaxSegments: the
	// eigensolver's work grows with the square of the eigenpairs sought
	// (DEVELOPERS.md, "Measured choices", gives the measurement).
	MaxKwaySegments = 64
	// MaxBisectSegments bounds the region limit of the bisect method (a
	// limit, not work: above the regions a cut finds it is no limit).
	MaxBisectSegments = 1000000
	// MaxClasses bounds Classes: intensity classes beyond a few dozen
	// are not separable in a 16-bit image's brightness, and the grouping
	// allocates per class.
	MaxClasses = 64
	// MaxMinArea bounds MinArea by the largest image cleave reads (2000
	// megapixels, whose pixel indices still fit 32 bits).
	MaxMinArea = 2000000000
)

// ParamError reports an invalid parameter by its name (the command layer
// maps names to its flags).
type ParamError struct {
	Name, Problem string
}

func (e *ParamError) Error() string { return e.Name + " " + e.Problem }

// ErrMemory is returned (wrapped) when the estimated memory of a stage
// (EstimateStages) exceeds Params.MaxMemory.
var ErrMemory = errors.New("estimated memory above the limit")

func positive(name string, v float64) error {
	if math.IsNaN(v) || math.IsInf(v, 0) || v <= 0 {
		return &ParamError{name, fmt.Sprintf("must be a positive number, got %v", v)}
	}
	return nil
}

// Validate checks the parameters and returns a *ParamError for the first
// bad one.
func (p Params) Validate() error {
	if !p.AutoSigmaI {
		if err := within("sigma-i", p.SigmaI, MinSigmaI, MaxSigmaI); err != nil {
			return err
		}
	}
	if !p.AutoSigmaX {
		if err := within("sigma-x", p.SigmaX, MinSigmaX, MaxSigmaX); err != nil {
			return err
		}
	}
	if !p.AutoSmooth && p.Smooth != 0 && !(p.Smooth >= MinSmooth && p.Smooth <= MaxSmooth) {
		return &ParamError{"smooth", fmt.Sprintf("must be 0 (none) or %g to %g, got %v", MinSmooth, MaxSmooth, p.Smooth)}
	}
	if p.Superpixels > MaxSuperpixels {
		return &ParamError{"superpixels", fmt.Sprintf("must be at most %d, got %d", MaxSuperpixels, p.Superpixels)}
	}
	if p.Radius < 1 || p.Radius > MaxRadius {
		return &ParamError{"radius", fmt.Sprintf("must be 1 to %d pixels, got %d", MaxRadius, p.Radius)}
	}
	if err := positive("compactness", p.Compactness); err != nil {
		return err
	}
	if p.Compactness > MaxCompactness {
		return &ParamError{"compactness", fmt.Sprintf("must be at most %d, got %v", MaxCompactness, p.Compactness)}
	}
	if err := positive("max-ncut", p.MaxNcut); err != nil {
		return err
	}
	if p.MaxNcut > MaxNcutLimit {
		return &ParamError{"max-ncut", fmt.Sprintf("must be at most %d (no normalized cut exceeds it), got %v", MaxNcutLimit, p.MaxNcut)}
	}
	switch p.Method {
	case MethodBisect, MethodKway:
	default:
		return &ParamError{"method", fmt.Sprintf("must be bisect or kway, got %q", p.Method)}
	}
	switch {
	case p.Segments < 0:
		return &ParamError{"segments", fmt.Sprintf("must be 0 or more, got %d", p.Segments)}
	case p.Method == MethodKway && p.Segments > MaxKwaySegments:
		return &ParamError{"segments", fmt.Sprintf("must be at most %d with the kway method (its work grows with the square of K), got %d", MaxKwaySegments, p.Segments)}
	case p.Segments > MaxBisectSegments:
		return &ParamError{"segments", fmt.Sprintf("must be at most %d, got %d", MaxBisectSegments, p.Segments)}
	}
	if p.MaxSegments > MaxKwaySegments || p.MaxSegments < 0 || (p.Method == MethodKway && p.Segments == 0 && p.MaxSegments < 2) {
		return &ParamError{"max-segments", fmt.Sprintf("must be 2 to %d, got %d", MaxKwaySegments, p.MaxSegments)}
	}
	if p.MinArea < 0 || p.MinArea > MaxMinArea {
		return &ParamError{"min-area", fmt.Sprintf("must be 0 to %d pixels, got %d", MaxMinArea, p.MinArea)}
	}
	if p.Classes == 1 || p.Classes < 0 || p.Classes > MaxClasses {
		return &ParamError{"classes", fmt.Sprintf("must be 0 (off) or 2 to %d, got %d", MaxClasses, p.Classes)}
	}
	if p.Faint != 0 && (p.Faint < MinFaint || p.Faint > MaxFaint) {
		return &ParamError{"faint", fmt.Sprintf("must be 0 (off) or %d to %d robust spreads, got %d", MinFaint, MaxFaint, p.Faint)}
	}
	if p.Faint != 0 && (p.Classes != 2 || (p.Background != BackgroundDark && p.Background != BackgroundBright)) {
		return &ParamError{"faint", "needs classes 2 and background dark or bright"}
	}
	if p.Faint != 0 && p.Superpixels == 0 {
		return &ParamError{"faint", "needs superpixels (it scores them; superpixels 0 is the pixel graph)"}
	}
	switch p.Background {
	case "", "dark", "bright", BackgroundLines:
	default:
		return &ParamError{"background", fmt.Sprintf("must be dark, bright or lines, got %q", p.Background)}
	}
	if p.Background == BackgroundLines {
		if p.Classes != 0 {
			return &ParamError{"background", "lines takes no classes (packed objects are the regions of the cut)"}
		}
	} else if p.Background != "" && p.Classes < 2 {
		return &ParamError{"background", "needs classes 2 or more"}
	}
	return nil
}

// within checks that v lies in [lo, hi].
func within(name string, v, lo, hi float64) error {
	if err := positive(name, v); err != nil {
		return err
	}
	if v < lo || v > hi {
		return &ParamError{name, fmt.Sprintf("must be %g to %g, got %v", lo, hi, v)}
	}
	return nil
}

// checkNodes refuses counts that the graph of n nodes cannot hold: more
// classes than nodes (two classes, background and objects, are always
// defined, even on a one-pixel image), or a k-way K above the nodes. It
// runs before the graph is built (n is the pixel count or the superpixel
// count asked for).
func (p Params) checkNodes(n int) error {
	if p.Classes > max(n, 2) {
		return &ParamError{"classes", fmt.Sprintf("%d is more than the %d nodes of this image's graph", p.Classes, n)}
	}
	if p.Method == MethodKway && p.Segments > n {
		return &ParamError{"segments", fmt.Sprintf("%d is more than the %d nodes of this image's graph", p.Segments, n)}
	}
	return nil
}

// Stage is the wall time of one pipeline stage.
type Stage struct {
	Name    string
	Seconds float64
}

// Result is the outcome of Run.
type Result struct {
	Labels      labelmap.Map // final label map: regions 1..N, or objects 1..N on background 0
	Regions     labelmap.Map // regions 1..NumRegions after cleanup
	Classes     labelmap.Map // class of each pixel 0..C-1 (darkest first); Pix nil without classes
	NumRegions  int
	NumObjects  int // objects when Background is set, else 0
	Eigenvalues []float64
	SplitNcuts  []float64
	ObjectNcuts []float64 // Ncut of every split of an object into touching objects
	Params      Params    // with automatic values resolved
	// Graph is the top-level affinity matrix: compressed rows
	// (*affinity.Graph), or for the k-way cut of the pixel graph its
	// stencil form (*affinity.StencilGraph).
	Graph  affinity.Sparse
	Stages []Stage
	// ObjectScale is the object scale estimated for the automatic
	// superpixel count (affinity.ObjectScale); nil when none was estimated
	// (superpixels given, the pixel graph, or a frame small enough for the
	// one-per-PixelsPerSuperpixel rule). ObjectScaleUsed reports that the
	// count followed it rather than the per-pixel rule.
	ObjectScale     *affinity.ScaleEstimate
	ObjectScaleUsed bool
	// Warnings are findings about this result to check before trusting
	// it (see Warning); nil when there are none.
	Warnings []Warning
}

// Input is what Run segments: the feature planes the graph is built on and
// the luminance plane used to judge brightness, all normalized, w*h each.
type Input struct {
	Width, Height int
	Planes        [][]float32
	Luminance     []float32
	// Cache, when set, shares work between runs on this same input
	// (see Cache).
	Cache *Cache
	// Invalid, when not nil, marks pixels that have no measurement (a
	// floating-point sample that is NaN or infinite): they join no
	// region and no object, label 0 in Labels and Regions. The caller
	// gives them a neutral feature value so that they do not pull the
	// graph's weights; Classes still assigns them a class.
	Invalid []bool
}

// Cache shares work between runs on one input whose parameters differ
// (a parameter search): the superpixels, their feature summaries and
// adjacency between runs with the same superpixel count and
// compactness, since SLIC does not depend on sigma-i, sigma-x or
// max-ncut; and one recursive bisection between runs that differ only
// in max-ncut, since the split tree grown at the largest threshold serves
// every smaller one exactly (see cutTree), so each part's eigenproblem is
// solved once. Bisections are shared for the bisect method without a
// segment limit. The object scale behind an automatic superpixel count
// is estimated once. Results are those of runs without a cache. Safe for
// concurrent use.
type Cache struct {
	// Ceiling is the least threshold a bisection tree is grown with: a
	// search sets it to the largest max-ncut it will try, so that the
	// first run serves the others. A run above a stored tree's threshold
	// grows a new tree.
	Ceiling float64

	mu    sync.Mutex
	cuts  map[Params]*cutEntry
	slics map[[4]float64]*slicEntry

	// scales holds the object scale without (0) and with (1) grain
	// removal, each estimated once.
	scales [2]struct {
		once sync.Once
		est  affinity.ScaleEstimate
	}
}

// objectScale returns the object scale of the input (grain removed or
// not), estimated once.
func (c *Cache) objectScale(grain bool, estimate func() affinity.ScaleEstimate) affinity.ScaleEstimate {
	e := &c.scales[0]
	if grain {
		e = &c.scales[1]
	}
	e.once.Do(func() { e.est = estimate() })
	return e.est
}

type cutEntry struct {
	mu   sync.Mutex
	tree *cutTree
	at   float64
}

type slicEntry struct {
	mu     sync.Mutex
	done   bool
	nodeOf []int32
	n      int
	sum    *affinity.Regions
	adj    *affinity.Graph
	err    error
}

// cacheEntry returns the entry of m for key, creating the map and the
// entry under c.mu; the caller locks the entry itself while filling it.
func cacheEntry[K comparable, E any](c *Cache, m *map[K]*E, key K) *E {
	c.mu.Lock()
	defer c.mu.Unlock()
	if *m == nil {
		*m = map[K]*E{}
	}
	e := (*m)[key]
	if e == nil {
		e = new(E)
		(*m)[key] = e
	}
	return e
}

// cut returns the bisection at threshold t for the graph identified by
// key, growing (grow(threshold)) or reusing a split tree.
func (c *Cache) cut(key Params, t float64, grow func(at float64) (*cutResult, error)) (*cutResult, error) {
	e := cacheEntry(c, &c.cuts, key)
	e.mu.Lock()
	defer e.mu.Unlock()
	if e.tree == nil || t > e.at {
		at := max(t, c.Ceiling)
		r, err := grow(at)
		if err != nil {
			return nil, err
		}
		e.tree, e.at = r.tree, at
	}
	return e.tree.prune(t), nil
}

// superpixels returns the superpixels of the input for (count,
// compactness, grain removed or not, smoothing), computing them with
// compute once.
func (c *Cache) superpixels(count int, compactness float64, grain bool, smooth float64, compute func() (*slicEntry, error)) (*slicEntry, error) {
	key := [4]float64{float64(count), compactness, 0, smooth}
	if grain {
		key[2] = 1
	}
	e := cacheEntry(c, &c.slics, key)
	e.mu.Lock()
	defer e.mu.Unlock()
	if !e.done {
		r, err := compute()
		if err == nil {
			e.nodeOf, e.n, e.sum, e.adj = r.nodeOf, r.n, r.sum, r.adj
		}
		e.err, e.done = err, true
	}
	return e, e.err
}

// autoCount resolves the automatic node count of in: 0 (the pixel graph)
// up to PixelGraphMaxPixels pixels; one superpixel per
// PixelsPerSuperpixel pixels (at least MinAutoSuperpixels) while that
// stays within MaxAutoSuperpixels, as before the object scale was used;
// above, autoSuperpixels on the object scale of the luminance plane (est,
// estimated once per Cache and grain setting: in is the input after grain
// removal when grain is set), and whether the count followed it.
func autoCount(in Input, grain bool, workers int) (count int, est *affinity.ScaleEstimate, used bool) {
	npix := in.Width * in.Height
	if countNeedsScale(npix) {
		e := objectScaleOf(in, grain, workers)
		est = &e
	}
	count, used = autoCountWith(npix, est)
	return count, est, used
}

// countNeedsScale reports whether the automatic node count of an image
// of npix pixels follows its object scale (autoCount).
func countNeedsScale(npix int) bool {
	return npix > PixelGraphMaxPixels && npix/PixelsPerSuperpixel > MaxAutoSuperpixels
}

// autoCountWith is autoCount with the object scale already estimated
// (est; read only when countNeedsScale holds).
func autoCountWith(npix int, est *affinity.ScaleEstimate) (count int, used bool) {
	switch {
	case npix <= PixelGraphMaxPixels:
		return 0, false
	case !countNeedsScale(npix):
		return max(npix/PixelsPerSuperpixel, MinAutoSuperpixels), false
	}
	return autoSuperpixels(npix, *est)
}

// objectScaleOf estimates the object scale of the input's luminance
// (affinity.ObjectScale), once per input when it has a cache.
func objectScaleOf(in Input, grain bool, workers int) affinity.ScaleEstimate {
	estimate := func() affinity.ScaleEstimate { return affinity.ObjectScale(in.Luminance, in.Width, in.Height, workers) }
	if in.Cache != nil {
		return in.Cache.objectScale(grain, estimate)
	}
	return estimate()
}

// autoSuperpixels is the automatic superpixel count of a frame of npix
// pixels (above MaxAutoSuperpixels·PixelsPerSuperpixel) whose object scale
// is est, and whether it follows the scale.
//
// An object of radius r covers πr² pixels; SLIC superpixels on a grid of
// spacing S cover S² each, so k superpixels per object means
//
//	S = r·√(π/k),  count = npix/S² = k·npix/(πr²).
//
// With k = SuperpixelsPerObject = 4 the spacing is S ≈ 0.89r: an object
// of the typical radius is more than two superpixels across, so its
// outline is drawn by superpixel borders within S/2 ≈ 0.44r of the true
// edge, two touching objects fall on distinct superpixels, and objects of
// two thirds the typical radius still span more than one. With the
// per-pixel rule capped at 4000 superpixels, a 2048x2048 frame gets
// S = 32 pixels, more than the diameter of the smaller nuclei, and loses
// small and touching ones. The count is bounded below by the per-pixel
// rule's cap (the scale never coarsens the graph) and above by
// npix/MinPixelsPerScaledSuperpixel and MaxScaledSuperpixels = 48000, the
// knee of the object F1 measured against fixed counts (DEVELOPERS.md,
// "Measured choices"), which bounds the cost of SLIC, the region graph
// and its eigenproblems.
//
// Without a plausible scale (est.Found false, or a radius below
// ScaleMinRadius) it is the per-pixel rule, MaxAutoSuperpixels.
func autoSuperpixels(npix int, est affinity.ScaleEstimate) (int, bool) {
	base := min(max(npix/PixelsPerSuperpixel, MinAutoSuperpixels), MaxAutoSuperpixels)
	r := est.Radius
	if !est.Found || !(r >= ScaleMinRadius) || math.IsInf(r, 0) {
		return base, false
	}
	n := float64(SuperpixelsPerObject) * float64(npix) / (math.Pi * r * r)
	hi := min(npix/MinPixelsPerScaledSuperpixel, MaxScaledSuperpixels)
	count := int(math.Round(min(n, float64(hi))))
	return max(base, count), true
}

// Run segments one image: graph (pixels or SLIC superpixels), normalized
// cuts, cleanup, and optionally classes and objects.
func Run(ctx context.Context, in Input, p Params) (*Result, error) {
	if err := p.Validate(); err != nil {
		return nil, err
	}
	w, h := in.Width, in.Height
	npix := w * h
	if npix == 0 || len(in.Planes) == 0 || len(in.Luminance) != npix {
		return nil, errors.New("segment: empty input")
	}
	res := &Result{}
	t0 := time.Now()
	stage := func(name string) {
		now := time.Now()
		res.Stages = append(res.Stages, Stage{name, now.Sub(t0).Seconds()})
		t0 = now
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	if p.Grain {
		in, p.GrainModel = removeGrain(in, p.Workers)
		stage("grain")
	}

	// The object scale, when the smoothing or the node count asks for
	// it, is estimated on the image before smoothing.
	if p.AutoSmooth || (p.Superpixels < 0 && countNeedsScale(npix)) {
		est := objectScaleOf(in, p.Grain, p.Workers)
		res.ObjectScale = &est
		stage("scale")
	}
	if p.AutoSmooth {
		p.Smooth = autoSmooth(*res.ObjectScale)
	}
	if p.Smooth > 0 {
		in = smoothInput(in, p.Smooth, p.Workers)
		stage("smooth")
	}

	// Graph.
	if p.Superpixels < 0 {
		p.Superpixels, res.ObjectScaleUsed = autoCountWith(npix, res.ObjectScale)
	}
	if p.Superpixels >= npix {
		p.Superpixels = 0
	}
	nodes := npix
	if p.Superpixels > 0 {
		nodes = p.Superpixels
	}
	if err := p.checkNodes(nodes); err != nil {
		return nil, err
	}
	if err := checkMemory(w, h, len(in.Planes), p); err != nil {
		return nil, err
	}
	var (
		g      *affinity.Graph
		sg     *affinity.StencilGraph // the pixel graph of a k-way cut, instead of g
		nodeOf []int32                // pixel -> node; nil for the pixel graph
		area   []int
		energy []float32 // edge energy of the luminance, once computed
		err    error
	)
	if p.Superpixels == 0 {
		// σ_I of the pixel graph; the superpixel graph takes its own
		// from the regions (AutoRegionSigmaI) below, so the pixel
		// differences (2 per pixel, their median) are not gathered there.
		if p.AutoSigmaI {
			p.SigmaI = affinity.AutoSigmaI(in.Planes, w, h)
		}
		if p.AutoSigmaX {
			p.SigmaX = 0.8 * float64(p.Radius)
		}
		pp := affinity.PixelParams{Radius: p.Radius, SigmaI: p.SigmaI, SigmaX: p.SigmaX}
		if p.Method == MethodKway {
			// The k-way cut reads the graph through the eigensolver and
			// the connected components only, which take the stencil
			// form: at r = 5 half the memory of compressed rows (at a
			// million pixels 336 MB against 646 MB) and no copy.
			sg, err = affinity.PixelStencilGraph(in.Planes, w, h, pp, p.Workers)
		} else {
			g, err = affinity.PixelGraph(in.Planes, w, h, pp, p.Workers)
		}
		if err != nil {
			return nil, err
		}
		stage("graph")
	} else {
		// The edge energy reads the luminance alone: it is made on a
		// goroutine of its own, started as SLIC's iterations end (whose
		// parallel bands keep both cores busy), beside the connectivity
		// pass, which runs on one core, and the region sums (started
		// here when the superpixels come from the cache). Its values do
		// not depend on when it runs.
		var energyC chan []float32
		startEnergy := func() {}
		if p.Contour {
			lum := in.Luminance
			energyC = make(chan []float32, 1)
			startEnergy = sync.OnceFunc(func() {
				go func() { energyC <- affinity.EdgeEnergy(lum, w, h, affinity.ContourScale, p.Workers) }()
			})
		}
		compute := func() (*slicEntry, error) {
			sp, n, err := affinity.SLIC(in.Planes, w, h, affinity.SLICParams{Count: p.Superpixels, Compactness: p.Compactness, AfterIterations: startEnergy}, p.Workers)
			if err != nil {
				return nil, err
			}
			// Summarize (one pass in raster order) beside Adjacency
			// (parallel bands): both only read the labels.
			sumC := make(chan *affinity.Regions, 1)
			go func() { sumC <- affinity.Summarize(in.Planes, sp, n) }()
			adj := affinity.Adjacency(sp, n, p.Workers)
			return &slicEntry{nodeOf: sp.Pix, n: n, sum: <-sumC, adj: adj}, nil
		}
		var sp *slicEntry
		if in.Cache != nil {
			sp, err = in.Cache.superpixels(p.Superpixels, p.Compactness, p.Grain, p.Smooth, compute)
		} else {
			sp, err = compute()
		}
		if err != nil {
			return nil, err
		}
		startEnergy()
		stage("superpixels")
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		nodeOf = sp.nodeOf
		if p.AutoSigmaX {
			p.SigmaX = 2 * math.Sqrt(float64(npix)/float64(sp.n))
		}
		sum, adj := sp.sum, sp.adj
		if p.AutoSigmaI {
			p.SigmaI = affinity.AutoRegionSigmaI(sum, adj)
		}
		rp := affinity.RegionParams{SigmaI: p.SigmaI, SigmaX: p.SigmaX}
		if p.Contour {
			energy = <-energyC
			rp.Contour = energy
			// The intervening contour of every edge, once for σ_C and
			// the weights (affinity.AutoSigmaContour's width).
			rp.ContourIC = affinity.InterveningContour(energy, w, h, sum, adj, p.Workers)
			p.SigmaC = affinity.SigmaContourOf(rp.ContourIC)
			rp.SigmaC = p.SigmaC
		}
		g, err = affinity.RegionGraph(sum, adj, w, h, rp)
		if err != nil {
			return nil, err
		}
		area = sum.Area
		stage("graph")
	}
	nodes = 0
	if sg != nil {
		res.Graph, nodes = sg, sg.Nodes()
	} else {
		res.Graph, nodes = g, g.N
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}

	// What the class stage reads of the image alone, the edge energy of
	// 2x2 blocks and the fine energy's floor, is made beside the cut
	// (whose eigensolve runs its coarse levels and the sweep on one
	// core) rather than after it; only when the fine energy is already
	// made (the contour cue): the fine plane is then held through the
	// cut anyway, and the blocks' energy (a quarter plane, 16 MB at 16
	// MP) is what is held there in addition.
	type imageEdges struct {
		coarse  []float32
		coarseW int
		floor   float64
	}
	var edgesC chan imageEdges
	if p.Classes >= 2 && p.Background != "" && energy != nil {
		edgesC = make(chan imageEdges, 1)
		lum, fine := in.Luminance, energy
		go func() {
			c, cw := coarseEnergyBlocks(lum, w, h, p.Workers)
			edgesC <- imageEdges{c, cw, edgeFloor(fine, p.Workers)}
		}()
	}

	// Cuts.
	var cut *cutResult
	// With packed objects, a cut that runs where no line does is undone
	// by packedObjects (regions are one object unless a line runs along
	// their border), so a smooth cut vector need not stop the recursion:
	// a field of packed objects has no coarse two-way structure for the
	// stability test to find, only the fine one of its objects.
	stability := p.Background != BackgroundLines
	flat := constant(in.Planes)
	if flat {
		// No feature varies: any cut would be purely spatial. One region.
		cut = &cutResult{region: make([]int32, nodes), regions: 1}
	} else if p.Method == MethodBisect && in.Cache != nil && p.Segments == 0 {
		// Everything the graph and the cut depend on except MaxNcut (the
		// automatic values are resolved by now); Workers never changes
		// results, and SeamsOnly and Faint act on the objects after the
		// cut.
		q := p
		q.MaxNcut, q.Workers, q.SeamsOnly, q.Faint = 0, 0, false, 0
		cut, err = in.Cache.cut(q, p.MaxNcut, func(at float64) (*cutResult, error) {
			q := p
			q.MaxNcut = at
			return bisect(ctx, g, area, q.cutParams(), cutOptions{stability: stability, tree: true})
		})
	} else if p.Method == MethodBisect {
		cut, err = bisect(ctx, g, area, p.cutParams(), cutOptions{stability: stability})
	} else if sg != nil {
		cut, err = kwayStencil(ctx, sg, p)
	} else {
		cut, err = kwayComponents(ctx, g, area, p)
	}
	if err != nil {
		return nil, err
	}
	res.Eigenvalues = cut.eigenvalues
	res.SplitNcuts = cut.splitNcuts
	short := cut.short
	stage("cuts")
	if err := ctx.Err(); err != nil {
		return nil, err
	}

	reg := make([]int32, npix)
	if nodeOf == nil {
		copy(reg, cut.region)
	} else {
		parallel.Blocks(npix, pixelBlock, p.Workers, func(_, lo, hi int) {
			r := reg[lo:hi]
			for k, v := range nodeOf[lo:hi] {
				r[k] = cut.region[v]
			}
		})
	}
	regions := labelmap.Map{Pix: reg, Width: w, Height: h}
	nreg := mergeSmall(regions, cut.regions, p.MinArea)
	res.NumRegions = nreg
	// The result's region map is reg itself, numbered from 1 once
	// nothing reads it any more (below, before maskInvalid), rather than
	// a second plane held through the class and object stages; the
	// label map is the region map unless objects are drawn.
	reg0 := reg
	labelsAreRegions := true
	res.Labels = labelmap.Map{Width: w, Height: h}

	if p.Background == BackgroundLines {
		res.Labels.Pix, res.NumObjects = packedObjects(in.Luminance, regions, nreg, max(p.MinArea, 1), p.Workers)
		labelsAreRegions = false
		stage("objects")
	}
	objectClassPixels := 0 // pixels outside the background class, when objects are sought
	if p.Classes >= 2 {
		// The object scale is estimated only if the class grouping or the
		// re-cut's neck partition needs it, once, and not again when the
		// automatic superpixel count has estimated it already.
		radius := sync.OnceValue(func() float64 {
			if p.Background == "" || len(in.Planes) != 1 {
				return 0
			}
			if res.ObjectScale != nil {
				return ObjectRadius(*res.ObjectScale)
			}
			return ObjectRadius(objectScaleOf(in, p.Grain, p.Workers))
		})
		cls, fieldG := groupClasses(in.Planes, in.Luminance, regions, nreg, p.Classes, p.Background, radius, p.Seed, p.Workers)
		if p.Background == "" {
			res.Classes = labelmap.New(w, h)
			for i, r := range reg {
				res.Classes.Pix[i] = cls[r]
			}
		}
		if p.Background != "" {
			bg := referenceClass(cls, nil, p.Classes, p.Background)
			// backgroundField makes fieldG the field of the current
			// background class, read from the region map (no mask
			// plane); the contrast map is made from the grid directly
			// (contrastOfGrid, the values a field plane would give),
			// and the plane only for the call that reads it (rejudge,
			// the faint objects, outshone), not held between them.
			backgroundField := func() {
				fieldG = smoothFieldGridOfClass(in.Luminance, reg, cls, bg, w, h, float64(max(w, h))/fieldScale, p.Workers)
			}
			if fieldG == nil {
				backgroundField()
			}
			var ie imageEdges
			if edgesC != nil {
				ie = <-edgesC
			} else {
				energy = affinity.EdgeEnergy(in.Luminance, w, h, affinity.ContourScale, p.Workers)
				ie.coarse, ie.coarseW = coarseEnergyBlocks(in.Luminance, w, h, p.Workers)
				ie.floor = edgeFloor(energy, p.Workers)
			}
			edges := &edgeTest{w: w, h: h, fine: energy, floor: ie.floor, coarse: ie.coarse, coarseW: ie.coarseW, source: sourceContrast(p.Background), workers: p.Workers}
			con := contrastOfGrid(nil, in.Luminance, fieldG, p.Background, p.Workers)
			edges.con = con
			// objects is an object map of this image.
			objects := func(l []int32) labelmap.Map { return labelmap.Map{Pix: l, Width: w, Height: h} }
			obj, nobj := objectsFrom(con, regions, nreg, cls, bg, p.MinArea, p.Workers)
			// fresh: obj is objectsFrom of the current contrast map,
			// regions and classes, so the object map below needs no
			// second pass when nothing has changed them since.
			fresh := true
			// Objects with no edge on their outline, or only a diffuse
			// one, are shading (a glow, haze): their regions join the
			// background, which is then estimated again with them. The
			// regions that went with the
			// shading are judged again against the corrected background
			// (rejudge): an object that touched the glow stands out from
			// it once the glow is background. What comes back is tested
			// for an edge again and dropped for good when it has none.
			for round := 0; round < 2; round++ {
				drop := edgeless(objects(obj), nobj, edges)
				if drop == nil {
					break
				}
				fresh = false
				dropped := make([]bool, nreg)
				for i, l := range obj {
					if drop[l] {
						cls[reg[i]] = bg
						dropped[reg[i]] = true
					}
				}
				// The object map is stale from here (the classes
				// changed): dropped before the field and the contrast are
				// made again, and made again only where it is read.
				obj = nil
				backgroundField()
				con = contrastOfGrid(con, in.Luminance, fieldG, p.Background, p.Workers)
				edges.con = con
				if round == 1 || p.Classes != 2 || len(in.Planes) != 1 {
					break
				}
				if !rejudge(cls, dropped, in.Luminance, fieldG.plane(nil, p.Workers), reg, bg, p.Background, p.Workers) {
					break
				}
				backgroundField()
				con = contrastOfGrid(con, in.Luminance, fieldG, p.Background, p.Workers)
				edges.con = con
				obj, nobj = objectsFrom(con, regions, nreg, cls, bg, p.MinArea, p.Workers)
				fresh = true
			}
			if p.Classes == 2 && len(in.Planes) == 1 && ringObjects(in.Luminance, edges, regions, cls, bg, p.Background) {
				fresh = false
				backgroundField()
				con = contrastOfGrid(con, in.Luminance, fieldG, p.Background, p.Workers)
				edges.con = con
			}
			if !fresh {
				// The object map is made again below: not held
				// through the faint objects' search.
				obj = nil
			}
			if nodeOf != nil && p.Classes == 2 {
				before := nreg
				// faintObjects adds regions when it finds faint objects and
				// leaves everything as it was otherwise.
				regions, nreg, cls = faintObjects(in.Luminance, fieldG.plane(nil, p.Workers), nodeOf, nodes, regions, nreg, cls, bg, p.Background, faintSigmas, max(p.MinArea, 1), p.Workers)
				reg = regions.Pix
				if p.Faint > 0 {
					local := localField(in.Luminance, reg, cls, bg, w, h, radius(), p.Workers)
					regions, nreg, cls = faintObjects(in.Luminance, local, nodeOf, nodes, regions, nreg, cls, bg, p.Background, float64(p.Faint), max(p.MinArea, 1), p.Workers)
					reg = regions.Pix
				}
				if nreg != before {
					fresh = false
				}
			}
			if !fresh {
				obj, nobj = objectsFrom(con, regions, nreg, cls, bg, p.MinArea, p.Workers)
			}
			obj, nobj = tightenObjects(con, objects(obj), nobj, max(p.MinArea, 1), p.Workers)
			obj, nobj = joinTouching(con, objects(obj), nobj, p.Workers)
			// The class map is made only now, from the final classes
			// (the object passes above leave reg and cls as they are):
			// one plane less through those passes, where the class
			// stage's live set is largest.
			res.Classes = labelmap.New(w, h)
			objectClassPixels = classMap(res.Classes.Pix, reg, cls, bg, p.Workers)
			stage("classes")
			if err := ctx.Err(); err != nil {
				return nil, err
			}
			ref, err := refineObjects(ctx, con, objects(obj), nobj, RefineMaxNcut, max(p.MinArea, 1), !p.SeamsOnly, radius(), p.Workers, p.Seed)
			if err != nil {
				return nil, err
			}
			res.Labels.Pix, res.NumObjects, res.ObjectNcuts = ref.labels, ref.n, ref.splits
			labelsAreRegions = false
			short.merge(ref.short)
			// Outlines are now drawn at pixel level: their step may lie
			// a pixel beside them.
			edges.near = true
			// The drops below renumber the label map in place (it is
			// the refinement's own).
			if drop := edgeless(res.Labels, res.NumObjects, edges); drop != nil {
				res.Labels.Pix, res.NumObjects = relabelInto(res.Labels.Pix, res.Labels.Pix, res.NumObjects, drop)
			}
			res.Labels.Pix, res.NumObjects = absorbSmall(res.Labels, res.NumObjects, max(p.MinArea, 1), p.Workers)
			// Pieces of a thin structure that the class map left as
			// background around them go too (outshone).
			if drop := outshone(in.Luminance, fieldG.plane(nil, p.Workers), res.Labels, res.NumObjects, p.Workers); drop != nil {
				res.Labels.Pix, res.NumObjects = relabelInto(res.Labels.Pix, res.Labels.Pix, res.NumObjects, drop)
			}
			stage("objects")
		} else {
			stage("classes")
		}
	}
	parallel.Blocks(len(reg0), pixelBlock, p.Workers, func(_, lo, hi int) {
		for i := range reg0[lo:hi] {
			reg0[lo+i]++
		}
	})
	res.Regions = labelmap.Map{Pix: reg0, Width: w, Height: h}
	if labelsAreRegions {
		res.Labels = res.Regions
	}
	if in.Invalid != nil && len(in.Invalid) == npix {
		maskInvalid(res, in.Invalid)
	}
	if res.NumRegions == 1 {
		res.Warnings = append(res.Warnings, noSplitWarning(p, cut.root, flat))
	}
	if !flat { // a blank image has nothing else to say
		res.Warnings = append(res.Warnings, objectWarnings(p, res.Labels, res.NumObjects, objectClassPixels)...)
	}
	if w := short.warning(); w != nil {
		res.Warnings = append(res.Warnings, *w)
	}
	res.Params = p
	return res, nil
}

// pixelBlock is the number of pixels in one work chunk of Run's
// per-pixel passes (a fixed chunking: results never depend on workers).
const pixelBlock = 1 << 16

// classMap writes the class of each pixel's region (cls[reg[i]]) into
// out, in fixed blocks of pixels on workers goroutines, and returns the
// number of pixels outside class bg.
func classMap(out, reg, cls []int32, bg int32, workers int) int {
	counts := make([]int, (len(reg)+pixelBlock-1)/pixelBlock)
	parallel.Blocks(len(reg), pixelBlock, workers, func(b, lo, hi int) {
		o, n := out[lo:hi], 0
		for k, r := range reg[lo:hi] {
			o[k] = cls[r]
			if cls[r] != bg {
				n++
			}
		}
		counts[b] = n
	})
	n := 0
	for _, c := range counts {
		n += c
	}
	return n
}

// maskInvalid gives the invalid pixels label 0 in the regions and the
// label map, and numbers what is left consecutively in raster order of
// first pixels (a region or object made only of invalid pixels is gone).
func maskInvalid(res *Result, invalid []bool) {
	same := len(res.Labels.Pix) > 0 && len(res.Regions.Pix) > 0 && &res.Labels.Pix[0] == &res.Regions.Pix[0]
	mask := func(l []int32, n int) ([]int32, int) {
		out := make([]int32, len(l))
		for i, v := range l {
			if !invalid[i] {
				out[i] = v
			}
		}
		return withoutLabels(out, n, make([]bool, n+1))
	}
	res.Regions.Pix, res.NumRegions = mask(res.Regions.Pix, res.NumRegions)
	if same {
		res.Labels = res.Regions
		return
	}
	n := res.NumObjects
	if n == 0 {
		n = int(res.Labels.Max())
	}
	res.Labels.Pix, res.NumObjects = mask(res.Labels.Pix, n)
}

// removeGrain returns the input with the directional texture of its
// luminance (affinity.EstimateGrain) removed from every feature plane and
// from the luminance (affinity.RemoveGrain), and the model it measured.
// The caller's planes are not modified.
func removeGrain(in Input, workers int) (Input, affinity.Grain) {
	w, h := in.Width, in.Height
	g := affinity.EstimateGrain(in.Luminance, w, h, workers)
	lum := affinity.RemoveGrain(in.Luminance, w, h, g, workers)
	planes := make([][]float32, len(in.Planes))
	for c, pl := range in.Planes {
		if len(pl) > 0 && len(pl) == len(in.Luminance) && &pl[0] == &in.Luminance[0] {
			planes[c] = lum
		} else {
			planes[c] = affinity.RemoveGrain(pl, w, h, g, workers)
		}
	}
	in.Planes, in.Luminance = planes, lum
	return in, g
}

// kwayComponents runs k-way clustering on the largest connected component;
// every other component is a region of its own and counts toward K.
func kwayComponents(ctx context.Context, g *affinity.Graph, area []int, p Params) (*cutResult, error) {
	comp, nc := Components(g)
	if nc == 1 && g.N < 2 {
		return &cutResult{region: make([]int32, g.N), regions: g.N}, nil
	}
	if nc == 1 {
		c, _, err := kway(ctx, g, area, p)
		return c, err
	}
	size := make([]int, nc)
	for _, c := range comp {
		size[c]++
	}
	big := 0
	for c := range size {
		if size[c] > size[big] {
			big = c
		}
	}
	var nodes []int
	for i, c := range comp {
		if int(c) == big {
			nodes = append(nodes, i)
		}
	}
	res := &cutResult{region: make([]int32, g.N)}
	q := p
	if p.Segments > 0 {
		q.Segments = max(1, p.Segments-(nc-1))
	}
	next := int32(0)
	id := make([]int32, nc)
	for c := range id {
		if c != big {
			id[c] = next
			next++
		}
	}
	if len(nodes) >= 2 && q.Segments != 1 {
		var subArea []int
		if area != nil {
			subArea = make([]int, len(nodes))
			for k, i := range nodes {
				subArea[k] = area[i]
			}
		}
		c, _, err := kway(ctx, g.Subgraph(nodes), subArea, q)
		if err != nil {
			return nil, err
		}
		for k, i := range nodes {
			res.region[i] = next + c.region[k]
		}
		res.eigenvalues, res.short = c.eigenvalues, c.short
		next += int32(c.regions)
	} else {
		for _, i := range nodes {
			res.region[i] = next
		}
		next++
	}
	for i, c := range comp {
		if int(c) != big {
			res.region[i] = id[c]
		}
	}
	res.regions = int(next)
	return res, nil
}

// constant reports whether every feature plane holds a single value.
func constant(planes [][]float32) bool {
	for _, pl := range planes {
		for _, v := range pl {
			if v != pl[0] {
				return false
			}
		}
	}
	return true
}
