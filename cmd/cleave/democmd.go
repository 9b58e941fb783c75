package main

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"time"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/scoring"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/tuning"
	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/imageio/scenes"
	"github.com/cleave-seg/cleave/segment/score"
	"github.com/cleave-seg/cleave/segment/tune"
	"github.com/spf13/pflag"
)

const demoExample = `Example:

  cleave demo

writes into a new folder under the system's temporary folder (it prints
which; --out DIR chooses another). With --out cleave-demo, look at
cleave-demo/slide/segmented/*.overlay.png and
cleave-demo/slide/tuned/tune.png, and rerun any step by hand, e.g.

  cleave segment --params cleave-demo/slide/tuned/best.json --out mine cleave-demo/slide/new/slide-new-1.png
`

func demoHelp(w io.Writer) {
	fs, _ := demoFlags()
	fmt.Fprintf(w, `Usage: cleave demo [--out DIR]

Run the whole workflow on an invented inspection day with exact ground
truth, made up by cleave's own scene generators:

  slide  a fluorescence slide of cell nuclei (bright on dark, touching pairs,
         dim nuclei, uneven illumination): %d scenes with generated masks to
         tune on, %d new scenes to segment;
  plate  a machined plate under raking light (pits and scratches, darker on
         a bright graded surface, with grain): %d scene to tune on, %d new.

For each: cleave tune (a reduced search, to finish quickly) writes
best.json; cleave segment --params best.json segments the new scenes
through the same pipeline as any other run; cleave score compares them
with their truth. Scores and the place of every output are printed.

%s
Flags:
%s
%s`, demoSlideTune, demoSlideNew, demoPlateTune, demoPlateNew, demoExample, flagUsages(fs), caution)
}

// The demo's scenario: sizes, counts and seeds (fixed, so the demo prints
// the same scores every time).
const (
	demoSize                    = 256
	demoSlideTune, demoSlideNew = 2, 3
	demoPlateTune, demoPlateNew = 1, 2
	demoSlideSeed               = 4100
	demoPlateSeed               = 4300
)

type demoOptions struct {
	out         string
	force, help bool
	workers     int
}

func demoFlags() (*pflag.FlagSet, *demoOptions) {
	fs := pflag.NewFlagSet("demo", pflag.ContinueOnError)
	fs.SortFlags = false
	o := &demoOptions{}
	fs.StringVarP(&o.out, "out", "o", "", "folder for the scenes and every output (must be new or empty, unless --force); default: a new folder cleave-demo-* under the system's temporary folder")
	fs.BoolVar(&o.force, "force", false, "overwrite the outputs of an earlier demo in --out")
	fs.IntVar(&o.workers, "workers", 0, fmt.Sprintf("threads (0 = all cores; at most %d); results do not depend on it", maxWorkers))
	fs.BoolVarP(&o.help, "help", "h", false, "show this help")
	return fs, o
}

// demoPart is one half of the scenario: its scenes and the parameters it
// fixes (two classes on a background, shading correction) and searches
// (a reduced search: max-ncut fixed, a small budget; folds 0: tune's
// default).
type demoPart struct {
	name, title   string
	tune, fresh   []*scenes.Scene
	background    string
	flatten       float64
	maxNcut       float64
	budget, folds int
}

// demoClasses is the number of classes both parts segment into.
const demoClasses = 2

// settings are the parameters of the part as given: the defaults of
// every flag, with the part's own.
func (p *demoPart) settings() settings {
	s := defaultSettings()
	s.Classes, s.Background, s.Flatten = demoClasses, p.background, p.flatten
	return s
}

// foldsOrDefault is the part's K of the cross-validation.
func (p *demoPart) foldsOrDefault() int {
	if p.folds == 0 {
		return defaultFolds
	}
	return p.folds
}

