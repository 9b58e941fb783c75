package segment

import (
	"fmt"
	"math"

	"github.com/cleave-seg/cleave/affinity"
)

// StageBytes is the estimated peak memory of one stage of Run.
type StageBytes struct {
	Name  string // "graph", "cuts" or "objects"
	Bytes int64
}

// Per-pixel working memory of the stages whose arrays are image-sized,
// in bytes per pixel. They count the float32 and int32 planes each stage
// allocates (4 bytes per pixel each) with the planes still alive from
// the stages before it, rounded up so that the whole estimate stays
// above the peak resident memory measured with /usr/bin/time on the
// generated nuclei scenes of 1024 x 1024 and 2048 x 2048 pixels
// (testdata/hostile/peak_rss.sh prints both).
const (
	// scaleBytesPerPixel: the object-scale estimate of the automatic
	// superpixel count (two work planes and three responses, 20 bytes,
	// on the full-size level of its pyramid).
	scaleBytesPerPixel = 24
	// contourBytesPerPixel: the edge energy (4 bytes) and the Gaussian
	// derivative planes it is computed from.
	contourBytesPerPixel = 28
	// grainBytesPerPixel: the gradient planes of the grain estimate and
	// the corrected luminance and planes.
	grainBytesPerPixel = 24
	// regionBytesPerPixel: the region maps of the cut (region, cleaned
	// regions, labels: 12 bytes) and the merge of small regions.
	regionBytesPerPixel = 24
	// objectBytesPerPixel: classes, the background field and its
	// smoothing, the contrast map, object maps, distance maps of the
	// re-cuts and edge energy, alive together in the objects stage.
	objectBytesPerPixel = 96
)

// stencilLevelBytes is, per node, what the eigensolver keeps besides the
// graph and its blocks when it works on the pixel graph in stencil form
// (the k-way cut): the input level's arrays (degree, diagonal, D^-1/2,
// z0 and the interpolation weights, 8 bytes each, the aggregate and
// member lists, 4 each, the row lengths while the level is built, 8:
// 64 bytes) and the coarse levels in compressed rows, summed per input
// node: on the coins photograph enlarged to 1,050,624 nodes the first
// coarse level had 262,694 nodes and 9.0 M entries (8 bytes each, about
// 85 bytes an input node with its arrays), the deeper ones a quarter of
// that each (113 bytes in all), rounded up. No copy of the input graph
// is made (segment/eigen, SmallestStencil).
const stencilLevelBytes = 192

// eigenBlocks is the number of n x m float64 blocks a LOBPCG solve holds
// at once (X, AX, R, W, AW, P, AP, their next values and scratch;
// segment/eigen/lobpcg.go), counted with room for the pool's spares.
const eigenBlocks = 16

// precond32Bytes is, per node and block column, the float32 scratch of
// the single-precision preconditioner (eigen.Options.SinglePrecond,
// which the k-way cut of the pixel graph asks): 4 bytes a value on the
// input level and, as each coarse level's solve holds its own, about a
// third more on the coarse levels (levels four times smaller), rounded
// up.
const precond32Bytes = 6

