package pipeline

import (
	"math"
	"testing"
)

// TestPackedPlane checks that unpacking gives the packed plane bit for
// bit, and that a plane is packed to 16 bits exactly when every value is
// a whole number in 0..65535 with the bits of its uint16 conversion
// (IEEE 754 binary32 holds every integer up to 2^24 exactly; -0 has the
// sign bit set, so it is not the 0 a uint16 gives back).
func TestPackedPlane(t *testing.T) {
	negZero := float32(math.Copysign(0, -1))
	big := make([]float32, 3*packBlock+17) // several blocks, on two workers
	for i := range big {
		big[i] = float32(i % 65536)
	}
	bigBad := append([]float32(nil), big...)
	bigBad[2*packBlock+5] = 0.5
	cases := []struct {
		name   string
		plane  []float32
		packed bool
	}{
		{"empty", nil, false},
		{"16-bit values", []float32{0, 1, 255, 256, 65535, 40000}, true},
		{"several blocks", big, true},
		{"a fraction in a later block", bigBad, false},
		{"fraction", []float32{0, 1.5}, false},
		{"negative", []float32{3, -1}, false},
		{"above 16 bits", []float32{65536}, false},
		{"negative zero", []float32{1, negZero}, false},
		{"NaN", []float32{float32(math.NaN())}, false},
		{"infinity", []float32{float32(math.Inf(1))}, false},
	}
	for _, c := range cases {
		for _, workers := range []int{1, 2} {
			q := packPlane(c.plane, workers)
			if got := q.u16 != nil; got != c.packed {
				t.Errorf("%s, %d workers: packed %v, want %v", c.name, workers, got, c.packed)
			}
			out := q.plane(workers)
			if len(out) != len(c.plane) {
				t.Fatalf("%s: %d values back, want %d", c.name, len(out), len(c.plane))
			}
			for i := range out {
				if math.Float32bits(out[i]) != math.Float32bits(c.plane[i]) {
					t.Errorf("%s, %d workers: value %d is %v (bits %08x), want %v (bits %08x)", c.name, workers, i, out[i], math.Float32bits(out[i]), c.plane[i], math.Float32bits(c.plane[i]))
					break
				}
			}
		}
	}
}
