package tune

import (
	"context"
	"slices"
	"testing"

	"github.com/cleave-seg/cleave/imageio/scenes"
	"github.com/cleave-seg/cleave/segment"
	"github.com/cleave-seg/cleave/segment/labelmap"
	"github.com/cleave-seg/cleave/segment/score"
)

// sceneObjective segments generated nuclei scenes (the project's own
// generator, exact truth) with segment.Run and scores them with
// score.Compare: the search on real segmentations, not a closed form.
func sceneObjective(t *testing.T, seeds ...uint64) ([]string, Objective) {
	t.Helper()
	var names []string
	var inputs []segment.Input
	var truths [][]int32
	for _, seed := range seeds {
		sc := scenes.Nuclei(scenes.NucleiOptions{Width: 96, Height: 96, Seed: seed})
		lo, hi := slices.Min(sc.Pixels), slices.Max(sc.Pixels)
		lum := make([]float32, len(sc.Pixels))
		for i, v := range sc.Pixels {
			lum[i] = float32(v-lo) / float32(hi-lo) // min..max to 0..1
		}
		names = append(names, sc.Name)
		inputs = append(inputs, segment.Input{Width: sc.Width, Height: sc.Height, Planes: [][]float32{lum}, Luminance: lum})
		truths = append(truths, sc.Truth)
	}
	return names, func(ctx context.Context, p segment.Params, j int) (Sample, error) {
		res, err := segment.Run(ctx, inputs[j], p)
		if err != nil {
			return Sample{}, err
		}
		r, err := score.Compare(ctx, res.Labels, labelmap.Map{Pix: truths[j], Width: inputs[j].Width, Height: inputs[j].Height}, 2)
		return Sample{Report: r, Cost: Cost(res), Used: res.Params}, err
	}
}

func sceneTuner(t *testing.T, workers int) *Tuner {
	names, obj := sceneObjective(t, 11040, 11041)
	b := segment.DefaultParams()
	b.Classes, b.Background, b.Workers = 2, segment.BackgroundDark, 1
	tn := &Tuner{Base: b, Names: names, Metric: score.MetricF1, Workers: workers, Objective: obj}
	tn.Space[SigmaI] = NewAxis(SigmaI, []float64{0.01, 0.04}, "0.01,0.04")
	tn.Space[SigmaX] = NewAxis(SigmaX, []float64{4, 12}, "4,12")
	tn.Space[MaxNcut] = DefaultAxis(MaxNcut, []float64{0.15})
	tn.Space[Radius] = DefaultAxis(Radius, []float64{5})
	tn.Space[Superpixels] = DefaultAxis(Superpixels, []float64{300})
	tn.Space[Compactness] = DefaultAxis(Compactness, []float64{20})
	tn.Space[Necks] = DefaultAxis(Necks, []float64{On})
	tn.Space[Faint] = DefaultAxis(Faint, []float64{0})
	return tn
}

// On two generated nuclei scenes (96 x 96, seeds 11040-11041; 300
// superpixels, two classes on a dark background), a 2 x 2
// grid over sigma-i and sigma-x with a refinement budget of 2: the choice
// scores at least as well as every setting the search looked at (the
// definition of the search's best, ties within TieRelative); segmenting
// again with the chosen parameters gives exactly the recorded scores; and
// the choice and every score are the same with 1 and 2 workers (each
// Objective call runs on one thread).
func TestSearchOnScenes(t *testing.T) {
	if testing.Short() {
		t.Skip("segments 2 scenes about 10 times")
	}
	var keys []string
	var scores [][]score.Report
	for _, w := range []int{1, 2} {
		tn := sceneTuner(t, w)
		res, err := tn.Search(ctx, tn.All(), 2, nil)
		if err != nil {
			t.Fatal(err)
		}
		best := tn.Score(res.Best, tn.All())
		for _, e := range res.Visited {
			if s := tn.Score(e, tn.All()); s > best && !Tied(s, best) {
				t.Errorf("workers %d: %s scores %v, above the choice %s at %v", w, e.Key, s, res.Best.Key, best)
			}
		}
		if len(res.Visited) < 4 {
			t.Errorf("workers %d: %d settings visited, want the 4 of the grid at least", w, len(res.Visited))
		}
		p := tn.Space.Apply(tn.Base, res.Best.Point)
		for j := range tn.Names {
			s, err := tn.Objective(ctx, p, j)
			if err != nil || s.Report != res.Best.Reports[j] {
				t.Errorf("workers %d: image %d again: %+v, %v; recorded %+v", w, j, s.Report, err, res.Best.Reports[j])
			}
		}
		keys = append(keys, res.Best.Key)
		scores = append(scores, res.Best.Reports)
	}
	if keys[0] != keys[1] || !slices.Equal(scores[0], scores[1]) {
		t.Errorf("1 worker chose %s %+v, 2 workers %s %+v", keys[0], scores[0], keys[1], scores[1])
	}
}
