package segment

import (
	"context"
	"slices"
	"testing"

	"github.com/cleave-seg/cleave/imageio/scenes"
)

// TestGrainCacheWorkersInput runs a generated machined surface with and
// without grain removal: a shared Cache must give each run the result of
// a run without it (superpixels of the grain-free features are not those
// of the raw ones), the result must not depend on the worker count, and
// the caller's planes must be left as they were.
func TestGrainCacheWorkersInput(t *testing.T) {
	in := sceneInput(scenes.Surface(scenes.SurfaceOptions{Width: 256, Height: 256, Seed: 41}))
	orig := slices.Clone(in.Luminance)
	cached := in
	cached.Cache = &Cache{Ceiling: 0.2}
	for _, grain := range []bool{false, true, false, true} {
		p := defaultParams()
		p.Contour, p.Grain, p.Classes, p.Background = true, grain, 2, "bright"
		want, err := Run(context.Background(), in, p)
		if err != nil {
			t.Fatal(err)
		}
		got, err := Run(context.Background(), cached, p)
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(got.Labels.Pix, want.Labels.Pix) || got.NumObjects != want.NumObjects {
			t.Errorf("grain %v: %d objects with the cache, %d without", grain, got.NumObjects, want.NumObjects)
		}
		p.Workers = 3
		many, err := Run(context.Background(), in, p)
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(many.Labels.Pix, want.Labels.Pix) || many.Params.GrainModel != want.Params.GrainModel {
			t.Errorf("grain %v: 3 workers gave %d objects (%+v), 1 worker %d (%+v)", grain, many.NumObjects, many.Params.GrainModel, want.NumObjects, want.Params.GrainModel)
		}
		if grain && !(want.Params.GrainModel.Share > 0 && want.Params.GrainModel.Length > 0) {
			t.Errorf("grain model not resolved: %+v", want.Params.GrainModel)
		}
	}
	if !slices.Equal(in.Luminance, orig) {
		t.Error("Run with grain removal changed the caller's luminance")
	}
}
