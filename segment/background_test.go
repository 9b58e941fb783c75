package segment

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/labelmap"
)

// TestMeshCell: the cell side is meshDiameters diameters (2·4·r), bounded
// by max(w, h)/meshMinCells above and 8 pixels below, and max(w, h)/8
// without an object scale; expected values worked by hand from that rule.
func TestMeshCell(t *testing.T) {
	cases := []struct {
		r    float64
		w, h int
		want int
	}{
		{0, 512, 512, 64},    // no scale: 512/fieldScale
		{0, 300, 120, 38},    // round(300/8 = 37.5)
		{10, 512, 512, 80},   // 8·10
		{12.4, 512, 300, 99}, // round(99.2)
		{100, 512, 512, 128}, // capped at 512/4
		{0.5, 512, 512, 8},   // floored at 8 px
		{3, 20, 20, 8},       // 24 capped at 20/4 = 5, floored at 8
		{3, 6, 6, 6},         // the floor never exceeds the image
	}
	for _, c := range cases {
		if got := meshCell(c.r, c.w, c.h); got != c.want {
			t.Errorf("meshCell(%g, %d, %d) = %d, want %d", c.r, c.w, c.h, got, c.want)
		}
	}
}

// TestClippedMedian: hand-worked κσ clipping. {1, 2, 3, 4, 100}: median
// 3, MAD 1, σ = 1.4826, 3σ = 4.45 drops 100; the median of {1, 2, 3, 4}
// (upper, index 2) is 3 and the next round keeps all four.
func TestClippedMedian(t *testing.T) {
	cases := []struct {
		x    []float64
		want float64
	}{
		{[]float64{1, 2, 3, 4, 100}, 3},
		{[]float64{5, 5, 5, 5}, 5},
		{[]float64{7}, 7},
		{nil, 0},
		// Plain median when nothing lies beyond 3σ.
		{[]float64{1, 2, 3, 4, 5}, 3},
	}
	for _, c := range cases {
		if got := clippedMedian(append([]float64(nil), c.x...)); got != c.want {
			t.Errorf("clippedMedian(%v) = %v, want %v", c.x, got, c.want)
		}
	}
}

// TestMeshBackgroundRamp: on a linear ramp B(x, y) = 0.2 + 0.3 x/w + 0.1
// y/h the median over a cell is B at the cell centre (a linear function
// is symmetric about the centre), the 3x3 median of a linear grid is its
// centre value and bilinear interpolation of a linear function is exact,
// so between the outer cell centres the mesh gives B back (closed form);
// bright discs covering about 3 % of the field and pixel noise move it by
// little (tolerance 2 % of B, a margin over the noise of a clipped
// median over 64² pixels).
func TestMeshBackgroundRamp(t *testing.T) {
	const w, h, cell = 512, 384, 64
	rng := rand.New(rand.NewPCG(4, 2))
	v := make([]float32, w*h)
	bg := make([]float64, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			bg[y*w+x] = 0.2 + 0.3*float64(x)/w + 0.1*float64(y)/h
			v[y*w+x] = float32(bg[y*w+x] * (1 + 0.05*rng.NormFloat64()))
		}
	}
	for k := 0; k < 12; k++ {
		cx, cy := 20+rng.Float64()*(w-40), 20+rng.Float64()*(h-40)
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				if math.Hypot(float64(x)-cx, float64(y)-cy) < 10 {
					v[y*w+x] += 0.5
				}
			}
		}
	}
	got := meshBackground(v, w, h, cell, 2)
	var worst float64
	for y := cell / 2; y < h-cell/2; y++ {
		for x := cell / 2; x < w-cell/2; x++ {
			i := y*w + x
			worst = math.Max(worst, math.Abs(float64(got[i])-bg[i])/bg[i])
		}
	}
	if worst > 0.02 {
		t.Errorf("largest relative error %.4f between the outer cell centres, want <= 0.02", worst)
	}
}

// TestBackgroundSide: scores on the background's side of 0 become 0,
// the rest are kept; without a named background nothing changes (the
// rule as defined, worked by hand).
func TestBackgroundSide(t *testing.T) {
	in := []float64{-0.5, 0, 0.7, -0.7}
	cases := []struct {
		background Background
		want       []float64
	}{
		{"dark", []float64{0, 0, 0.7, 0}},
		{"bright", []float64{-0.5, 0, 0, -0.7}},
		{"", []float64{-0.5, 0, 0.7, -0.7}},
	}
	for _, c := range cases {
		got := append([]float64(nil), in...)
		backgroundSide(got, c.background)
		for r := range got {
			if got[r] != c.want[r] {
				t.Errorf("%q: region %d score %v, want %v", c.background, r, got[r], c.want[r])
			}
		}
	}
}

