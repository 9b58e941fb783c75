package main

import (
	"context"
	"testing"

	"github.com/cleave-seg/cleave/imageio/scenes"
	"github.com/cleave-seg/cleave/segment/labelmap"
	"github.com/cleave-seg/cleave/segment/score"
)

// BenchmarkScoreMaps512 is every metric of one 512x512 nuclei truth against
// another scene's truth: the scoring cost tune pays per segmentation.
func BenchmarkScoreMaps512(b *testing.B) {
	t := scenes.Nuclei(scenes.NucleiOptions{Seed: 61}).Truth
	p := scenes.Nuclei(scenes.NucleiOptions{Seed: 62}).Truth
	for b.Loop() {
		scoreMaps(p, t, 512, 512, defaultTolerance)
	}
}

// scoreMaps computes every metric of pred against truth (width x height).
func scoreMaps(pred, truth []int32, width, height int, tol float64) score.Report {
	m, _ := score.Compare(context.Background(), labelmap.Map{Pix: pred, Width: width, Height: height}, labelmap.Map{Pix: truth, Width: width, Height: height}, tol)
	return m
}
