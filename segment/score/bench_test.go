package score

import "testing"

// discs1024 builds a 1024x1024 truth of ~400 disc objects on background and a
// prediction with the discs shifted and shrunk, the size cleave works at.
func discs1024() (pred, truth []int32) {
	const n = 1024
	pred = make([]int32, n*n)
	truth = make([]int32, n*n)
	label := int32(0)
	for cy := 25; cy < n; cy += 50 {
		for cx := 25; cx < n; cx += 50 {
			label++
			for y := cy - 20; y <= cy+20; y++ {
				for x := cx - 20; x <= cx+20 && x < n; x++ {
					if y >= n {
						continue
					}
					dy, dx := y-cy, x-cx
					if dy*dy+dx*dx <= 18*18 {
						truth[y*n+x] = label
					}
					if (dy-2)*(dy-2)+(dx-1)*(dx-1) <= 16*16 {
						pred[y*n+x] = label + 1000
					}
				}
			}
		}
	}
	return pred, truth
}

func BenchmarkARI1024(b *testing.B) {
	pred, truth := discs1024()
	b.SetBytes(int64(len(pred)) * 8)
	for b.Loop() {
		ARI(pred, truth)
	}
}

func BenchmarkMatchObjects1024(b *testing.B) {
	pred, truth := discs1024()
	b.SetBytes(int64(len(pred)) * 8)
	for b.Loop() {
		MatchObjects(pred, truth)
	}
}