// hazeRegions is a synthetic hazy field, by construction: region 0 the
// four dark corners (level 0.1), region 1 a bright uneven glow over the
// rest (0.5 to 0.9, rising to the centre), regions 2..5 four small
// discs of radius 6 at 1.3 times the glow under them, with 3 % noise.
func hazeRegions(w, h int) (lum []float32, reg []int32, n int) {
	rng := rand.New(rand.NewPCG(7, 7))
	lum = make([]float32, w*h)
	reg = make([]int32, w*h)
	centres := [][2]float64{{80, 90}, {170, 70}, {120, 160}, {180, 180}}
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			dx, dy := float64(x)-float64(w)/2, float64(y)-float64(h)/2
			d := math.Hypot(dx, dy) / (float64(w) / 2)
			v := 0.1
			if d < 1.15 {
				reg[i] = 1
				v = 0.9 - 0.4*d*d/(1.15*1.15)
			}
			for k, c := range centres {
				if math.Hypot(float64(x)-c[0], float64(y)-c[1]) < 6 {
					reg[i] = int32(2 + k)
					v *= 1.3
				}
			}
			lum[i] = float32(v * (1 + 0.03*rng.NormFloat64()))
		}
	}
	return lum, reg, 2 + len(centres)
}

// TestGroupClassesHaze: on the hazy field the glow is background and
// the four discs are objects (truth by construction). Grouping raw
// brightness first put the glow with the discs and the corners alone in
// the background.
func TestGroupClassesHaze(t *testing.T) {
	const w, h = 256, 256
	lum, reg, n := hazeRegions(w, h)
	for _, radius := range []float64{0, 6} {
		cls, _ := groupClasses([][]float32{lum}, lum, labelmap.Map{Pix: reg, Width: w, Height: h}, n, 2, "dark", func() float64 { return radius }, 1, 2)
		want := []int32{0, 0, 1, 1, 1, 1}
		for r := range want {
			if cls[r] != want[r] {
				t.Errorf("radius %g: region %d class %d, want %d (classes %v)", radius, r, cls[r], want[r], cls)
				break
			}
		}
	}
}

// TestObjectRadius: no scale when not found or weak and small (the
// warning in affinity.ObjectScale's documentation), else the radius.
func TestObjectRadius(t *testing.T) {
	cases := []struct {
		sc   affinity.ScaleEstimate
		want float64
	}{
		{affinity.ScaleEstimate{Found: false, Radius: 9}, 0},
		{affinity.ScaleEstimate{Found: true, Radius: 2.1, Strength: 12}, 0},
		{affinity.ScaleEstimate{Found: true, Radius: 2.1, Strength: 40}, 2.1},
		{affinity.ScaleEstimate{Found: true, Radius: 11, Strength: 12}, 11},
	}
	for _, c := range cases {
		if got := ObjectRadius(c.sc); got != c.want {
			t.Errorf("ObjectRadius(%+v) = %v, want %v", c.sc, got, c.want)
		}
	}
}

// interpolateGrid, which interpolates horizontally once per pair of grid
// rows, equals the bilinear formula evaluated pixel by pixel bit for bit
// (cells of 1, 5 and 64 pixels, sizes not multiples of the cell, 1 and
// 3 workers).
func TestInterpolateGridPerPixel(t *testing.T) {
	rng := rand.New(rand.NewPCG(13140, 1))
	for _, c := range []struct{ w, h, cell int }{{7, 5, 1}, {23, 41, 5}, {130, 200, 64}, {300, 70, 64}} {
		gw, gh := (c.w+c.cell-1)/c.cell, (c.h+c.cell-1)/c.cell
		grid := make([]float64, gw*gh)
		for i := range grid {
			grid[i] = rng.Float64()
		}
		for _, workers := range []int{1, 3} {
			got := interpolateGrid(grid, gw, gh, c.cell, c.w, c.h, workers)
			for y := 0; y < c.h; y++ {
				fy := (float64(y)+0.5)/float64(c.cell) - 0.5
				y0 := int(math.Floor(fy))
				ty := fy - float64(y0)
				y0c, y1c := min(max(y0, 0), gh-1), min(max(y0+1, 0), gh-1)
				for x := 0; x < c.w; x++ {
					fx := (float64(x)+0.5)/float64(c.cell) - 0.5
					x0 := int(math.Floor(fx))
					tx := fx - float64(x0)
					x0c, x1c := min(max(x0, 0), gw-1), min(max(x0+1, 0), gw-1)
					top := grid[y0c*gw+x0c]*(1-tx) + grid[y0c*gw+x1c]*tx
					bot := grid[y1c*gw+x0c]*(1-tx) + grid[y1c*gw+x1c]*tx
					if want := float32(top*(1-ty) + bot*ty); got[y*c.w+x] != want {
						t.Fatalf("%dx%d, cell %d, %d workers: pixel (%d, %d) %v, bilinear %v", c.w, c.h, c.cell, workers, x, y, got[y*c.w+x], want)
					}
				}
			}
		}
	}
}