// tuneLine is the tune command a user would type to run the part's tune
// again (printed before its output; the demo runs the same plan
// directly, tunePlan).
func (p *demoPart) tuneLine(tuneDir, tunedDir string, workers int, force bool) []string {
	a := []string{"tune", "--images", tuneDir, "--truth", tuneDir, "--out", tunedDir, "--workers", fmt.Sprint(workers)}
	if force {
		a = append(a, "--force")
	}
	a = append(a, "--classes", fmt.Sprint(demoClasses), "--background", p.background)
	if p.flatten != 0 {
		a = append(a, "--flatten", tune.FormatValue(p.flatten))
	}
	a = append(a, "--max-ncut", tune.FormatValue(p.maxNcut), "--budget", fmt.Sprint(p.budget))
	if p.folds != 0 {
		a = append(a, "--folds", fmt.Sprint(p.folds))
	}
	return a
}

// tunePlan is the part's tune: its settings, the metric tune chooses for
// them, max-ncut fixed, the rest as tune's defaults.
func (p *demoPart) tunePlan(tuneDir, tunedDir string, workers int, force bool) (*tunePlan, error) {
	s := p.settings()
	metric, why, err := chooseMetric("", s.Background)
	if err != nil {
		return nil, err
	}
	cfg := &tuning.Config{Metric: metric, MetricChoice: why, Tolerance: defaultTolerance, Workers: defaultWorkers(workers),
		Budget: p.budget, Folds: p.foldsOrDefault(), Voice: voice(), Start: time.Now()}
	cfg.Space[tune.MaxNcut] = tune.NewAxis(tune.MaxNcut, []float64{p.maxNcut}, tune.FormatValue(p.maxNcut))
	return &tunePlan{settings: s, cfg: cfg, split: true, images: tuneDir, truth: tuneDir, out: tunedDir, force: force}, nil
}

// tuned is the part's settings with the tuned values of out: what
// 'cleave segment --params best.json' runs with.
func tuned(s settings, out *tuning.Outcome) settings {
	for _, d := range tune.Params() {
		v, auto := out.Setting(d)
		ax := tune.Axis{Param: d, Values: []float64{v}}
		if auto {
			ax = tune.AutoAxis(d, "auto")
		}
		s = withParam(s, d, ax)
	}
	return s
}

