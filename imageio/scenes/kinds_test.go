package scenes

import (
	"fmt"
	"math"
	"strings"
	"testing"
)

// The five kinds added for the broader benchmark, made through Generate.
var newKinds = []string{"clusters", "haze", "stained", "surface", "grains"}

// TestKindsDeterministic: a scene is a function of its options (project
// rule), for both bit depths and a size other than 512.
func TestKindsDeterministic(t *testing.T) {
	for _, kind := range newKinds {
		for _, depth := range []int{8, 16} {
			gen := func(seed uint64) *Scene {
				s, err := Generate(kind, 160, 128, seed, depth)
				if err != nil {
					t.Fatalf("%s: %v", kind, err)
				}
				return s
			}
			checkDeterministic(t, fmt.Sprintf("%s/%d", kind, depth), gen)
		}
	}
}

// TestKindsWellFormed: sizes as asked, values within the bit depth,
// truth labels exactly 1..Objects with every object non-empty.
func TestKindsWellFormed(t *testing.T) {
	sizes := [][2]int{{256, 256}, {300, 200}, {128, 256}}
	for _, kind := range newKinds {
		for k, sz := range sizes {
			depth := 16
			if k%2 == 1 {
				depth = 8
			}
			s, err := Generate(kind, sz[0], sz[1], uint64(11+k), depth)
			if err != nil {
				t.Fatalf("%s %v: %v", kind, sz, err)
			}
			n := sz[0] * sz[1]
			if s.Width != sz[0] || s.Height != sz[1] || len(s.Pixels) != n || len(s.Truth) != n || s.BitDepth != depth {
				t.Fatalf("%s: got %dx%d depth %d with %d pixels, %d truth; want %dx%d depth %d", kind, s.Width, s.Height, s.BitDepth, len(s.Pixels), len(s.Truth), sz[0], sz[1], depth)
			}
			if present := checkLabels(t, s); present[0] == 0 {
				t.Errorf("%s %v: no background (label 0) pixels", s.Name, sz)
			}
		}
	}
}

// TestKindsValidate: invalid options are reported with an error naming the
// option; the defaults are valid.
func TestKindsValidate(t *testing.T) {
	checkOptionErrors(t, []optionCase{
		{ClustersOptions{Width: 10}.Validate(), "Width"},
		{ClustersOptions{BitDepth: 12}.Validate(), "BitDepth"},
		{ClustersOptions{Count: -2}.Validate(), "Count"},
		{ClustersOptions{Count: 5000}.Validate(), "Count"},
		{ClustersOptions{RadiusMin: 10, RadiusMax: 6}.Validate(), "RadiusMax"},
		{ClustersOptions{RadiusMax: 300}.Validate(), "RadiusMax"},
		{ClustersOptions{ClusterFraction: 1.5}.Validate(), "ClusterFraction"},
		{ClustersOptions{SeamlessFraction: 2}.Validate(), "SeamlessFraction"},
		{ClustersOptions{DimFraction: 2}.Validate(), "DimFraction"},
		{ClustersOptions{DefocusFraction: 2}.Validate(), "DefocusFraction"},
		{ClustersOptions{Photons: 1}.Validate(), "Photons"},
		{ClustersOptions{ReadNoise: 5000}.Validate(), "ReadNoise"},
		{HazeOptions{Height: 9000}.Validate(), "Height"},
		{HazeOptions{Count: 500}.Validate(), "Count"},
		{HazeOptions{RadiusMin: 1}.Validate(), "RadiusMin"},
		{HazeOptions{Glow: -1}.Validate(), "Glow"},
		{HazeOptions{FaintFraction: 3}.Validate(), "FaintFraction"},
		{HazeOptions{Photons: 1e7}.Validate(), "Photons"},
		{StainedOptions{BitDepth: 4}.Validate(), "BitDepth"},
		{StainedOptions{Count: -1}.Validate(), "Count"},
		{StainedOptions{ClusterFraction: 2}.Validate(), "ClusterFraction"},
		{StainedOptions{Unevenness: 0.5}.Validate(), "Unevenness"},
		{StainedOptions{RadiusMax: 200}.Validate(), "RadiusMax"},
		{SurfaceOptions{Width: 64}.Validate(), "size"},
		{SurfaceOptions{Pits: 1000}.Validate(), "Pits"},
		{SurfaceOptions{Inclusions: 1000}.Validate(), "Inclusions"},
		{SurfaceOptions{Cracks: 9}.Validate(), "Cracks"},
		{SurfaceOptions{Grain: 0.9}.Validate(), "Grain"},
		{SurfaceOptions{Gradient: 0.5}.Validate(), "Gradient"},
		{GrainsOptions{Count: 1}.Validate(), "Count"},
		{GrainsOptions{Count: 100000}.Validate(), "Count"},
		{GrainsOptions{BoundaryWidth: 20}.Validate(), "BoundaryWidth"},
		{GrainsOptions{ReadNoise: 2000}.Validate(), "ReadNoise"},
	})
	for _, err := range []error{ClustersOptions{}.Validate(), HazeOptions{}.Validate(), StainedOptions{}.Validate(), SurfaceOptions{}.Validate(), GrainsOptions{}.Validate()} {
		if err != nil {
			t.Errorf("default options: %v", err)
		}
	}
	if _, err := Generate("stars", 64, 64, 1, 8); err == nil || !strings.Contains(err.Error(), "stars") {
		t.Errorf("unknown kind: error %v, want one naming it", err)
	}
}

