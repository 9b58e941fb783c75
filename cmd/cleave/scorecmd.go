package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/scoring"
	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/segment/score"
	"github.com/spf13/pflag"
)

// metricNames are the names of ms (their json keys and columns).
func metricNames(ms []score.Metric) []string { return scoring.MetricNames(ms) }

// defaultTolerance is the boundary matching tolerance in pixels
// (scoring.DefaultTolerance).
const defaultTolerance = scoring.DefaultTolerance

const scoreExample = `Example (score cleave's label map of a shipped nuclei scene against its mask):

  cleave segment --classes 2 --background dark --out results examples/nuclei/nuclei-1.png
  cleave score results/nuclei-1.labels.png examples/nuclei/nuclei-1.truth.png
  cleave score --json --csv scores.csv results examples/nuclei

The folder form pairs NAME.labels.png (or NAME.png) in PRED with NAME.png,
NAME.truth.png, NAME_mask.png or NAME_truth.png in TRUTH and prints one row
per pair and the mean. A file with no partner on the other side fails the
run naming it; with --paired-only the pairs are scored and each unpaired
file is named on stderr.
`

func scoreHelp(w io.Writer) {
	fs, _ := scoreFlags()
	fmt.Fprintf(w, `Usage: cleave score [flags] PRED TRUTH

Compare label maps with their ground truth. PRED and TRUTH are two label
images (8/16-bit gray PNG or TIFF; any integer labels) or two folders.
Label 0 is background for the object measures. An image holding only 0
and one other value (a 0/255 mask, as hand annotations and thresholds are
saved) is a binary mask: its 8-connected components (pixels joined by a
side or a corner) become the objects, so that a mask of many nuclei
counts many objects, not one; the output says which images were read so
(--json: pred_map and truth_map, present for a mask, with its kind,
mask-components or mask-unsplit, and the objects counted; --csv: the
columns pred_map, pred_objects, truth_map, truth_objects, kind labels for
a label map). --split-masks off scores such
an image as it is, one label.

Metrics (natural log for VI):
  ari, rand           adjusted Rand index and Rand index (Hubert and Arabie 1985)
  vi, vi_split,       variation of information and its over-segmentation
    vi_merge            (split) and under-segmentation (merge) parts (Meila 2007)
  dice, iou           foreground overlap (truth 0 = background)
  precision, recall,  objects matched at IoU > 0.5 (common practice in
    f1, mean_iou        cell-segmentation benchmarks) and their mean IoU
  map                 mean average precision over IoU 0.50, 0.55, ..., 0.95,
                        AP(t) = TP/(TP+FP+FN) (Caicedo et al. 2019)
  bp, br, bf          boundary precision, recall and F within --tolerance
                        pixels (distance approximation of Martin, Fowlkes
                        and Malik 2004)
  covering            segmentation covering of the truth (Arbelaez et al. 2011)

%s
Flags:
%s
Exit status: 0 scored, 1 a file is missing, unreadable, of another size or
unpaired (with --paired-only: no pair at all), 2 wrong usage (also a --tolerance above an image's diagonal).

%s`, scoreExample, flagUsages(fs), caution)
}

type scoreOptions struct {
	splitMasks string
	json       bool
	csv        string
	tolerance  float64
	force      bool
	pairedOnly bool
	help       bool
}

func scoreFlags() (*pflag.FlagSet, *scoreOptions) {
	fs := pflag.NewFlagSet("score", pflag.ContinueOnError)
	fs.SortFlags = false
	o := &scoreOptions{}
	fs.BoolVar(&o.json, "json", false, "print one JSON object instead of the table (metric names as keys; folders: \"pairs\" and \"mean\")")
	fs.StringVar(&o.csv, "csv", "", "also write the scores to this CSV file (one row per pair, then the mean)")
	fs.Float64Var(&o.tolerance, "tolerance", defaultTolerance, "boundary matching distance in pixels for bp, br and bf (0 to the image diagonal)")
	addSplitMasksFlag(fs, &o.splitMasks)
	fs.BoolVar(&o.force, "force", false, "overwrite an existing --csv file")
	fs.BoolVar(&o.pairedOnly, "paired-only", false, "folders: score the files that pair up and name the unpaired ones on stderr, instead of failing on them")
	fs.BoolVarP(&o.help, "help", "h", false, "show this help")
	return fs, o
}

// addSplitMasksFlag registers --split-masks (score and tune).
func addSplitMasksFlag(fs *pflag.FlagSet, v *string) {
	fs.StringVar(v, "split-masks", "on", "on: a label image holding only 0 and one other value is a binary mask, and its 8-connected components (sides and corners) are the objects; off: it is scored as it is, one label")
}

// parseSplitMasks reads --split-masks.
func parseSplitMasks(v string) (bool, error) {
	switch v {
	case "on":
		return true, nil
	case "off":
		return false, nil
	}
	return false, usagef("--split-masks must be on or off, got %q", v)
}

// runScore is cleave score.
func runScore(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	fs, o := scoreFlags()
	if code, done := parseCommand(fs, args, "score", &o.help, scoreHelp, stdout, stderr); done {
		return code
	}
	if fs.NArg() != 2 {
		fmt.Fprintf(stderr, "cleave score: want PRED and TRUTH, got %s (run 'cleave score --help')\n", plural(fs.NArg(), "argument"))
		return exitUsage
	}
	if o.tolerance < 0 || math.IsNaN(o.tolerance) || math.IsInf(o.tolerance, 0) {
		fmt.Fprintf(stderr, "cleave score: --tolerance must be a number of pixels >= 0, got %v\n", o.tolerance)
		return exitUsage
	}
	split, err := parseSplitMasks(o.splitMasks)
	if err != nil {
		fmt.Fprintf(stderr, "cleave score: %v\n", err)
		return exitUsage
	}
	pairs, folders, err := scoring.PairArgs(fs.Arg(0), fs.Arg(1), o.pairedOnly, stderr, voice())
	if err != nil {
		err = requestErr(err)
		fmt.Fprintf(stderr, "cleave score: %v\n", err)
		return exitCode(err)
	}
	res, err := scoring.Score(ctx, pairs, o.tolerance, split)
	switch {
	case ctx.Err() != nil:
		fmt.Fprintln(stderr, "cleave score: interrupted")
		return exitFail
	case err != nil:
		err = scoreErr(err)
		fmt.Fprintf(stderr, "cleave score: %v\n", err)
		return exitCode(err)
	}
	if o.csv != "" {
		if err := imageio.WriteAtomic(o.csv, o.force, func(w io.Writer) error { return scoring.WriteCSV(w, res, folders) }); err != nil {
			fmt.Fprintf(stderr, "cleave score: --csv: %v\n", err)
			return exitFail
		}
	}
	if o.json {
		if err := scoring.WriteJSON(stdout, res, folders); err != nil {
			fmt.Fprintf(stderr, "cleave score: %v\n", err)
			return exitFail
		}
		return exitOK
	}
	scoring.WriteTable(stdout, res, folders, o.tolerance, voice())
	return exitOK
}

// scoreErr is an error of scoring in the command's words: a tolerance
// above an image's diagonal is a usage error naming --tolerance.
func scoreErr(err error) error {
	var te *scoring.ToleranceError
	if errors.As(err, &te) {
		return &usageError{err}
	}
	return err
}