func runDemo(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	fs, o := demoFlags()
	if code, done := parseCommand(fs, args, "demo", &o.help, demoHelp, stdout, stderr); done {
		return code
	}
	if fs.NArg() > 0 {
		fmt.Fprintf(stderr, "cleave demo: unexpected arguments %q (run 'cleave demo --help')\n", fs.Args())
		return exitUsage
	}
	if o.workers < 0 || o.workers > maxWorkers {
		fmt.Fprintf(stderr, "cleave demo: --workers must be 0 (all cores) to %d, got %d\n", maxWorkers, o.workers)
		return exitUsage
	}
	if o.out == "" {
		dir, err := os.MkdirTemp("", "cleave-demo-")
		if err != nil {
			fmt.Fprintf(stderr, "cleave demo: cannot make a folder under the temporary folder %s: %v (use --out DIR)\n", os.TempDir(), pipeline.DescribeErr(err))
			return exitFail
		}
		o.out = dir
		fmt.Fprintf(stdout, "writing into %s (a new folder; --out DIR chooses another)\n", dir)
	}
	if ents, err := os.ReadDir(o.out); err == nil && len(ents) > 0 && !o.force {
		fmt.Fprintf(stderr, "cleave demo: %s is not empty (use --force to overwrite an earlier demo, or another --out)\n", o.out)
		return exitFail
	}
	start := time.Now()
	parts := demoScenario()
	type result struct {
		part       *demoPart
		ari, f1    float64
		tuneScore  string
		scoresPath string
	}
	var results []result
	for i := range parts {
		p := &parts[i]
		fmt.Fprintf(stdout, "== %s: %s\n", p.name, p.title)
		dir := filepath.Join(o.out, p.name)
		tuneDir, newDir := filepath.Join(dir, "tune"), filepath.Join(dir, "new")
		tunedDir, segDir := filepath.Join(dir, "tuned"), filepath.Join(dir, "segmented")
		for _, d := range []string{tuneDir, newDir} {
			if err := os.MkdirAll(d, 0o755); err != nil {
				fmt.Fprintf(stderr, "cleave demo: %v\n", err)
				return exitFail
			}
		}
		if err := writeScenes(tuneDir, p.tune); err != nil {
			fmt.Fprintf(stderr, "cleave demo: %v\n", err)
			return exitFail
		}
		if err := writeScenes(newDir, p.fresh); err != nil {
			fmt.Fprintf(stderr, "cleave demo: %v\n", err)
			return exitFail
		}
		// Each step runs through the packages directly, printed as the
		// command a user would type to run it again, with its output.
		scoresPath := filepath.Join(dir, "scores.csv")
		tuneLine := p.tuneLine(tuneDir, tunedDir, o.workers, o.force)
		segmentLine := append([]string{"segment", "--params", filepath.Join(tunedDir, "best.json"), "--out", segDir, "--workers", fmt.Sprint(o.workers)}, scenePaths(newDir, p.fresh)...)
		if o.force {
			segmentLine = slices.Insert(segmentLine, 7, "--force")
		}
		scoreLine := []string{"score", "--csv", scoresPath, segDir, newDir}
		if o.force {
			scoreLine = append(scoreLine, "--force")
		}
		var out *tuning.Outcome
		var mean *score.Report
		for _, st := range []struct {
			line []string
			run  func(io.Writer) int
		}{
			{tuneLine, func(w io.Writer) int {
				plan, err := p.tunePlan(tuneDir, tunedDir, o.workers, o.force)
				if err != nil {
					tuneError(ctx, err, stderr)
					return exitCode(err)
				}
				code, res, err := runTunePlan(ctx, plan, w, stderr)
				tuneError(ctx, err, stderr)
				out = res
				return code
			}},
			{segmentLine, func(w io.Writer) int {
				workers := o.workers
				if workers == 0 {
					workers = runtime.GOMAXPROCS(0)
				}
				return segmentFiles(ctx, tuned(p.settings(), out), &commonFlags{out: segDir, force: o.force, workers: workers}, scenePaths(newDir, p.fresh), w, stderr)
			}},
			{scoreLine, func(w io.Writer) int {
				m, err := demoScore(ctx, segDir, newDir, scoresPath, o.force, w)
				if err != nil {
					fmt.Fprintf(stderr, "cleave score: %v\n", err)
					return exitCode(err)
				}
				mean = m
				return exitOK
			}},
		} {
			fmt.Fprintf(stdout, "$ cleave %s\n", strings.Join(st.line, " "))
			var buf bytes.Buffer
			if code := st.run(&buf); code != exitOK {
				fmt.Fprintf(stderr, "cleave demo: cleave %s failed (exit %d)\n", st.line[0], code)
				return code
			}
			fmt.Fprint(stdout, indent(buf.String()))
		}
		rep := &out.Report
		ts := fmt.Sprintf("tuned %s %.4f", rep.Metric, rep.Score)
		if rep.CVScore != nil {
			ts += fmt.Sprintf(", cross-validated %.4f", *rep.CVScore)
		}
		results = append(results, result{p, mean.ARI, mean.F1, ts, scoresPath})
		fmt.Fprintln(stdout)
	}
	fmt.Fprintf(stdout, "== summary (%.1f s)\n", time.Since(start).Seconds())
	for _, r := range results {
		fmt.Fprintf(stdout, "%-6s %d new scenes: mean ARI %.4f, object F1 %.4f (%s)\n", r.part.name, len(r.part.fresh), r.ari, r.f1, r.tuneScore)
		fmt.Fprintf(stdout, "       %s\n", r.scoresPath)
	}
	fmt.Fprintf(stdout, "outputs: %s/{slide,plate}/{tune,new,tuned,segmented}; overlays in segmented/*.overlay.png, heatmaps in tuned/tune.png\n", o.out)
	return exitOK
}

