package main

import (
	"context"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/progress"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/scoring"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/tuning"
	"github.com/cleave-seg/cleave/segment/score"
	"github.com/cleave-seg/cleave/segment/tune"
	"github.com/spf13/pflag"
)

const tuneExample = `Example (tune on the shipped nuclei scenes, then use the result):

  cleave tune --images examples/nuclei --truth examples/nuclei --out tuned \
      --classes 2 --background dark
  cleave segment --params tuned/best.json --out results examples/nuclei/nuclei-1.png

The first command searches sigma-i, sigma-x and max-ncut (default ranges
around the automatic values) for the best mean object F1 (the default with
--background), writes tuned/tune.csv, tune.png, tune.json and best.json,
and prints the best with its other scores and seconds per image, and the
cross-validated score. Search a range yourself with, e.g., --sigma-x
4:32:5 (5 log-spaced values) or --radius 3,5,8; one value fixes a
parameter. --metric map tunes for mean average precision instead.
`

func tuneHelp(w io.Writer) {
	fs, _, _ := tuneFlags()
	fmt.Fprintf(w, `Usage: cleave tune --images DIR --truth DIR --out DIR [flags]

Choose segmentation parameters for a batch from a few hand-drawn masks.
Image NAME.ext in --images goes with the file in --truth whose stem is NAME,
NAME.truth, NAME_mask or NAME_truth (both may be one folder). Every setting
of a coarse log-spaced grid is segmented and scored on every image, then a
pattern search refines the best within --budget new settings; the mean
--metric over the images decides. When the best lies on an end of the
range of a continuous parameter (sigma-i, sigma-x, max-ncut, compactness
with two or more values), and so do all settings tied with it, that range
is widened by one grid step outward
and the search runs again: at most %d times per parameter, and again only
while it improves the score (stderr and tune.json say so). --folds K
cross-validation reports the score to expect on new images. Images are
decoded once; segmentations run in parallel, one thread each, so scores do
not depend on --workers.

Metric: with --background the default is f1, object F1 at IoU > 0.5: it
counts objects found, missed, split and merged, which is what users count;
map (mean average precision over IoU 0.50:0.95, Caicedo et al. 2019) also
rewards outlines exact to a pixel or two, which hand-drawn masks rarely
support. Without --background there are no objects and the default is
ari. Every setting is still scored with every metric (tune.csv: mean ari,
f1, map, ...).

Ties: scores within a relative %g of the best are equal. With
--tie-break faster (the default) the tied setting cheapest by a cost model
of the segmentation wins, not the clock: per image, the stored nonzeros of
the affinity graph times (1 + log2(regions)), the work of a balanced
recursive two-way cut (the re-cut of touching objects is not counted),
averaged over the images; of settings within %.0f%% of the lowest cost, the
smoother (wider kernels, then smaller max-ncut). --tie-break smoother keeps
the search's best, the smoother of the ties it compared. Neither uses the
clock, so best.json is the same on every run. The chosen setting and up to
%d tied ones are also timed (one segmentation per image on one thread, as
many at once as --workers, without the search's shared work: the seconds
'cleave segment --params' spends per decoded image); the median seconds
per image is reported as information and never changes the choice.
The automatic settings (kernel widths each image sets for itself) are
scored first and kept when no searched setting beats them by more than a
tie: with a few images many settings tie, and a value chosen among them
carries over to new images worse (tune.json: automatic_kept; the folds
of --folds follow the same rule).

%s
Flags:
%s
Outputs in --out: best.json (every parameter, for 'cleave segment --params'),
tune.csv (every setting evaluated: parameters, score per image, means,
seconds), tune.png (mean score over sigma-i x sigma-x at the best other
settings, on a colour range fixed in advance: 0 to 1, or 0 to the largest
value rounded up for vi; the grid's spread marked on the colour bar; the
best cell ringed), tune.json (scores, search space, evaluations).

Progress goes to stderr: settings evaluated of those planned (at most) and
the best mean score so far; on a terminal one line, else one per stage.

Exit status: 0 done, 1 a file could not be read or written, 2 wrong usage.

%s`, tune.MaxWidenings, tune.TieRelative, 100*(tune.CostMargin-1), tune.MaxTimed-1, tuneExample, flagUsages(fs), caution)
}