// TestKindsTruthMatchesRendering: every object whose surroundings can be
// measured differs from the background ring around it by a Welch t
// statistic above 3 (a 3σ difference of means, common practice): brighter
// for fluorescence kinds, darker for the stained field, either way on the
// metal surface (bright and dark inclusions).
func TestKindsTruthMatchesRendering(t *testing.T) {
	cases := []struct {
		s    *Scene
		sign float64 // +1 brighter, -1 darker, 0 either
	}{
		{Clusters(ClustersOptions{Width: 256, Height: 256, Seed: 3}), 1},
		{Haze(HazeOptions{Width: 256, Height: 256, Seed: 3}), 1},
		{Stained(StainedOptions{Width: 256, Height: 256, Seed: 3}), -1},
		{Surface(SurfaceOptions{Width: 256, Height: 256, Seed: 3}), 0},
	}
	for _, c := range cases {
		measured := 0
		for l, tv := range localContrast(c.s)[1:] {
			if math.IsNaN(tv) {
				continue // a cluster member enclosed by its partners: no ring
			}
			measured++
			v := tv * c.sign
			if c.sign == 0 {
				v = math.Abs(tv)
			}
			if !(v > 3) {
				t.Errorf("%s object %d: inside-minus-ring t = %.2f, want sign %+g and |t| > 3", c.s.Name, l+1, tv, c.sign)
			}
		}
		if measured < c.s.Objects/2 {
			t.Errorf("%s: only %d of %d objects measurable", c.s.Name, measured, c.s.Objects)
		}
	}
}

// TestClustersTouch: with every nucleus in a cluster, members share
// boundaries (4-adjacent labels), and every nucleus is one 4-connected
// piece.
func TestClustersTouch(t *testing.T) {
	s := Clusters(ClustersOptions{Width: 256, Height: 256, Seed: 5, Count: 12, ClusterFraction: 1})
	touch, pieces := adjacency(s)
	if len(touch) == 0 {
		t.Errorf("%s: no touching nuclei with ClusterFraction 1", s.Name)
	}
	for l := 1; l <= s.Objects; l++ {
		if pieces[l] != 1 {
			t.Errorf("%s: nucleus %d has %d pieces", s.Name, l, pieces[l])
		}
	}
}

// TestGrainsTile: grains fill the field except the thin boundaries. With
// boundaries 2 px wide around grains of mean spacing s = sqrt(W·H/Count)
// the boundary share is about 2·(2/s)·(perimeter factor ≈ 1.1) by hand
// (hexagon-like cells), 11 % for s = 40; we require 3-25 %.
func TestGrainsTile(t *testing.T) {
	s := Grains(GrainsOptions{Width: 320, Height: 320, Seed: 2, Count: 64, BoundaryWidth: 2})
	bg := 0
	for _, l := range s.Truth {
		if l == 0 {
			bg++
		}
	}
	f := float64(bg) / float64(len(s.Truth))
	if f < 0.03 || f > 0.25 {
		t.Errorf("%s: boundary share %.3f, want 0.03-0.25", s.Name, f)
	}
	if s.Objects < 55 || s.Objects > 64 {
		t.Errorf("%s: %d grains kept of 64 seeds, want 55-64", s.Name, s.Objects)
	}
}
