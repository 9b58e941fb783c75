package segment

import (
	"fmt"
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/labelmap"
)

// benchField returns a w x h luminance plane (a ramp with noise and a
// grid of bright squares) and the mask of its background pixels.
func benchField(w, h int) ([]float32, []bool) {
	rng := rand.New(rand.NewPCG(11200, 1))
	lum := make([]float32, w*h)
	mask := make([]bool, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			v := 0.1 + 0.2*float64(x)/float64(w) + 0.01*rng.NormFloat64()
			if x%40 < 16 && y%40 < 16 {
				v += 0.5
			} else {
				mask[i] = true
			}
			lum[i] = float32(v)
		}
	}
	return lum, mask
}

// BenchmarkSmoothField is the background field of the class stage
// (normalized convolution on the coarse grid, interpolated to every
// pixel) on 1, 4 and 16 megapixels, all cores; cpu-s/op is the process's
// CPU time per call.
func BenchmarkSmoothField(b *testing.B) {
	for _, n := range []int{1024, 2048, 4096} {
		b.Run(fmt.Sprintf("%dx%d", n, n), func(b *testing.B) {
			lum, mask := benchField(n, n)
			c0 := cpuSeconds()
			for b.Loop() {
				smoothField(lum, mask, n, n, float64(n)/fieldScale, 0)
			}
			b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
		})
	}
}

// BenchmarkMeshBackground is the local background mesh (clipped cell
// medians, interpolated) for objects of radius 12 px on 1, 4 and 16
// megapixels, all cores.
func BenchmarkMeshBackground(b *testing.B) {
	for _, n := range []int{1024, 2048, 4096} {
		b.Run(fmt.Sprintf("%dx%d", n, n), func(b *testing.B) {
			lum, _ := benchField(n, n)
			for b.Loop() {
				meshBackground(lum, n, n, meshCell(12, n, n), 0)
			}
		})
	}
}

// BenchmarkContrastMap is the contrast on a dark background over 1, 4
// and 16 megapixels, all cores, read from the field's grid and written
// into the previous map as the class stage does (contrastOfGrid).
func BenchmarkContrastMap(b *testing.B) {
	for _, n := range []int{1024, 2048, 4096} {
		b.Run(fmt.Sprintf("%dx%d", n, n), func(b *testing.B) {
			lum, mask := benchField(n, n)
			g := smoothFieldGrid(lum, mask, n, n, float64(n)/fieldScale, 0)
			con := contrastOfGrid(nil, lum, g, BackgroundDark, 0)
			for b.Loop() {
				con = contrastOfGrid(con, lum, g, BackgroundDark, 0)
			}
		})
	}
}

// benchRegions returns benchField's regions at w x h: the background
// region 0 and each bright square a region of its own, the squares of
// class 1 and the background of class 0.
func benchRegions(w, h int, mask []bool) ([]int32, []int32) {
	reg := make([]int32, w*h)
	per := (w + 39) / 40
	for i := range reg {
		if !mask[i] {
			reg[i] = int32(1 + (i/w/40)*per + i%w/40)
		}
	}
	cls := make([]int32, 1+per*((h+39)/40))
	for r := 1; r < len(cls); r++ {
		cls[r] = 1
	}
	return reg, cls
}

// BenchmarkBackgroundRound is one round of the class stage's background
// field and contrast map on benchField's regions at 1, 4 and 16
// megapixels, all cores: "plane" is the former round (maskOfClass into a
// mask plane, smoothFieldGrid over it, the field plane, contrastMapInto),
// "grid" the round Run makes now (smoothFieldGridOfClass from the region
// map, contrastOfGrid from the grid); both give the same map
// (TestContrastOfGridMatchesPlane). cpu-s/op is the process's CPU time
// per round.
func BenchmarkBackgroundRound(b *testing.B) {
	for _, n := range []int{1024, 2048, 4096} {
		lum, mask0 := benchField(n, n)
		reg, cls := benchRegions(n, n, mask0)
		sigma := float64(n) / fieldScale
		b.Run(fmt.Sprintf("plane/%dx%d", n, n), func(b *testing.B) {
			mask := make([]bool, n*n)
			var field []float32
			var con []float64
			c0 := cpuSeconds()
			for b.Loop() {
				maskOfClass(mask, reg, cls, 0, 0)
				field = smoothFieldGrid(lum, mask, n, n, sigma, 0).plane(field, 0)
				con = contrastMapInto(con, lum, field, BackgroundDark, 0)
			}
			b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
		})
		b.Run(fmt.Sprintf("grid/%dx%d", n, n), func(b *testing.B) {
			var con []float64
			c0 := cpuSeconds()
			for b.Loop() {
				g := smoothFieldGridOfClass(lum, reg, cls, 0, n, n, sigma, 0)
				con = contrastOfGrid(con, lum, g, BackgroundDark, 0)
			}
			b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
		})
	}
}