// Ranges of tune's own counts: each refinement evaluates at most
// maxBudget new settings (every one a segmentation of every image), and
// cross-validation runs the whole search once per fold.
const (
	maxBudget = 1000
	maxFolds  = 100
)

// defaultFolds is the K of --folds by default.
const defaultFolds = 3

// tuneOptions are tune's own flags.
type tuneOptions struct {
	images, truth, out string
	metric             string
	tieBreak           string
	budget, folds      int
	workers            int
	tolerance          float64
	splitMasks         string
	force, help        bool
	space              [tune.NumParams]string
}

// searchFlagHelp describes the search flags, which replace the segment
// flags of the same names.
var searchFlagHelp = [tune.NumParams]string{
	"intensity kernel widths to search: A:B:N (N log-spaced values), a,b,c, one value or auto (default: 5 values from 1/4 to 4 x the median automatic value)",
	"spatial kernel widths in pixels to search (default: 3 values from 1/2 to 2 x the median automatic value)",
	"stop thresholds to search (default 0.075,0.15)",
	"pixel-graph radii to search, e.g. 3,5,8 (default 5; matters only with a pixel graph)",
	"superpixel counts to search, e.g. 800,1500,3000; 0 = pixel graph (default auto)",
	"SLIC compactness values to search (default 20)",
	"with --background dark or bright, the shape split of touching objects: on, off, or on,off to search both (on = cut also where the outline is pinched, off = only along seams that do not run through a neck; default on)",
}

func tuneFlags() (*pflag.FlagSet, *settings, *tuneOptions) {
	fs := pflag.NewFlagSet("tune", pflag.ContinueOnError)
	fs.SortFlags = false
	s := &settings{}
	o := &tuneOptions{}
	fs.StringVar(&o.images, "images", "", "folder of images to tune on")
	fs.StringVar(&o.truth, "truth", "", "folder of truth label images (may be the --images folder)")
	fs.StringVarP(&o.out, "out", "o", "", "folder for best.json, tune.csv, tune.png and tune.json (created if missing)")
	fs.StringVar(&o.metric, "metric", "", "score to maximize: "+strings.Join(metricNames(tuneMetrics), ", ")+" (vi is minimized); default f1 with --background, else ari")
	fs.StringVar(&o.tieBreak, "tie-break", "faster", "among settings tied on --metric: faster (the cheapest by a cost model, graph nonzeros x (1 + log2 regions); of those within 10% of it, the smoother) or smoother (the search's best, the smoother of the ties it compared); neither uses the clock")
	fs.IntVar(&o.budget, "budget", 8, fmt.Sprintf("most new settings one refinement after the grid evaluates (per search and per widening; 0 = grid only; at most %d)", maxBudget))
	fs.IntVar(&o.folds, "folds", defaultFolds, fmt.Sprintf("K-fold cross-validation over images (leave-one-out with fewer than K images; 0 or 1 = off; at most %d)", maxFolds))
	fs.Float64Var(&o.tolerance, "tolerance", defaultTolerance, "boundary matching distance in pixels for --metric bf (0 to the image diagonal)")
	addSplitMasksFlag(fs, &o.splitMasks)
	for _, d := range tune.Params() {
		fs.StringVar(&o.space[d], d.String(), "", searchFlagHelp[d])
	}
	// The other segment parameters pass through as fixed settings.
	scratch := pflag.NewFlagSet("params", pflag.ContinueOnError)
	scratch.SortFlags = false
	addParamFlags(scratch, s)
	scratch.VisitAll(func(f *pflag.Flag) {
		for _, d := range tune.Params() {
			if f.Name == d.String() {
				return
			}
		}
		fs.AddFlag(f)
	})
	fs.IntVar(&o.workers, "workers", 0, fmt.Sprintf("segmentations run at once (0 = all cores; at most %d); results do not depend on it", maxWorkers))
	fs.BoolVar(&o.force, "force", false, "overwrite existing outputs in --out")
	fs.BoolVarP(&o.help, "help", "h", false, "show this help")
	return fs, s, o
}

