package pipeline

import (
	"math"
	"sync/atomic"

	"github.com/cleave-seg/cleave/segment/parallel"
)

// packedPlane holds a float32 plane while nothing reads it: as 16-bit
// samples when every value is a whole number in 0..65535 (the luma of an
// 8- or 16-bit gray image, the region table's raw plane), half the
// memory, and as the plane itself otherwise. Unpacking gives the same
// bits: a value is packed only if float32(uint16(v)) has v's bits (so
// -0 and NaN stay unpacked).
type packedPlane struct {
	u16 []uint16
	f32 []float32
}

// packBlock is the pixels each goroutine packs or unpacks at a time.
const packBlock = 1 << 18

// packPlane packs p (see packedPlane). When it packs, p is not referenced
// by the result, so the caller's dropping p frees it.
func packPlane(p []float32, workers int) packedPlane {
	if len(p) == 0 {
		return packedPlane{f32: p}
	}
	u := make([]uint16, len(p))
	var bad atomic.Bool
	parallel.Blocks(len(p), packBlock, workers, func(_, lo, hi int) {
		if bad.Load() {
			return
		}
		for i, v := range p[lo:hi] {
			if !(v >= 0 && v <= math.MaxUint16) {
				bad.Store(true)
				return
			}
			q := uint16(v)
			if math.Float32bits(float32(q)) != math.Float32bits(v) {
				bad.Store(true)
				return
			}
			u[lo+i] = q
		}
	})
	if bad.Load() {
		return packedPlane{f32: p}
	}
	return packedPlane{u16: u}
}

// plane returns the plane that was packed, bit for bit.
func (q packedPlane) plane(workers int) []float32 {
	if q.u16 == nil {
		return q.f32
	}
	out := make([]float32, len(q.u16))
	parallel.Blocks(len(q.u16), packBlock, workers, func(_, lo, hi int) {
		o := out[lo:hi]
		for i, v := range q.u16[lo:hi] {
			o[i] = float32(v)
		}
	})
	return out
}
