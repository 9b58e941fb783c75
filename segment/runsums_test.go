package segment

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// runLabels returns a label map of n pixels in runs of random length
// (1 to maxRun) over labels 0..k-1, as a region map has them.
func runLabels(rng *rand.Rand, n, k, maxRun int) []int32 {
	out := make([]int32, 0, n)
	for len(out) < n {
		l := int32(rng.IntN(k))
		for range min(1+rng.IntN(maxRun), n-len(out)) {
			out = append(out, l)
		}
	}
	return out
}

// sameBits reports whether a and b hold the same float64 bit patterns,
// any NaN matching any NaN.
func sameBits(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.IsNaN(a[i]) && math.IsNaN(b[i]) {
			continue
		}
		if math.Float64bits(a[i]) != math.Float64bits(b[i]) {
			return false
		}
	}
	return true
}

// TestRunSumsMatchPixelLoop checks the run-wise sums against the
// pixel-by-pixel loops they replace, bit for bit: random label maps
// with runs of 1 to 40 pixels, values of mixed magnitude (so that the
// order of the additions shows in the rounding), fields with values
// below the floor, zeros, NaN and infinities.
func TestRunSumsMatchPixelLoop(t *testing.T) {
	rng := rand.New(rand.NewPCG(15030, 1))
	for _, tc := range []struct{ n, k, maxRun int }{{1, 1, 1}, {17, 3, 1}, {1000, 7, 40}, {50000, 300, 25}} {
		labels := runLabels(rng, tc.n, tc.k, tc.maxRun)
		lum := make([]float32, tc.n)
		field := make([]float32, tc.n)
		con := make([]float64, tc.n)
		for i := range lum {
			lum[i] = float32(rng.Float64() * math.Pow(10, float64(rng.IntN(7)-3)))
			con[i] = rng.NormFloat64() * math.Pow(10, float64(rng.IntN(9)-4))
			switch rng.IntN(12) {
			case 2, 3:
				if rng.IntN(2000) == 0 { // rare: one poisons its label's sum
					field[i] = float32(math.NaN())
					if rng.IntN(2) == 0 {
						field[i] = float32(math.Inf(1 - 2*rng.IntN(2)))
					}
					break
				}
				field[i] = 1
			case 0:
				field[i] = 0
			case 1:
				field[i] = float32(rng.Float64() * fieldFloor)
			default:
				field[i] = float32(rng.Float64() * 3)
			}
		}
		// The former loops.
		wantArea := make([]float64, tc.k)
		wantLum := make([]float64, tc.k)
		wantCon := make([]float64, tc.k)
		wantRatio := make([]float64, tc.k)
		for i, l := range labels {
			wantArea[l]++
			wantLum[l] += float64(lum[i])
			wantCon[l] += con[i]
		}
		pixelRatioSums(labels, lum, field, wantRatio)
		area := make([]float64, tc.k)
		countLabels(labels, area)
		counts, wantCounts := make([]int, tc.k), make([]int, tc.k)
		countLabels(labels, counts)
		for _, l := range labels {
			wantCounts[l]++
		}
		if !slices.Equal(counts, wantCounts) {
			t.Errorf("n=%d k=%d: countLabels on ints %v, want %v", tc.n, tc.k, counts, wantCounts)
		}
		sumLum := make([]float64, tc.k)
		sumLabels(labels, lum, sumLum, nil)
		sumCon, area2 := make([]float64, tc.k), make([]float64, tc.k)
		sumLabels(labels, con, sumCon, area2)
		ratio := make([]float64, tc.k)
		sumRatioLabels(labels, lum, field, ratio)
		for _, c := range []struct {
			name      string
			got, want []float64
		}{{"countLabels", area, wantArea}, {"sumLabels float32", sumLum, wantLum}, {"sumLabels float64", sumCon, wantCon},
			{"sumLabels area", area2, wantArea}, {"sumRatioLabels", ratio, wantRatio}} {
			if !sameBits(c.got, c.want) {
				t.Errorf("n=%d k=%d: %s differs from the pixel loop:\n got  %v\n want %v", tc.n, tc.k, c.name, c.got, c.want)
			}
		}
	}
}

