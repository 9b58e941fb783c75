package main

import (
	"context"
	"fmt"
	"io"
	"math"
	"strings"
	"time"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/tuning"
	"github.com/cleave-seg/cleave/segment/parallel"
	"github.com/cleave-seg/cleave/segment/score"
	"github.com/cleave-seg/cleave/segment/tune"
	"github.com/spf13/pflag"
)

var tuneExample = fmt.Sprintf(`Example (tune on the shipped nuclei scenes, then use the result):

  cleave tune --images examples/nuclei --truth examples/nuclei --out tuned \
      --classes 2 --background dark
  cleave segment --params tuned/best.json --out results examples/nuclei/nuclei-1.png

The first command searches sigma-i, sigma-x and max-ncut (default ranges
around the automatic values) and the faint search (off and %d; --faint)
for the best mean object F1 (the default with --background), writes
tuned/tune.csv, tune.png, tune.json and best.json, and prints the best
with its other scores and seconds per image, and the cross-validated
score. Search a range yourself with, e.g., --sigma-x
4:32:5 (5 log-spaced values) or --radius 3,5,8; one value fixes a
parameter. --metric map tunes for mean average precision instead.
`, tuning.DefaultFaintLevel)

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
of --folds follow the same rule). They are also kept when the
cross-validated score (--folds) is no better than theirs: the search's
choices did not carry over to images they were not chosen on
(automatic_kept_by: tie or cross-validation).

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
	"with --background dark or bright, the shape split of touching objects: on, off, or on,off to search both (on = cut also where the outline is pinched or notched, off = only along seams that do not run through a neck; default on)",
	fmt.Sprintf("with --classes 2 and --background dark or bright, levels of the faint-object search against the local background to try, e.g. 0,4,6 (0 = off; default 0,%d; otherwise 0)", tuning.DefaultFaintLevel),
}

func tuneFlags() (*pflag.FlagSet, *settings, *tuneOptions) {
	fs := pflag.NewFlagSet("tune", pflag.ContinueOnError)
	fs.SortFlags = false
	s := &settings{}
	o := &tuneOptions{}
	fs.StringVar(&o.images, "images", "", "folder of images to tune on")
	fs.StringVar(&o.truth, "truth", "", "folder of truth label images (may be the --images folder)")
	fs.StringVarP(&o.out, "out", "o", "", "folder for best.json, tune.csv, tune.png and tune.json (created if missing)")
	fs.StringVar(&o.metric, "metric", "", "score to maximize: "+strings.Join(metricNames(score.Objectives()), ", ")+" (vi is minimized); default f1 with --background, else ari")
	fs.StringVar(&o.tieBreak, "tie-break", "faster", "among settings tied on --metric: faster (the cheapest by a cost model, graph nonzeros x (1 + log2 regions); of those within 10% of it, the smoother) or smoother (the search's best, the smoother of the ties it compared); neither uses the clock")
	fs.IntVar(&o.budget, "budget", 8, fmt.Sprintf("most new settings one refinement after the grid evaluates (per search and per widening; 0 = grid only; at most %d)", maxBudget))
	fs.IntVar(&o.folds, "folds", tuning.DefaultFolds, fmt.Sprintf("K-fold cross-validation over images (leave-one-out with fewer than K images; 0 or 1 = off; at most %d)", maxFolds))
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

// chooseMetric is the --metric given, or the default
// (tuning.DefaultMetric). It returns the metric and why it was chosen.
func chooseMetric(given, background string) (score.Metric, string, error) {
	if given == "" {
		m, why := tuning.DefaultMetric(background)
		return m, flagQuoted(why), nil
	}
	m, err := score.ParseMetric(given)
	if err != nil || !m.Objective() {
		return 0, "", usagef("--metric must be one of %s, got %q", strings.Join(metricNames(score.Objectives()), ", "), given)
	}
	return m, "--metric", nil
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

// tuneErr is an error of tuning in the command's words: an error in the
// fixed settings or the tolerance is a usage error (exit 2).
func tuneErr(err error) error { return scoreErr(requestErr(err)) }

// tuneCommand maps tune's command line to a tuning.Plan and runs it.
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
	cfg := &tuning.Config{Metric: metric, MetricChoice: metricWhy, Tolerance: o.tolerance, Workers: parallel.Workers(o.workers),
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
	code, _, err := runTunePlan(ctx, &tuning.Plan{Request: *s, Config: cfg, Split: split, Images: o.images, Truth: o.truth, Out: o.out, Force: o.force, Log: stderr}, stdout)
	return code, err
}

// runTunePlan runs a tune (tuning.Plan.Run) and prints its summary. It
// returns the exit status and, when the search finished, its outcome.
func runTunePlan(ctx context.Context, p *tuning.Plan, stdout io.Writer) (int, *tuning.Outcome, error) {
	out, err := p.Run(ctx)
	if err != nil {
		err = tuneErr(err)
		return exitCode(err), nil, err
	}
	out.WriteSummary(stdout, p.Out)
	return exitOK, out, nil
}

// parseSpec reads a search axis as tune's flags give it
// (tuning.ParseAxis); every error is a usage error naming the flag.
func parseSpec(d tune.Param, text string) (tune.Axis, error) {
	ax, err := tuning.ParseAxis(d, text)
	if err != nil {
		return ax, &usageError{err}
	}
	return ax, nil
}
