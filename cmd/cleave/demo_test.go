package main

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/demo"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/scoring"
	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/segment/parallel"
	"github.com/cleave-seg/cleave/segment/score"
	"github.com/cleave-seg/cleave/segment/tune"
)

// The demo end to end: every step succeeds, the scores it prints are those
// of the label maps it wrote against the generated truth (ARI of Hubert and
// Arabie 1985 via score.ARI, checked against scikit-learn in
// segment/score), and the held-out slide scenes are segmented reasonably
// (measured mean ARI 0.913 on this machine; the bound leaves a margin).
func TestDemo(t *testing.T) {
	if testing.Short() {
		t.Skip("the demo takes about 10 s")
	}
	// Without --out the demo writes into a new folder under the system's
	// temporary folder ($TMPDIR, as os.TempDir reads it) and says which.
	tmp := t.TempDir()
	t.Setenv("TMPDIR", tmp)
	stdout := runOK(t, "demo")
	made, _ := filepath.Glob(filepath.Join(tmp, "cleave-demo-*"))
	if len(made) != 1 {
		t.Fatalf("folders made under TMPDIR: %v", made)
	}
	out := made[0]
	if first, _, _ := strings.Cut(stdout, "\n"); first != "writing into "+out+" (a new folder; --out DIR chooses another)" {
		t.Errorf("first line %q does not name the folder %s", first, out)
	}
	if wd, _ := os.Getwd(); fileExists(filepath.Join(wd, "cleave-demo")) {
		t.Error("the demo wrote cleave-demo into the working folder")
	}
	for _, want := range []string{"== summary", "slide  3 new scenes", "plate  2 new scenes", "cross-validated", "tune.png"} {
		if !strings.Contains(stdout, want) {
			t.Errorf("output lacks %q:\n%s", want, stdout)
		}
	}
	var sum float64
	parts := demo.Scenario()
	for _, sc := range parts[0].Fresh {
		lm, err := imageio.ReadLabels(filepath.Join(out, "slide", "segmented", sc.Name+".labels.png"))
		if err != nil {
			t.Fatal(err)
		}
		labels := lm.Pix
		sum += score.ARI(labels, sc.Truth)
	}
	mean := sum / float64(len(parts[0].Fresh))
	line := ""
	for _, l := range strings.Split(stdout, "\n") {
		if strings.HasPrefix(l, "slide  3 new scenes") {
			line = l
		}
	}
	if want := "mean ARI " + strings.TrimSpace(scoring.FormatMetric(mean)); !strings.Contains(line, want) {
		t.Errorf("summary %q, recomputed %s", line, want)
	}
	if mean < 0.85 {
		t.Errorf("slide: mean ARI %.4f on new scenes, want >= 0.85", mean)
	}
	for _, p := range []string{"slide/tuned/best.json", "slide/tuned/tune.png", "plate/tuned/best.json", "slide/scores.csv", "plate/scores.csv"} {
		if _, err := os.Stat(filepath.Join(out, p)); err != nil {
			t.Error(err)
		}
	}
	// A second run into the same folder, given by --out, is refused
	// without --force.
	var o, e bytes.Buffer
	if code := run(context.Background(), []string{"demo", "--out", out}, &o, &e); code != exitFail || !strings.Contains(e.String(), "not empty") {
		t.Errorf("rerun: exit %d, %q", code, e.String())
	}
}

func TestDemoUsage(t *testing.T) {
	var o, e bytes.Buffer
	if code := run(context.Background(), []string{"demo", "extra"}, &o, &e); code != exitUsage || !strings.Contains(e.String(), "unexpected") {
		t.Errorf("exit %d, %q", code, e.String())
	}
}