// tuneMetrics are the metrics tune can maximize (vi: minimize).
var tuneMetrics = []score.Metric{score.MetricF1, score.MetricMAP, score.MetricARI, score.MetricDice, score.MetricBF, score.MetricCovering, score.MetricVI}

// chooseMetric is the --metric given, or the default: object F1 when
// objects are segmented (--background), ARI otherwise. It returns the
// metric and why it was chosen.
func chooseMetric(given, background string) (score.Metric, string, error) {
	switch {
	case given != "":
		m, err := score.ParseMetric(given)
		if err != nil || !slices.Contains(tuneMetrics, m) {
			return 0, "", usagef("--metric must be one of %s, got %q", strings.Join(metricNames(tuneMetrics), ", "), given)
		}
		return m, "--metric", nil
	case background != "":
		return score.MetricF1, "default with --background: objects counted", nil
	}
	return score.MetricARI, "default without --background: no objects to count", nil
}

func runTune(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	fs, s, o := tuneFlags()
	if code, done := parseCommand(fs, args, "tune", &o.help, tuneHelp, stdout, stderr); done {
		return code
	}
	code, err := tuneCommand(ctx, fs, s, o, stdout, stderr)
	tuneError(ctx, err, stderr)
	return code
}

// tuneError prints tune's error, if any.
func tuneError(ctx context.Context, err error, stderr io.Writer) {
	switch {
	case err != nil && ctx.Err() != nil:
		fmt.Fprintln(stderr, "cleave tune: interrupted")
	case err != nil:
		fmt.Fprintf(stderr, "cleave tune: %v\n", err)
	}
}

// tuneCommand maps tune's command line to a tunePlan and runs it.
func tuneCommand(ctx context.Context, fs *pflag.FlagSet, s *settings, o *tuneOptions, stdout, stderr io.Writer) (int, error) {
	start := time.Now()
	if fs.NArg() > 0 {
		return exitUsage, usagef("unexpected arguments %q; give folders with --images and --truth", fs.Args())
	}
	switch {
	case o.images == "":
		return exitUsage, usagef("--images is required (run 'cleave tune --help')")
	case o.truth == "":
		return exitUsage, usagef("--truth is required")
	case o.out == "":
		return exitUsage, usagef("--out is required")
	case o.tieBreak != "faster" && o.tieBreak != "smoother":
		return exitUsage, usagef("--tie-break must be faster or smoother, got %q", o.tieBreak)
	case o.budget < 0 || o.budget > maxBudget:
		return exitUsage, usagef("--budget must be 0 to %d, got %d", maxBudget, o.budget)
	case o.folds < 0 || o.folds > maxFolds:
		return exitUsage, usagef("--folds must be 0 to %d, got %d", maxFolds, o.folds)
	case o.workers < 0 || o.workers > maxWorkers:
		return exitUsage, usagef("--workers must be 0 (all cores) to %d, got %d", maxWorkers, o.workers)
	case o.tolerance < 0 || math.IsNaN(o.tolerance) || math.IsInf(o.tolerance, 0):
		return exitUsage, usagef("--tolerance must be a number of pixels >= 0, got %v", o.tolerance)
	}
	metric, metricWhy, err := chooseMetric(o.metric, s.Background)
	if err != nil {
		return exitUsage, err
	}
	split, err := parseSplitMasks(o.splitMasks)
	if err != nil {
		return exitUsage, err
	}
	cfg := &tuning.Config{Metric: metric, MetricChoice: metricWhy, Tolerance: o.tolerance, Workers: defaultWorkers(o.workers),
		SmootherTies: o.tieBreak == "smoother", Budget: o.budget, Folds: o.folds, Voice: voice(), Start: start}
	for _, d := range tune.Params() {
		if o.space[d] == "" {
			continue
		}
		ax, err := parseSpec(d, o.space[d])
		if err != nil {
			return exitUsage, err
		}
		cfg.Space[d] = ax
	}
	code, _, err := runTunePlan(ctx, &tunePlan{settings: *s, cfg: cfg, split: split, images: o.images, truth: o.truth, out: o.out, force: o.force}, stdout, stderr)
	return code, err
}