// EstimateStages returns the estimated peak memory, in bytes, that Run
// allocates in each of its stages for a w x h input with the given
// number of feature planes: the graph (pixel graph, or the object-scale
// estimate, SLIC, the contour cue and the region graph), the cuts (the
// graph, the eigensolver's levels and blocks, the region maps) and, with
// Classes and Background set, the objects. Each stage counts the arrays
// of earlier stages still alive then (the smoothed copy of the planes
// too, when smoothing is asked for or left to the image); the caller's
// input planes are not included. An automatic superpixel count is taken at its largest
// possible value. Nonsensical sizes give nil; sums too large for int64
// saturate at math.MaxInt64.
func EstimateStages(w, h, planes int, p Params) []StageBytes {
	if w < 1 || h < 1 || planes < 1 {
		return nil
	}
	npix := float64(w) * float64(h)
	P := float64(planes)
	sp := p.Superpixels
	scale := 0.0
	if sp < 0 {
		n := w * h
		sp = min(max(n/PixelsPerSuperpixel, MinAutoSuperpixels), MaxAutoSuperpixels)
		if n > PixelGraphMaxPixels {
			sp = max(sp, min(n/MinPixelsPerScaledSuperpixel, MaxScaledSuperpixels))
			scale = scaleBytesPerPixel * npix
		} else {
			sp = 0
		}
	}
	if float64(sp) >= npix {
		sp = 0
	}
	before := 0.0 // alive from earlier stages
	if p.Grain {
		before += grainBytesPerPixel * npix
	}
	if p.AutoSmooth || p.Smooth > 0 {
		// The smoothed planes and luminance (smoothInput), counted
		// whether or not the image turns out to need them.
		before += 4 * (P + 1) * npix
	}
	var graph, csr, nodes float64
	// The k-way cut of the pixel graph builds it in stencil form
	// (affinity.PixelStencilGraph, half the bytes of compressed rows at
	// r = 5) and solves on it without a copy.
	stencil := sp == 0 && p.Method == MethodKway
	if stencil {
		csr = float64(affinity.EstimateStencilGraphBytes(w, h, p.Radius))
		nodes = npix
		graph = before + csr
	} else if sp == 0 {
		csr = float64(affinity.EstimatePixelGraphBytes(w, h, p.Radius))
		nodes = npix
		graph = before + csr
	} else {
		nodes = float64(sp)
		// A superpixel touches about six others; a region graph entry
		// takes 8 bytes and each node's summaries a few hundred.
		csr = nodes * (6*8 + 16 + 8*(P+3) + 256)
		slic := float64(affinity.EstimateSLICBytes(w, h, planes))
		work := max(scale, slic)
		if p.Contour {
			work = max(work, slic+contourBytesPerPixel*npix)
		}
		graph = before + 4*npix + work + csr // 4: the pixel-to-node map
		before += 4 * npix
		if p.Contour {
			before += 4 * npix // the edge energy stays for the objects
		}
	}
	// Cuts: the graph, the solver's copy of it (level 0) and its coarser
	// levels (together about as large again), per-node level arrays,
	// a subgraph of a part, and the LOBPCG blocks of the widest solve;
	// in stencil form the graph, the levels of stencilLevelBytes and the
	// blocks. The k-way solve asks for Segments pairs, or MaxSegments+1
	// when the count is chosen from the eigengap (kwayWith).
	k := topEigenpairs
	if p.Method == MethodKway {
		k = p.Segments
		if k == 0 {
			k = p.MaxSegments + 1
		}
	}
	want := k - 1
	m := float64(want+max(1, (want+1)/6)) + 1 // the block (eigen's blockSize) and z0
	cuts := before + 4*csr + nodes*80 + eigenBlocks*8*m*nodes + regionBytesPerPixel*npix
	if stencil {
		cuts = before + csr + nodes*stencilLevelBytes + (eigenBlocks*8+precond32Bytes)*m*nodes + regionBytesPerPixel*npix
	}
	est := []StageBytes{{"graph", sat(graph)}, {"cuts", sat(cuts)}}
	if p.Classes >= 2 || p.Background == BackgroundLines {
		obj := before + csr + regionBytesPerPixel*npix + objectBytesPerPixel*npix
		est = append(est, StageBytes{"objects", sat(obj)})
	}
	return est
}

// sat converts a byte count to int64, saturating.
func sat(x float64) int64 {
	if !(x < math.MaxInt64) {
		return math.MaxInt64
	}
	return int64(math.Ceil(x))
}

// checkMemory refuses, before the graph is built, a run with a stage
// estimated above p.MaxMemory (0: no limit), naming the stage and what
// to change.
func checkMemory(w, h, planes int, p Params) error {
	if p.MaxMemory <= 0 {
		return nil
	}
	for _, st := range EstimateStages(w, h, planes, p) {
		if st.Bytes <= p.MaxMemory {
			continue
		}
		hint := "lower radius, or use superpixels (superpixels N)"
		switch {
		case st.Name == "objects":
			hint = "downsample the image"
		case p.Superpixels != 0:
			hint = "lower superpixels, or downsample the image"
		}
		return fmt.Errorf("%w: the %s stage needs about %s, above max-memory %s; %s, or raise max-memory",
			ErrMemory, st.Name, FormatBytes(st.Bytes), FormatBytes(p.MaxMemory), hint)
	}
	return nil
}

// FormatBytes writes a byte count in binary units (KiB, MiB, GiB) with
// three significant figures, as the memory messages do.
func FormatBytes(b int64) string {
	x := float64(b)
	for _, u := range []string{"B", "KiB", "MiB", "GiB", "TiB"} {
		if x < 1024 || u == "TiB" {
			if u == "B" {
				return fmt.Sprintf("%d B", b)
			}
			return fmt.Sprintf("%.3g %s", x, u)
		}
		x /= 1024
	}
	return ""
}