// demoScenario generates the invented inspection day.
func demoScenario() []demoPart {
	// A reduced search so that the demo stays quick: max-ncut fixed.
	slide := demoPart{name: "slide", title: "fluorescent nuclei, tuned on 2 annotated scenes, applied to 3 new ones",
		background: "dark", maxNcut: 0.15, budget: 4, folds: 2}
	for k := 0; k < demoSlideTune+demoSlideNew; k++ {
		sc := scenes.Nuclei(scenes.NucleiOptions{Width: demoSize, Height: demoSize, Seed: demoSlideSeed + uint64(k)})
		if k < demoSlideTune {
			sc.Name = fmt.Sprintf("slide-tune-%d", k+1)
			slide.tune = append(slide.tune, sc)
		} else {
			sc.Name = fmt.Sprintf("slide-new-%d", k-demoSlideTune+1)
			slide.fresh = append(slide.fresh, sc)
		}
	}
	plate := demoPart{name: "plate", title: "machined plate under raking light, tuned on 1 annotated scene, applied to 2 new ones",
		background: "bright", flatten: 30, maxNcut: 0.15, budget: 4}
	for k := 0; k < demoPlateTune+demoPlateNew; k++ {
		sc := scenes.Plate(scenes.PlateOptions{Width: demoSize, Height: demoSize, Seed: demoPlateSeed + uint64(k)})
		if k < demoPlateTune {
			sc.Name = fmt.Sprintf("plate-tune-%d", k+1)
			plate.tune = append(plate.tune, sc)
		} else {
			sc.Name = fmt.Sprintf("plate-new-%d", k-demoPlateTune+1)
			plate.fresh = append(plate.fresh, sc)
		}
	}
	return []demoPart{slide, plate}
}

// writeScenes writes NAME.png and NAME.truth.png for each scene.
func writeScenes(dir string, ss []*scenes.Scene) error {
	for _, s := range ss {
		if err := scenes.WritePNG(filepath.Join(dir, s.Name+".png"), s.Image()); err != nil {
			return err
		}
		if err := scenes.WritePNG(filepath.Join(dir, s.Name+".truth.png"), s.TruthImage()); err != nil {
			return err
		}
	}
	return nil
}

// demoScore scores the label maps in segDir against the truths in
// truthDir (every file paired), writes the scores to csvPath and prints
// the table of cleave score; it returns the mean.
func demoScore(ctx context.Context, segDir, truthDir, csvPath string, force bool, w io.Writer) (*score.Report, error) {
	pairs, un, err := scoring.PairPredictions(segDir, truthDir)
	if err != nil {
		return nil, err
	}
	if un.Count() > 0 {
		return nil, fmt.Errorf("unpaired files: %s", unpairedMessage(un, segDir, truthDir))
	}
	res, err := scoring.Score(ctx, pairs, defaultTolerance, true)
	if err != nil {
		return nil, scoreErr(err)
	}
	if err := imageio.WriteAtomic(csvPath, force, func(w io.Writer) error { return scoring.WriteCSV(w, res, true) }); err != nil {
		return nil, fmt.Errorf("--csv: %w", err)
	}
	writeScoreTable(w, res.Pairs, res.Mean, true, defaultTolerance)
	return &res.Mean, nil
}

func scenePaths(dir string, ss []*scenes.Scene) []string {
	var p []string
	for _, s := range ss {
		p = append(p, filepath.Join(dir, s.Name+".png"))
	}
	return p
}

func indent(s string) string {
	if s == "" {
		return ""
	}
	return "  " + strings.ReplaceAll(strings.TrimSuffix(s, "\n"), "\n", "\n  ") + "\n"
}
