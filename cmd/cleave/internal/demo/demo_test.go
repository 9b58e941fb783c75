package demo

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/imageio/scenes"
	"github.com/cleave-seg/cleave/segment/score"
	"github.com/cleave-seg/cleave/segment/tune"
)

// The scenario has the counts, sizes and names its help promises, and is
// the same on every call (fixed seeds).
func TestScenario(t *testing.T) {
	a, b := Scenario(), Scenario()
	if len(a) != 2 || a[0].Name != "slide" || a[1].Name != "plate" {
		t.Fatalf("parts %v", a)
	}
	for k, want := range [][2]int{{SlideTune, SlideNew}, {PlateTune, PlateNew}} {
		p := a[k]
		if len(p.Tune) != want[0] || len(p.Fresh) != want[1] {
			t.Errorf("%s: %d + %d scenes, want %v", p.Name, len(p.Tune), len(p.Fresh), want)
		}
		var names []string
		for i, sc := range append(slices.Clone(p.Tune), p.Fresh...) {
			other := append(slices.Clone(b[k].Tune), b[k].Fresh...)[i]
			if sc.Width != Size || sc.Height != Size || !slices.Equal(sc.Pixels, other.Pixels) || !slices.Equal(sc.Truth, other.Truth) || sc.Objects == 0 {
				t.Errorf("%s: scene %s differs between calls, has no objects or is not %d x %d", p.Name, sc.Name, Size, Size)
			}
			names = append(names, sc.Name)
		}
		if want := fmt.Sprintf("%s-tune-1", p.Name); names[0] != want || len(slices.Compact(slices.Sorted(slices.Values(names)))) != len(names) {
			t.Errorf("%s: names %v", p.Name, names)
		}
	}
}

func TestIndent(t *testing.T) {
	for in, want := range map[string]string{"": "", "a\n": "  a\n", "a\nb": "  a\n  b\n", "a\n\nb\n": "  a\n  \n  b\n"} {
		if got := Indent(in); got != want {
			t.Errorf("Indent(%q) = %q, want %q", in, got, want)
		}
	}
}

// The tune line names what the plan fixes: the part's classes,
// background, flatten, max-ncut, budget and folds.
func TestTuneLineAndPlan(t *testing.T) {
	p := Scenario()[1] // plate: flatten, default folds
	line := strings.Join(p.TuneLine("in", "out", 2, true), " ")
	if want := "tune --images in --truth in --out out --workers 2 --force --classes 2 --background bright --flatten 30 --max-ncut 0.15 --budget 4"; line != want {
		t.Errorf("line %q, want %q", line, want)
	}
	c := &Config{Workers: 2}
	plan := p.TunePlan(c, "in", "out", nil)
	cfg := plan.Config
	if plan.Request.Classes != Classes || plan.Request.Background != "bright" || plan.Request.Flatten != 30 || cfg.Budget != 4 || cfg.Folds != 3 ||
		cfg.Workers != 2 || cfg.Metric != score.MetricF1 || !slices.Equal(cfg.Space[tune.MaxNcut].Values, []float64{0.15}) || !plan.Split {
		t.Errorf("plan %+v, config %+v", plan, cfg)
	}
}

// smallPart is a quick part: one 96 x 96 nuclei scene to tune on, one new
// (seeds 13601 and 13602), grid only.
func smallPart() Part {
	p := Part{Name: "small", Title: "one scene each", Background: "dark", MaxNcut: 0.15}
	for k, seed := range []uint64{13601, 13602} {
		sc := scenes.Nuclei(scenes.NucleiOptions{Width: 96, Height: 96, Seed: seed})
		sc.Name = fmt.Sprintf("small-%d", k)
		if k == 0 {
			p.Tune = append(p.Tune, sc)
		} else {
			p.Fresh = append(p.Fresh, sc)
		}
	}
	return p
}

// Run writes the scenes, tunes, segments and scores: the mean it returns
// is the ARI (Hubert and Arabie 1985, score.ARI, checked against
// scikit-learn in segment/score) of the label map it wrote against the
// generated truth, every step is printed as its command line, and a
// second run without Force fails at the tune step, which names the
// output in the way.
func TestRun(t *testing.T) {
	dir := t.TempDir()
	var out, log bytes.Buffer
	c := &Config{Out: dir, Workers: 1, Voice: pipeline.Voice{Version: "test"}, Stdout: &out, Stderr: &log}
	res, err := Run(context.Background(), c, []Part{smallPart()})
	if err != nil {
		t.Fatalf("%v\n%s", err, log.String())
	}
	if len(res) != 1 || res[0].Scores != filepath.Join(dir, "small", "scores.csv") {
		t.Fatalf("results %+v", res)
	}
	for _, want := range []string{"== small: one scene each", "$ cleave tune --images", "$ cleave segment --params", "$ cleave score --csv", "  best:"} {
		if !strings.Contains(out.String(), want) {
			t.Errorf("output lacks %q:\n%s", want, out.String())
		}
	}
	fresh := smallPart().Fresh[0]
	lm, err := imageio.ReadLabels(filepath.Join(dir, "small", "segmented", fresh.Name+".labels.png"))
	if err != nil {
		t.Fatal(err)
	}
	labels := lm.Pix
	if ari := score.ARI(labels, fresh.Truth); math.Abs(ari-res[0].Mean.ARI) > 1e-12 {
		t.Errorf("mean ARI %v, recomputed %v", res[0].Mean.ARI, ari)
	}
	for _, f := range []string{"tune/small-0.truth.png", "tuned/best.json", "segmented/small-1.overlay.png", "scores.csv"} {
		if _, err := os.Stat(filepath.Join(dir, "small", f)); err != nil {
			t.Error(err)
		}
	}
	log.Reset()
	_, err = Run(context.Background(), c, []Part{smallPart()})
	var se *StepError
	if !errors.As(err, &se) || se.Step != "tune" || se.Usage || !strings.Contains(log.String(), "cleave tune: output "+filepath.Join(dir, "small", "tuned", "best.json")+" already exists") {
		t.Errorf("rerun: %v, %q", err, log.String())
	}
}
