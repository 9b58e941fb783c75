package affinity

import (
	"bytes"
	"encoding/binary"
	"math"
	"math/rand/v2"
	"testing"
)

// noiseImage returns planes of uniform noise in [0,1), from a fixed seed.
func noiseImage(seed uint64, w, h, planes int) [][]float32 {
	rng := rand.New(rand.NewPCG(seed, 1))
	f := make([][]float32, planes)
	for c := range f {
		f[c] = make([]float32, w*h)
		for i := range f[c] {
			f[c][i] = rng.Float32()
		}
	}
	return f
}

// blobImage is a smooth scene with a few bright disks on a dark ramp plus
// Gaussian noise of standard deviation sd, from a fixed seed.
func blobImage(seed uint64, w, h int, sd float64) [][]float32 {
	rng := rand.New(rand.NewPCG(seed, 2))
	type disk struct{ x, y, r, v float64 }
	var disks []disk
	for k := 0; k < 12; k++ {
		disks = append(disks, disk{rng.Float64() * float64(w), rng.Float64() * float64(h),
			(0.05 + 0.1*rng.Float64()) * float64(min(w, h)), 0.5 + 0.4*rng.Float64()})
	}
	p := make([]float32, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			v := 0.1 + 0.1*float64(x)/float64(w)
			for _, d := range disks {
				if (float64(x)-d.x)*(float64(x)-d.x)+(float64(y)-d.y)*(float64(y)-d.y) <= d.r*d.r {
					v = d.v
				}
			}
			p[y*w+x] = float32(v + sd*rng.NormFloat64())
		}
	}
	return [][]float32{p}
}

// graphBytes serializes every array of g, to compare graphs bit for bit.
func graphBytes(t testing.TB, g *Graph) []byte {
	t.Helper()
	var b bytes.Buffer
	rp := make([]int64, len(g.RowPtr))
	for i, v := range g.RowPtr {
		rp[i] = int64(v)
	}
	for _, v := range []any{int64(g.N), rp, g.Col, g.Weight} {
		if err := binary.Write(&b, binary.LittleEndian, v); err != nil {
			t.Fatal(err)
		}
	}
	return b.Bytes()
}

func relErr(got, want float64) float64 {
	if want == 0 {
		return math.Abs(got)
	}
	return math.Abs(got-want) / math.Abs(want)
}