// BenchmarkObjectPasses is the whole-image passes of the object stages
// on benchField's grid of squares (each square a region and an object;
// the contrast |I/B - 1| against the background field): objectsFrom
// (seams, components), tightenObjects (smoothing, levels, hole filling,
// components) and joinTouching, on 1, 4 and 16 megapixels, all cores;
// cpu-s/op is the process's CPU time per run of the three.
func BenchmarkObjectPasses(b *testing.B) {
	for _, n := range []int{1024, 2048, 4096} {
		b.Run(fmt.Sprintf("%dx%d", n, n), func(b *testing.B) {
			lum, mask := benchField(n, n)
			field := smoothField(lum, mask, n, n, float64(n)/fieldScale, 0)
			con := contrastMap(lum, field, BackgroundDark, 0)
			// Regions: the background is region 0, each square one more.
			reg := make([]int32, n*n)
			per := (n + 39) / 40
			for i := range reg {
				x, y := i%n, i/n
				if !mask[i] {
					reg[i] = int32(1 + (y/40)*per + x/40)
				}
			}
			nreg := 1 + per*per
			cls := make([]int32, nreg)
			for r := 1; r < nreg; r++ {
				cls[r] = 1
			}
			regions := labelmap.Map{Pix: reg, Width: n, Height: n}
			c0 := cpuSeconds()
			for b.Loop() {
				obj, nobj := objectsFrom(con, regions, nreg, cls, 0, 20, 0)
				obj, nobj = tightenObjects(con, labelmap.Map{Pix: obj, Width: n, Height: n}, nobj, 20, 0)
				joinTouching(con, labelmap.Map{Pix: obj, Width: n, Height: n}, nobj, 0)
			}
			b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
		})
	}
}

// BenchmarkEdgeFloor is the floor of the fine edge energy (edgeRatio
// times its median) on the energy of benchField's plane at 1, 4 and 16
// megapixels: "select" is edgeFloor (medianFloat32's histograms, all
// cores), "copy" the former selection (kthSmallest on a copy, one core),
// which gives the same value. cpu-s/op is the process's CPU time per
// call; B/op shows the copy.
func BenchmarkEdgeFloor(b *testing.B) {
	for _, n := range []int{1024, 2048, 4096} {
		lum, _ := benchField(n, n)
		energy := affinity.EdgeEnergy(lum, n, n, affinity.ContourScale, 0)
		for _, how := range []string{"select", "copy"} {
			b.Run(fmt.Sprintf("%dx%d/%s", n, n, how), func(b *testing.B) {
				b.ReportAllocs()
				c0 := cpuSeconds()
				for b.Loop() {
					if how == "select" {
						edgeFloor(energy, 0)
					} else {
						_ = edgeRatio * float64(kthSmallest(slices.Clone(energy), len(energy)/2))
					}
				}
				b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
			})
		}
	}
}

// BenchmarkComponentsOfGroups is the labelling of 4-connected pieces
// (componentsOfGroups) on benchField's grid of squares (each square its
// own group, the rest background) at 1, 4 and 16 megapixels, on one
// worker and on all cores; cpu-s/op is the process's CPU time per call.
func BenchmarkComponentsOfGroups(b *testing.B) {
	for _, n := range []int{1024, 2048, 4096} {
		_, mask := benchField(n, n)
		group := make([]int32, n*n)
		for i, bg := range mask {
			group[i] = -1
			if !bg {
				group[i] = int32(i/n/40*1000 + i%n/40)
			}
		}
		for _, workers := range []int{1, 0} {
			b.Run(fmt.Sprintf("%dx%d/workers=%d", n, n, workers), func(b *testing.B) {
				c0 := cpuSeconds()
				for b.Loop() {
					componentsOfGroups(group, n, n, 20, workers)
				}
				b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
			})
		}
	}
}

// BenchmarkGroupClasses is the class grouping of the class stage
// (groupClasses, two classes on a dark background: the region sums of
// I/B and a field estimate per round) on benchField's plane cut into
// regions of 40 x 40 pixels (about the size of the cut's regions on a
// generated 4 MP nuclei frame: 3,009 regions), at 4 and 16 megapixels,
// all cores; cpu-s/op is the process's CPU time per call.
func BenchmarkGroupClasses(b *testing.B) {
	for _, n := range []int{2048, 4096} {
		b.Run(fmt.Sprintf("%dx%d", n, n), func(b *testing.B) {
			lum, _ := benchField(n, n)
			per := (n + 39) / 40
			reg := make([]int32, n*n)
			for i := range reg {
				reg[i] = int32((i/n/40)*per + i%n/40)
			}
			regions := labelmap.Map{Pix: reg, Width: n, Height: n}
			radius := func() float64 { return 8 }
			c0 := cpuSeconds()
			for b.Loop() {
				groupClasses([][]float32{lum}, lum, regions, per*per, 2, BackgroundDark, radius, 1, 0)
			}
			b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
		})
	}
}

// BenchmarkEdgeless is the edge test of every object (edgeless) on
// benchField's squares, each an object, with the fine and coarse edge
// energies of the plane and its contrast against the background field,
// on 1, 4 and 16 megapixels; cpu-s/op is the process's CPU time per call
// (one goroutine: edgeless is a single pass), -benchmem its allocations
// (before the outline's verdict was asked first, every object's pixel
// contrasts were gathered).
func BenchmarkEdgeless(b *testing.B) {
	for _, n := range []int{1024, 2048, 4096} {
		b.Run(fmt.Sprintf("%dx%d", n, n), func(b *testing.B) {
			lum, mask := benchField(n, n)
			field := smoothField(lum, mask, n, n, float64(n)/fieldScale, 0)
			labels := make([]int32, n*n)
			per := (n + 39) / 40
			for i := range labels {
				if !mask[i] {
					labels[i] = int32(1 + (i/n/40)*per + i%n/40)
				}
			}
			nobj := per * ((n + 39) / 40)
			fine := affinity.EdgeEnergy(lum, n, n, affinity.ContourScale, 0)
			coarse, coarseW := coarseEnergyBlocks(lum, n, n, 0)
			test := &edgeTest{w: n, h: n, fine: fine, floor: edgeFloor(fine, 0), coarse: coarse, coarseW: coarseW, con: contrastMap(lum, field, BackgroundDark, 0), source: sourceContrast("dark")}
			objects := labelmap.Map{Pix: labels, Width: n, Height: n}
			c0 := cpuSeconds()
			for b.Loop() {
				edgeless(objects, nobj, test)
			}
			b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
		})
	}
}
