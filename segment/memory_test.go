package segment

import (
	"context"
	"runtime"
	"runtime/debug"
	"testing"
	"time"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/internal/heappeak"
)

// TestEstimateStagesStencil: the memory estimate of the k-way cut of the
// pixel graph counts the graph in stencil form, as Run builds it
// (affinity.EstimateStencilGraphBytes, about half of the compressed
// rows at r = 5), and no copy of it in the cuts stage; bisection keeps
// the compressed rows. On a run of the k-way cut of a 200 x 160 pixel
// graph (32,000 nodes, the coarse-to-fine path), the live heap sampled
// every millisecond with the collector's target at 10 % stays under the
// cuts stage's estimate, which is at most three times that peak (the
// former count, compressed rows with a copy and MaxSegments+1 pairs,
// gave 146 MB, 4.1 times the 36 MB measured here).
func TestEstimateStagesStencil(t *testing.T) {
	const w, h = 200, 160
	p := DefaultParams()
	p.Superpixels = 0
	p.Radius = 5
	p.AutoSigmaI, p.SigmaI = false, 0.1
	p.AutoSigmaX, p.SigmaX = false, 4
	p.Method = MethodKway
	p.Segments = 6
	p.Workers = 2
	p.AutoSmooth = false // the graph stage then holds the graph alone
	bytesOf := func(p Params, stage string) int64 {
		for _, st := range EstimateStages(w, h, 1, p) {
			if st.Name == stage {
				return st.Bytes
			}
		}
		t.Fatalf("no %s stage in %v", stage, EstimateStages(w, h, 1, p))
		return 0
	}
	if got, want := bytesOf(p, "graph"), affinity.EstimateStencilGraphBytes(w, h, p.Radius); got != want {
		t.Errorf("k-way graph stage %d bytes, want the stencil's %d", got, want)
	}
	b := p
	b.Method = MethodBisect
	if got, want := bytesOf(b, "graph"), affinity.EstimatePixelGraphBytes(w, h, p.Radius); got != want {
		t.Errorf("bisection graph stage %d bytes, want the compressed rows' %d", got, want)
	}

	f := blobPlane(13850, w, h)
	in := Input{Width: w, Height: h, Planes: f, Luminance: f[0]}
	defer debug.SetGCPercent(debug.SetGCPercent(10))
	runtime.GC()
	base := heappeak.Live()
	stop := heappeak.Watch(time.Millisecond)
	res, err := Run(context.Background(), in, p)
	peak := stop()
	if err != nil {
		t.Fatal(err)
	}
	if res.Graph.Nodes() != w*h {
		t.Fatalf("graph of %d nodes, want the pixel graph's %d", res.Graph.Nodes(), w*h)
	}
	used := int64(peak - min(base, peak))
	est := bytesOf(p, "cuts")
	t.Logf("live heap peak %d bytes above the start, cuts estimate %d (%.2f times)", used, est, float64(est)/float64(used))
	if used > est {
		t.Errorf("live heap peak %d bytes above the cuts estimate %d", used, est)
	}
	if 3*used < est {
		t.Errorf("cuts estimate %d more than three times the live heap peak %d", est, used)
	}
}