// Every new command's help has a worked example and the caution.
func TestNewCommandsHelp(t *testing.T) {
	for _, c := range []struct{ cmd, example string }{
		{"score", "cleave score results/nuclei-1.labels.png"},
		{"tune", "cleave tune --images examples/nuclei"},
		{"demo", "writes into a new folder under the system's temporary folder"},
	} {
		for _, args := range [][]string{{"help", c.cmd}, {c.cmd, "--help"}} {
			out := runOK(t, args...)
			for _, want := range []string{"Example", c.example, "not validated for clinical"} {
				if !strings.Contains(out, want) {
					t.Errorf("%v: help lacks %q", args, want)
				}
			}
		}
	}
}

// BenchmarkDemo is the whole demo (scenes, two tunes, segmentation and
// scoring); the target is under 30 s on the 2-core machine.
func BenchmarkDemo(b *testing.B) {
	dir := b.TempDir()
	for i := 0; i < b.N; i++ {
		var stdout, stderr bytes.Buffer
		if code := run(context.Background(), []string{"demo", "--force", "--out", filepath.Join(dir, "demo")}, &stdout, &stderr); code != exitOK {
			b.Fatalf("exit %d: %s", code, stderr.String())
		}
	}
}

func fileExists(p string) bool {
	_, err := os.Stat(p)
	return err == nil
}

// The demo runs tune and segment through typed plans, and prints the
// command lines that would run them again: parsed as tune's command line,
// the printed tune line gives the demo's settings, search space and
// options; and 'cleave segment --params best.json' gives the settings the
// demo segments with (Outcome.Tuned), on a small tune of one generated
// scene (seed 13160).
func TestDemoPlansMatchTheirCommands(t *testing.T) {
	dir := t.TempDir()
	writeNuclei(t, dir, 13160, 1, 112)
	for _, p := range demo.Scenario() {
		for _, force := range []bool{false, true} {
			tunedDir := filepath.Join(dir, p.Name+fmt.Sprint(force))
			line := p.TuneLine(dir, tunedDir, 1, force)
			fs, s, o := tuneFlags()
			if err := fs.Parse(line[1:]); err != nil {
				t.Fatal(err)
			}
			c := &demo.Config{Workers: 1, Force: force, Voice: voice()}
			plan := p.TunePlan(c, dir, tunedDir, io.Discard)
			ax, err := parseSpec(tune.MaxNcut, o.space[tune.MaxNcut])
			if err != nil {
				t.Fatal(err)
			}
			metric, why, _ := chooseMetric(o.metric, s.Background)
			cfg := plan.Config
			if !reflect.DeepEqual(*s, plan.Request) || !reflect.DeepEqual(ax, cfg.Space[tune.MaxNcut]) || o.budget != cfg.Budget || o.folds != cfg.Folds ||
				o.force != plan.Force || parallel.Workers(o.workers) != cfg.Workers || metric != cfg.Metric || why != cfg.MetricChoice || o.tolerance != cfg.Tolerance ||
				(o.tieBreak == "smoother") != cfg.SmootherTies || o.images != plan.Images || o.out != plan.Out {
				t.Errorf("%s: the line %v parses to %+v %+v, the demo's plan is %+v %+v", p.Name, line, *s, *o, plan.Request, *cfg)
			}
			for d := range tune.NumParams {
				if d != tune.MaxNcut && o.space[d] != "" {
					t.Errorf("%s: the line gives --%s", p.Name, d)
				}
			}
			if p.Name != "slide" || force {
				continue
			}
			// One tune of the plan (no refinement), then best.json read as
			// segment reads it.
			plan.Config.Budget = 0
			var out bytes.Buffer
			code, res, err := runTunePlan(context.Background(), plan, &out)
			if code != exitOK || err != nil {
				t.Fatalf("tune: exit %d, %v", code, err)
			}
			fs2, seg, _, err := parseSegment([]string{"--params", filepath.Join(tunedDir, "best.json")}, io.Discard)
			if err != nil || fs2 == nil {
				t.Fatal(err)
			}
			if got := res.Tuned(p.Request()); !reflect.DeepEqual(got, *seg) {
				t.Errorf("tuned settings %+v, segment --params best.json %+v", got, *seg)
			}
		}
	}
}