// tunePlan is one tune as typed values, from the command line or the
// demo: the parameters as given (the fixed ones), the tuning
// configuration with the axes given (an axis with neither values nor
// Auto was not given and takes its default), how truths are read, the
// folders and whether outputs may be replaced.
type tunePlan struct {
	settings           settings
	cfg                *tuning.Config
	split              bool
	images, truth, out string
	force              bool
}

// runTunePlan checks the fixed settings, pairs and decodes the images,
// fills the default axes, runs the search (tuning.Run), writes the files
// and prints the summary. It returns the exit status and, when the search
// finished, its outcome.
func runTunePlan(ctx context.Context, p *tunePlan, stdout, stderr io.Writer) (int, *tuning.Outcome, error) {
	s, cfg := &p.settings, p.cfg
	var given [tune.NumParams]bool
	for _, d := range tune.Params() {
		given[d] = cfg.Space[d].Values != nil || cfg.Space[d].Auto
	}
	// A searched parameter given as auto or as one value is fixed: the
	// probe checks the fixed settings now (a wrong --classes is a usage
	// error), and the same settings score the baseline and give the
	// centres of the default ranges.
	fixed := *s
	for _, d := range tune.Params() {
		if given[d] && (cfg.Space[d].Auto || len(cfg.Space[d].Values) == 1) {
			fixed = withParam(fixed, d, cfg.Space[d])
		}
	}
	loadRes, err := resolve(fixed, cfg.Workers)
	if err != nil {
		return exitUsage, nil, err
	}
	if s.Planes == pipeline.PlanesAll {
		return exitUsage, nil, usagef("--planes all is for cleave segment and batch; tune reads one plane per image (--planes one with --plane, or brightest)")
	}
	defer pipeline.SetCollector(loadRes.Params.MaxMemory)()
	if !p.force {
		for _, n := range tuning.Outputs {
			if path := filepath.Join(p.out, n); exists(path) {
				return exitFail, nil, fmt.Errorf("output %s already exists (use --force to overwrite)", path)
			}
		}
	}
	pairs, unpaired, err := scoring.PairImages(p.images, p.truth)
	if err != nil {
		return exitFail, nil, err
	}
	for _, u := range unpaired {
		fmt.Fprintf(stderr, "cleave tune: %s has no truth (want NAME, NAME.truth, NAME_mask or NAME_truth in %s); skipped\n", u, p.truth)
	}
	if len(pairs) == 0 {
		return exitFail, nil, fmt.Errorf("no image in %s has a truth in %s", p.images, p.truth)
	}
	readTruth := func(path string) (scoring.Map, error) { return scoring.Read(path, p.split) }
	checkTol := func(im *tuning.Image) error {
		return checkTolerance(cfg.Tolerance, im.Pair.Truth, im.Truth.Width, im.Truth.Height)
	}
	cfg.Images, err = tuning.Load(ctx, pairs, loadRes, readTruth, checkTol)
	if err != nil {
		return exitCode(err), nil, err
	}
	br, err := resolve(fixed, 1)
	if err != nil {
		return exitUsage, nil, err
	}
	cfg.Base = br.Params
	// Defaults of the axes not given; sigma-i and sigma-x are left empty,
	// for tuning.Run to centre on the automatic values.
	if !given[tune.MaxNcut] {
		cfg.Space[tune.MaxNcut] = tune.DefaultAxis(tune.MaxNcut, []float64{defaults.MaxNcut / 2, defaults.MaxNcut})
	}
	if !given[tune.Radius] {
		cfg.Space[tune.Radius] = tune.DefaultAxis(tune.Radius, []float64{float64(s.Radius)})
	}
	if !given[tune.Superpixels] {
		cfg.Space[tune.Superpixels] = tune.AutoAxis(tune.Superpixels, "auto (default)")
		if sp, auto, err := parseAuto("superpixels", s.Superpixels); err == nil && !auto {
			cfg.Space[tune.Superpixels] = tune.DefaultAxis(tune.Superpixels, []float64{sp})
		}
	}
	if !given[tune.Compactness] {
		cfg.Space[tune.Compactness] = tune.DefaultAxis(tune.Compactness, []float64{s.Compactness})
	}
	if !given[tune.Necks] {
		v := tune.On
		if s.NecksAsked() == "off" {
			v = tune.Off
		}
		cfg.Space[tune.Necks] = tune.DefaultAxis(tune.Necks, []float64{v})
	}
	cfg.Fixed = s.Map()
	for _, d := range tune.Params() {
		cfg.Given[d] = baselineText(*s, d)
	}
	cfg.Unpaired = unpaired
	prog := progress.NewTune(stderr, cfg.Metric)
	cfg.Progress = prog
	defer prog.Finish()
	out, err := tuning.Run(ctx, cfg)
	if err != nil {
		return exitFail, nil, err
	}
	if err := out.Write(p.out, p.force); err != nil {
		return exitFail, nil, err
	}
	tuneSummary(stdout, out.Report, len(cfg.Images), p.out)
	return exitOK, out, nil
}