// TestFloorFieldIsMax checks floorField against math.Max(f, fieldFloor)
// on the values where the two could part: NaN, infinities, signed zeros,
// the floor itself and its neighbours.
func TestFloorFieldIsMax(t *testing.T) {
	for _, f := range []float64{math.NaN(), math.Inf(1), math.Inf(-1), 0, math.Copysign(0, -1), fieldFloor,
		math.Nextafter(fieldFloor, 0), math.Nextafter(fieldFloor, 1), -1, 1e-300, 7} {
		got, want := floorField(f), math.Max(f, fieldFloor)
		if math.Float64bits(got) != math.Float64bits(want) && !(math.IsNaN(got) && math.IsNaN(want)) {
			t.Errorf("floorField(%v) = %v, math.Max gives %v", f, got, want)
		}
	}
}

// TestBackgroundRatio checks backgroundRatio against its two closed
// forms: x / f bit for bit at and above the floor (and for NaN and
// infinite fields), 1 + (x - f) / fieldFloor below it; a background
// pixel (x = f) has ratio 1 at any field, however dark; and the two
// forms meet at the floor (x/floor = 1 + (x - floor)/floor, to rounding).
func TestBackgroundRatio(t *testing.T) {
	xs := []float64{0, 0.001, 0.02, 0.05, 0.3, 1}
	for _, f := range []float64{math.NaN(), math.Inf(1), fieldFloor, math.Nextafter(fieldFloor, 1), 0.2, 7} {
		for _, x := range xs {
			got, want := backgroundRatio(x, f), x/f
			if math.Float64bits(got) != math.Float64bits(want) && !(math.IsNaN(got) && math.IsNaN(want)) {
				t.Errorf("backgroundRatio(%v, %v) = %v, want x/f = %v", x, f, got, want)
			}
		}
	}
	for _, f := range []float64{0, math.Copysign(0, -1), 1e-300, 0.005, math.Nextafter(fieldFloor, 0)} {
		for _, x := range xs {
			if got, want := backgroundRatio(x, f), 1+(x-f)/fieldFloor; got != want {
				t.Errorf("backgroundRatio(%v, %v) = %v, want 1 + (x-f)/floor = %v", x, f, got, want)
			}
		}
		if got := backgroundRatio(f, f); got != 1 {
			t.Errorf("backgroundRatio(f, f) at f = %v is %v, want 1 (a background pixel)", f, got)
		}
	}
	below, at := backgroundRatio(0.3, math.Nextafter(fieldFloor, 0)), backgroundRatio(0.3, fieldFloor)
	if math.Abs(below-at) > 1e-12 {
		t.Errorf("backgroundRatio jumps at the floor: %v below, %v at", below, at)
	}
	// A dark field (B = 0.005, the offset taken off by the percentile
	// normalization): its background pixels, B plus or minus noise of
	// 0.002, must lie nearer ratio 1 than a dim object at 0.045.
	bg := max(math.Abs(backgroundRatio(0.007, 0.005)-1), math.Abs(backgroundRatio(0.003, 0.005)-1))
	dim := math.Abs(backgroundRatio(0.045, 0.005) - 1)
	if !(dim > 10*bg) {
		t.Errorf("dark field: background contrast %v, dim object %v: the object should stand ten times clear", bg, dim)
	}
}

// pixelRatioSums is the loop sumRatioLabels replaced, pixel by pixel.
func pixelRatioSums(labels []int32, lum, field []float32, sum []float64) {
	for i, l := range labels {
		sum[l] += float64(lum[i]) / math.Max(float64(field[i]), fieldFloor)
	}
}

