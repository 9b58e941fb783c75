package measure

import (
	"math"
	"testing"
)

// TestMinMaxNumberAreMathMinMax checks minNumber, maxNumber and finite
// against the standard library (math.Min, math.Max, math.IsNaN and
// math.IsInf) on every pair of a set of values where they could part:
// signed zeros, infinities, the extremes and ordinary numbers.
func TestMinMaxNumberAreMathMinMax(t *testing.T) {
	negZero := math.Copysign(0, -1)
	vals := []float64{0, negZero, 1, -1, 2.5, -2.5, math.MaxFloat64, -math.MaxFloat64,
		math.SmallestNonzeroFloat64, -math.SmallestNonzeroFloat64, math.Inf(1), math.Inf(-1)}
	for _, a := range vals {
		for _, b := range vals {
			if got, want := minNumber(a, b), math.Min(a, b); math.Float64bits(got) != math.Float64bits(want) {
				t.Errorf("minNumber(%v, %v) = %v, math.Min gives %v", a, b, got, want)
			}
			if got, want := maxNumber(a, b), math.Max(a, b); math.Float64bits(got) != math.Float64bits(want) {
				t.Errorf("maxNumber(%v, %v) = %v, math.Max gives %v", a, b, got, want)
			}
		}
	}
	for _, v := range append(vals, math.NaN()) {
		if got, want := finite(v), !math.IsNaN(v) && !math.IsInf(v, 0); got != want {
			t.Errorf("finite(%v) = %v, want %v", v, got, want)
		}
	}
}

// TestAddRunIsPixelByPixel checks Stats.addRun against adding the same
// values one by one as Regions did before (math.Min, math.Max, NaN and
// infinities skipped), bit for bit.
func TestAddRunIsPixelByPixel(t *testing.T) {
	nan, inf := float32(math.NaN()), float32(math.Inf(1))
	negZero := float32(math.Copysign(0, -1))
	runs := [][]float32{{}, {nan}, {0, negZero}, {negZero, 0, -3, 1e-30, inf, 7, -inf, 0.1, 0.2, 0.3}, {3, 1e8, 1e-8, -1e8, nan, 5}}
	for _, run := range runs {
		want := Stats{Min: math.Inf(1), Max: math.Inf(-1)}
		for _, f := range run {
			v := float64(f)
			if math.IsNaN(v) || math.IsInf(v, 0) {
				continue
			}
			want.Count++
			want.Sum += v
			want.Min, want.Max = math.Min(want.Min, v), math.Max(want.Max, v)
		}
		got := Stats{Min: math.Inf(1), Max: math.Inf(-1)}
		got.addRun(run[:len(run)/2])
		got.addRun(run[len(run)/2:])
		if got.Count != want.Count || math.Float64bits(got.Sum) != math.Float64bits(want.Sum) ||
			math.Float64bits(got.Min) != math.Float64bits(want.Min) || math.Float64bits(got.Max) != math.Float64bits(want.Max) {
			t.Errorf("run %v: addRun gives %+v, one by one %+v", run, got, want)
		}
	}
}