func exists(p string) bool { _, err := os.Lstat(p); return err == nil }

// withParam fixes one searched parameter in a settings value to the
// single value of its axis, or to auto.
func withParam(s settings, d tune.Param, ax tune.Axis) settings {
	v := math.NaN()
	if !ax.Auto {
		v = ax.Values[0]
	}
	txt := tune.FormatValue(v)
	if ax.Auto {
		txt = "auto"
	}
	switch d {
	case tune.SigmaI:
		s.SigmaI = txt
	case tune.SigmaX:
		s.SigmaX = txt
	case tune.Superpixels:
		s.Superpixels = txt
	case tune.MaxNcut:
		s.MaxNcut = v
	case tune.Radius:
		s.Radius = int(v)
	case tune.Compactness:
		s.Compactness = v
	case tune.Necks:
		s.Necks = tune.OnOff(v)
	}
	return s
}

// baselineText is a parameter of the baseline row as given.
func baselineText(s settings, d tune.Param) string {
	switch d {
	case tune.SigmaI:
		return strings.TrimSpace(s.SigmaI)
	case tune.SigmaX:
		return strings.TrimSpace(s.SigmaX)
	case tune.Superpixels:
		return strings.TrimSpace(s.Superpixels)
	case tune.MaxNcut:
		return tune.FormatValue(s.MaxNcut)
	case tune.Radius:
		return strconv.Itoa(s.Radius)
	case tune.Necks:
		return s.NecksAsked()
	}
	return tune.FormatValue(s.Compactness)
}