// BenchmarkRegionSums is one pass of the class stage's region sums of
// I/B (sumRatioLabels; groupClasses makes one a round) on a map of
// 12 x 12 pixel regions (runs of 12 pixels, about those of superpixels
// of 130-150 px) at 4 and 16 megapixels: "runs" the run-wise sums,
// "pixels" the former pixel-by-pixel loop, which gives the same sums.
func BenchmarkRegionSums(b *testing.B) {
	for _, n := range []int{2048, 4096} {
		lum, mask := benchField(n, n)
		field := smoothField(lum, mask, n, n, float64(n)/fieldScale, 0)
		per := (n + 11) / 12
		labels := make([]int32, n*n)
		for i := range labels {
			labels[i] = int32((i/n/12)*per + i%n/12)
		}
		sum := make([]float64, per*per)
		for _, c := range []struct {
			name string
			fn   func([]int32, []float32, []float32, []float64)
		}{{"runs", sumRatioLabels}, {"pixels", pixelRatioSums}} {
			b.Run(fmt.Sprintf("%s/%dx%d", c.name, n, n), func(b *testing.B) {
				for b.Loop() {
					clear(sum)
					c.fn(labels, lum, field, sum)
				}
			})
		}
	}
}

// TestRelabelRuns checks relabel, which renumbers run by run, against
// renumbering pixel by pixel in raster order of first appearance.
func TestRelabelRuns(t *testing.T) {
	rng := rand.New(rand.NewPCG(15031, 1))
	for _, k := range []int{1, 5, 200} {
		lab := runLabels(rng, 20000, k, 30)
		want := slices.Clone(lab)
		id := make([]int32, k)
		for i := range id {
			id[i] = -1
		}
		next := int32(0)
		for i, l := range want {
			if id[l] < 0 {
				id[l] = next
				next++
			}
			want[i] = id[l]
		}
		if n := relabel(lab, k); n != int(next) || !slices.Equal(lab, want) {
			t.Errorf("k=%d: relabel gives %d labels, want %d; maps equal: %v", k, n, next, slices.Equal(lab, want))
		}
	}
}

// TestStatsOfAnyWorkers checks statsOf, whose count and plane sums run
// side by side, against the pixel-by-pixel loop in raster order (count,
// sum, then sum / count) bit for bit, for 1 to 4 workers and two planes.
func TestStatsOfAnyWorkers(t *testing.T) {
	rng := rand.New(rand.NewPCG(15120, 1))
	const n, k = 30000, 40
	labels := runLabels(rng, n, k, 25)
	planes := [][]float32{make([]float32, n), make([]float32, n)}
	for _, pl := range planes {
		for i := range pl {
			pl[i] = float32(rng.Float64())
		}
	}
	area := make([]float64, k)
	for _, l := range labels {
		area[l]++
	}
	want := make([][]float64, len(planes))
	for c, pl := range planes {
		want[c] = make([]float64, k)
		for i, l := range labels {
			want[c][l] += float64(pl[i])
		}
		for r := range want[c] {
			if area[r] > 0 {
				want[c][r] /= area[r]
			}
		}
	}
	for workers := 1; workers <= 4; workers++ {
		st := statsOf(planes, labels, k, workers)
		if !sameBits(st.area, area) {
			t.Errorf("workers=%d: areas %v, want %v", workers, st.area, area)
		}
		for c := range planes {
			if !sameBits(st.mean[c], want[c]) {
				t.Errorf("workers=%d plane %d: means %v, want %v", workers, c, st.mean[c], want[c])
			}
		}
	}
}

// BenchmarkStatsOf is the region statistics of the class stage (pixel
// count and mean luminance per region, statsOf) on a map of 12 x 12
// pixel regions at 4 and 16 megapixels, on one worker and on all cores
// (the count and the sums side by side; the same totals).
func BenchmarkStatsOf(b *testing.B) {
	for _, n := range []int{2048, 4096} {
		lum, _ := benchField(n, n)
		per := (n + 11) / 12
		labels := make([]int32, n*n)
		for i := range labels {
			labels[i] = int32((i/n/12)*per + i%n/12)
		}
		for _, workers := range []int{1, 0} {
			b.Run(fmt.Sprintf("workers%d/%dx%d", workers, n, n), func(b *testing.B) {
				c0 := cpuSeconds()
				for b.Loop() {
					statsOf([][]float32{lum}, labels, per*per, workers)
				}
				b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
			})
		}
	}
}
