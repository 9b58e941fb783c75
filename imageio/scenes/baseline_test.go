package scenes

import (
	"testing"

	"github.com/cleave-seg/cleave/segment/score"
)

// TestOtsuBaselineWeaknesses measures the Otsu + connected components
// baseline against the scenes' truth with the project's scorers (ARI of
// Hubert and Arabie 1985; object F1 at IoU > 0.5, common practice in
// cell-segmentation benchmarks) and asserts the weaknesses the scenes are
// built to expose: on nuclei the threshold keeps pixel agreement high but
// merges touching pairs and loses dim nuclei, so object F1 stays low; on
// plates the raking-light gradient defeats any global threshold.
func TestOtsuBaselineWeaknesses(t *testing.T) {
	if testing.Short() {
		t.Skip("renders eight 512x512 scenes")
	}
	var sumARI, sumF1 float64
	const nNuclei = 5
	for seed := uint64(1); seed <= nNuclei; seed++ {
		ari, m := scoreOtsu(t, Nuclei(NucleiOptions{Seed: seed}), false)
		sumARI += ari
		sumF1 += m.F1
		if m.F1 >= 0.8 {
			t.Errorf("nuclei seed %d: Otsu object F1 %.3f >= 0.8; the scene no longer defeats a global threshold", seed, m.F1)
		}
		if ari < 0.75 {
			t.Errorf("nuclei seed %d: Otsu ARI %.3f < 0.75; the scene is not a fair object-on-background image", seed, ari)
		}
	}
	t.Logf("nuclei mean: ARI %.3f, F1 %.3f", sumARI/nNuclei, sumF1/nNuclei)
	if sumF1/nNuclei > 0.75 || sumARI/nNuclei < 0.85 {
		t.Errorf("nuclei mean: Otsu ARI %.3f, F1 %.3f; want ARI >= 0.85 and F1 <= 0.75", sumARI/nNuclei, sumF1/nNuclei)
	}

	// Control: without pairs, dim nuclei, vignetting and haze the same
	// baseline finds nearly every nucleus, so the low F1 above comes from
	// the modelled effects and not from a broken truth.
	for seed := uint64(1); seed <= 2; seed++ {
		s := Nuclei(NucleiOptions{Seed: seed, PairFraction: -1, DimFraction: -1, CornerLevel: 1, Haze: -1})
		m := score.MatchObjects(OtsuObjects(s, false), s.Truth)
		t.Logf("control nuclei seed %d: F1 %.3f, mean IoU %.3f", seed, m.F1, m.MeanIoU)
		if m.F1 < 0.95 || m.MeanIoU < 0.8 {
			t.Errorf("control nuclei seed %d: Otsu F1 %.3f, mean IoU %.3f; want >= 0.95 and >= 0.8", seed, m.F1, m.MeanIoU)
		}
	}

	sumARI, sumF1 = 0, 0
	const nPlates = 3
	for seed := uint64(1); seed <= nPlates; seed++ {
		ari, m := scoreOtsu(t, Plate(PlateOptions{Seed: seed}), true)
		sumARI += ari
		sumF1 += m.F1
		if ari > 0.3 {
			t.Errorf("plate seed %d: Otsu ARI %.3f > 0.3; the gradient no longer defeats a global threshold", seed, ari)
		}
	}
	t.Logf("plate mean: ARI %.3f, F1 %.3f", sumARI/nPlates, sumF1/nPlates)
}

// scoreOtsu segments s with the Otsu baseline (OtsuObjects) and returns
// its ARI and object matching against the truth, logging both.
func scoreOtsu(t *testing.T, s *Scene, darkObjects bool) (float64, score.ObjectMatch) {
	t.Helper()
	pred := OtsuObjects(s, darkObjects)
	ari := score.ARI(pred, s.Truth)
	m := score.MatchObjects(pred, s.Truth)
	t.Logf("%s: objects %d, ARI %.3f, F1 %.3f (TP %d FP %d FN %d)", s.Name, s.Objects, ari, m.F1, m.TP, m.FP, m.FN)
	return ari, m
}