// summary prints the short report on stdout.
func tuneSummary(w io.Writer, rep tuning.Report, nImages int, out string) {
	widened := ""
	if rep.WidenedSettings > 0 {
		widened = fmt.Sprintf(" + %d widened", rep.WidenedSettings)
	}
	fmt.Fprintf(w, "tuned on %s: %d grid + %d refined%s settings, %.1f s\n", plural(nImages, "image"), rep.GridSize, rep.Refined, widened, rep.Seconds)
	fmt.Fprintf(w, "metric:              %s (%s)\n", rep.Metric, rep.MetricChoice)
	var split, unsplit []string
	for _, m := range rep.TruthMaps {
		switch m.Kind {
		case scoring.KindMaskComponents:
			split = append(split, fmt.Sprintf("%s %d", m.Name, m.Objects))
		case scoring.KindMaskUnsplit:
			unsplit = append(unsplit, m.Name)
		}
	}
	if len(split) > 0 {
		fmt.Fprintf(w, "truth masks:         %d of %s %s, scored by their 8-connected components as objects (%s); --split-masks off scores each as one label\n", len(split), plural(len(rep.TruthMaps), "truth"), isBinaryMasks(len(split)), strings.Join(split, ", "))
	}
	if len(unsplit) > 0 {
		fmt.Fprintf(w, "truth masks:         %d of %s %s, each scored as one label (--split-masks off): %s\n", len(unsplit), plural(len(rep.TruthMaps), "truth"), isBinaryMasks(len(unsplit)), strings.Join(unsplit, ", "))
	}
	others := func(m *score.Report) string {
		if m == nil {
			return ""
		}
		var p []string
		for _, n := range []score.Metric{score.MetricF1, score.MetricMAP, score.MetricARI} {
			if n != rep.Metric {
				p = append(p, fmt.Sprintf("%s %.4f", n, m.Get(n)))
			}
		}
		return "; " + strings.Join(p, ", ")
	}
	if rep.Baseline != nil {
		fmt.Fprintf(w, "automatic settings:  mean %s %.4f%s\n", rep.Metric, *rep.Baseline, others(rep.BaselineMetrics))
	}
	var parts []string
	for _, d := range tune.Params() {
		if _, ok := rep.Best[d.String()]; !ok {
			continue
		}
		parts = append(parts, d.String()+" "+rep.Best[d.String()])
	}
	per := "time not measured"
	if rep.SecondsPerImage != nil {
		per = fmt.Sprintf("%.3f s per image", *rep.SecondsPerImage)
	}
	fmt.Fprintf(w, "best:                mean %s %.4f%s; %s\n", rep.Metric, rep.Score, others(rep.BestMetrics), per)
	fmt.Fprintf(w, "                     (%s)\n", strings.Join(parts, ", "))
	if rep.AutomaticKept {
		fmt.Fprintf(w, "kept:                the automatic settings: no searched setting beat them by more than a tie (relative %g), and widths each image sets for itself carry over to new images better than a value chosen among ties\n", rep.TieRelative)
	} else if n := len(rep.Tied); n > 1 {
		fmt.Fprintf(w, "ties:                %d settings tied (within a relative %g); the cheapest by the cost model, or the smoother within %.0f%% of its cost, chosen (see tune.json)\n", n, rep.TieRelative, 100*(tune.CostMargin-1))
	}
	for _, wd := range rep.Widenings {
		fmt.Fprintf(w, "widened:             %s beyond its %s end %s to %s\n", wd.Parameter, wd.Side, tune.FormatValue(wd.Edge), tune.FormatValue(wd.Added))
	}
	if rep.CVScore != nil {
		kind := fmt.Sprintf("%d-fold", rep.CVFolds)
		if rep.CVFolds == nImages {
			kind = "leave-one-out"
		}
		fmt.Fprintf(w, "cross-validated:     held-out %s %.4f (%s; expect about this on new images)\n", rep.Metric, *rep.CVScore, kind)
	} else if rep.CVFolds >= 2 {
		why := rep.CVError
		if why == "" {
			why = "a fold's choice failed (see tune.json)"
		}
		fmt.Fprintf(w, "cross-validated:     no score: %s\n", why)
	} else {
		fmt.Fprintf(w, "cross-validated:     not run (needs --folds >= 2 and at least 2 images)\n")
	}
	fmt.Fprintf(w, "wrote %s (best.json, tune.csv, tune.png, tune.json)\n", out)
	fmt.Fprintf(w, "next: cleave segment --params %s IMAGE...\n", filepath.Join(out, "best.json"))
}

// isBinaryMasks is the predicate of "N of M truths ...", agreeing with N.
func isBinaryMasks(n int) string {
	if n == 1 {
		return "is a binary mask"
	}
	return "are binary masks"
}
