package segment

import (
	"context"
	"fmt"
	"testing"

	"github.com/cleave-seg/cleave/imageio/scenes"
	"github.com/cleave-seg/cleave/segment/labelmap"
)

// BenchmarkRefineObjects is the object re-cut (refineObjects: each
// object's pixel graph cut by recursive bisection, with its shape tests)
// alone on a generated nuclei frame of 2048 x 2048 pixels (seed 15110,
// 16-bit). Its objects are the connected components of the scene's truth
// foreground, so touching nuclei form one object as the class stage
// leaves them, and the contrast is |I/B - 1| against the background field
// of the truth's background pixels (smoothField, contrastMap). One worker
// (as the solves of one object run) and all cores; cpu-s/op is the
// process's CPU time per re-cut of all objects, and objects the count
// handed to it.
func BenchmarkRefineObjects(b *testing.B) {
	const n = 2048
	sc, err := scenes.Generate("nuclei", n, n, 15110, 16)
	if err != nil {
		b.Fatal(err)
	}
	in := sceneInput(sc)
	mask := make([]bool, n*n)
	group := make([]int32, n*n)
	for i, t := range sc.Truth {
		mask[i] = t == 0
		group[i] = -1
		if t != 0 {
			group[i] = 0
		}
	}
	field := smoothField(in.Luminance, mask, n, n, float64(n)/fieldScale, 0)
	con := contrastMap(in.Luminance, field, BackgroundDark, 0)
	obj, nobj := componentsOfGroups(group, n, n, 20, 0)
	objects := labelmap.Map{Pix: obj, Width: n, Height: n}
	for _, workers := range []int{1, 0} {
		b.Run(fmt.Sprintf("workers=%d", workers), func(b *testing.B) {
			var got int
			c0 := cpuSeconds()
			for b.Loop() {
				ref, err := refineObjects(context.Background(), con, objects, nobj, RefineMaxNcut, 20, true, 0, workers, 1)
				if err != nil {
					b.Fatal(err)
				}
				got = ref.n
			}
			b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
			b.ReportMetric(float64(nobj), "objects")
			b.ReportMetric(float64(got), "refined")
		})
	}
}
