package main

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"
	"text/tabwriter"

	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/segment/score"
	"github.com/spf13/pflag"
)

// metricNames are the names of ms (their json keys and columns).
func metricNames(ms []score.Metric) []string {
	names := make([]string, len(ms))
	for i, m := range ms {
		names[i] = m.String()
	}
	return names
}

// defaultTolerance is the boundary matching tolerance in pixels: a choice
// for images a few hundred pixels wide (Martin, Fowlkes and Malik 2004 scale
// theirs with the image diagonal).
const defaultTolerance = 2

// scoreMaps computes every metric of pred against truth (width x height).
func scoreMaps(pred, truth []int32, width, height int, tol float64) score.Report {
	m, _ := score.Compare(context.Background(), pred, truth, width, height, tol)
	return m
}

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

// scoredPair is one scored pair.
type scoredPair struct {
	Name  string `json:"name"`
	Pred  string `json:"pred"`
	Truth string `json:"truth"`
	score.Report
	PredMap  mapReading `json:"-"`
	TruthMap mapReading `json:"-"`
	// PredMask and TruthMask are set when that side is a binary mask
	// (absent for label maps, so their JSON is as before).
	PredMask  *mapReading `json:"pred_map,omitempty"`
	TruthMask *mapReading `json:"truth_map,omitempty"`
}

// masksOnly is r when it is a binary mask, else nil (the JSON keys).
func masksOnly(r mapReading) *mapReading {
	if r.Kind == readLabels {
		return nil
	}
	return &r
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

// How a label image was read for scoring (mapReading.Kind).
const (
	readLabels         = "labels"          // a label map: values as they are
	readMaskComponents = "mask-components" // a binary mask, its 8-connected components numbered 1..n
	readMaskUnsplit    = "mask-unsplit"    // a binary mask kept as one label (--split-masks off)
)

// mapReading says how one label image was read: as labels or as a binary
// mask, and how many objects (labels above 0) were scored.
type mapReading struct {
	Kind    string `json:"kind"`
	Objects int    `json:"objects"`
}

// describe is the reading in words, for the text output.
func (r mapReading) describe() string {
	switch r.Kind {
	case readMaskComponents:
		return fmt.Sprintf("a binary mask (0 and one other value): its %s, the 8-connected components, were scored (--split-masks off scores it as one label)", plural(r.Objects, "object"))
	case readMaskUnsplit:
		return "a binary mask (0 and one other value), scored as one label (--split-masks off)"
	}
	return fmt.Sprintf("a label map of %s", plural(r.Objects, "object"))
}

// readScoreMap reads a label image for scoring (imageio.ReadLabels) and,
// when split is set and it is a binary mask (score.BinaryValue), replaces
// it by its 8-connected components (score.MaskComponents): hand-drawn
// annotations and thresholded masks are saved that way, and read as one
// label they would make every object one.
func readScoreMap(path string, split bool) ([]int32, int, int, mapReading, error) {
	labels, w, h, err := imageio.ReadLabels(path)
	if err != nil {
		return nil, 0, 0, mapReading{}, err
	}
	if _, binary := score.BinaryValue(labels); binary {
		if !split {
			return labels, w, h, mapReading{Kind: readMaskUnsplit, Objects: 1}, nil
		}
		comp, n := score.MaskComponents(labels, w, h)
		return comp, w, h, mapReading{Kind: readMaskComponents, Objects: n}, nil
	}
	seen := map[int32]bool{}
	for _, l := range labels {
		if l != 0 {
			seen[l] = true
		}
	}
	return labels, w, h, mapReading{Kind: readLabels, Objects: len(seen)}, nil
}

func runScore(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	code, _ := scoreCommand(ctx, args, stdout, stderr)
	return code
}

// scoreCommand is cleave score: it returns the exit status and, when the
// pairs were scored, the mean of their scores (the demo's summary).
func scoreCommand(ctx context.Context, args []string, stdout, stderr io.Writer) (int, *score.Report) {
	fs, o := scoreFlags()
	if code, done := parseCommand(fs, args, "score", &o.help, scoreHelp, stdout, stderr); done {
		return code, nil
	}
	if fs.NArg() != 2 {
		fmt.Fprintf(stderr, "cleave score: want PRED and TRUTH, got %s (run 'cleave score --help')\n", plural(fs.NArg(), "argument"))
		return exitUsage, nil
	}
	if o.tolerance < 0 || math.IsNaN(o.tolerance) || math.IsInf(o.tolerance, 0) {
		fmt.Fprintf(stderr, "cleave score: --tolerance must be a number of pixels >= 0, got %v\n", o.tolerance)
		return exitUsage, nil
	}
	split, err := parseSplitMasks(o.splitMasks)
	if err != nil {
		fmt.Fprintf(stderr, "cleave score: %v\n", err)
		return exitUsage, nil
	}
	predArg, truthArg := fs.Arg(0), fs.Arg(1)
	pst, err := os.Stat(predArg)
	if err != nil {
		fmt.Fprintf(stderr, "cleave score: prediction: %v\n", err)
		return exitFail, nil
	}
	tst, err := os.Stat(truthArg)
	if err != nil {
		fmt.Fprintf(stderr, "cleave score: truth: %v\n", err)
		return exitFail, nil
	}
	var pairs []pair
	folders := pst.IsDir()
	switch {
	case pst.IsDir() != tst.IsDir():
		fmt.Fprintf(stderr, "cleave score: give two files or two folders; %s is a folder and %s is not\n", map[bool]string{true: predArg, false: truthArg}[pst.IsDir()], map[bool]string{true: truthArg, false: predArg}[pst.IsDir()])
		return exitUsage, nil
	case folders:
		var un unpairedFiles
		if pairs, un, err = pairScore(predArg, truthArg); err != nil {
			fmt.Fprintf(stderr, "cleave score: %v\n", err)
			return exitFail, nil
		}
		if un.count() > 0 && !o.pairedOnly {
			fmt.Fprintf(stderr, "cleave score: unpaired files: %s; --paired-only scores the %s that pair up and names the rest\n", unpairedMessage(un, predArg, truthArg), plural(len(pairs), "pair"))
			return exitFail, nil
		}
		for _, f := range un.noTruth {
			fmt.Fprintf(stderr, "cleave score: not scored: %s has no truth in %s (want NAME, NAME.truth, NAME_mask or NAME_truth)\n", f, truthArg)
		}
		for _, f := range un.noPred {
			fmt.Fprintf(stderr, "cleave score: not scored: %s has no prediction in %s\n", f, predArg)
		}
		if len(pairs) == 0 {
			fmt.Fprintf(stderr, "cleave score: no prediction in %s pairs with a truth in %s\n", predArg, truthArg)
			return exitFail, nil
		}
	default:
		pairs = []pair{{name: stemOf(predArg), image: predArg, truth: truthArg}}
	}
	var scored []scoredPair
	for _, p := range pairs {
		if ctx.Err() != nil {
			fmt.Fprintln(stderr, "cleave score: interrupted")
			return exitFail, nil
		}
		m, pr, tr, err := scoreFiles(ctx, p.image, p.truth, o.tolerance, split)
		if ctx.Err() != nil {
			fmt.Fprintln(stderr, "cleave score: interrupted")
			return exitFail, nil
		}
		if err != nil {
			fmt.Fprintf(stderr, "cleave score: %v\n", err)
			return exitCode(err), nil
		}
		scored = append(scored, scoredPair{Name: p.name, Pred: p.image, Truth: p.truth, Report: m, PredMap: pr, TruthMap: tr, PredMask: masksOnly(pr), TruthMask: masksOnly(tr)})
	}
	all := make([]score.Report, len(scored))
	for i, s := range scored {
		all[i] = s.Report
	}
	mean := score.Mean(all)
	if o.csv != "" {
		if err := imageio.WriteAtomic(o.csv, o.force, func(w io.Writer) error { return writeScoreCSV(w, scored, mean, folders) }); err != nil {
			fmt.Fprintf(stderr, "cleave score: --csv: %v\n", err)
			return exitFail, nil
		}
	}
	if o.json {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		var v any = struct {
			score.Report
			PredMask  *mapReading `json:"pred_map,omitempty"`
			TruthMask *mapReading `json:"truth_map,omitempty"`
		}{scored[0].Report, scored[0].PredMask, scored[0].TruthMask}
		if folders {
			v = struct {
				Pairs []scoredPair `json:"pairs"`
				Mean  score.Report `json:"mean"`
			}{scored, mean}
		}
		if err := enc.Encode(v); err != nil {
			fmt.Fprintf(stderr, "cleave score: %v\n", err)
			return exitFail, nil
		}
		return exitOK, &mean
	}
	writeScoreTable(stdout, scored, mean, folders, o.tolerance)
	return exitOK, &mean
}

// scoreFiles reads a prediction and a truth label image (binary masks
// split into their components when split is set, readScoreMap) and scores
// them; it returns how each was read.
func scoreFiles(ctx context.Context, predPath, truthPath string, tol float64, split bool) (m score.Report, pr, tr mapReading, err error) {
	pred, pw, ph, pr, err := readScoreMap(predPath, split)
	if err != nil {
		return score.Report{}, pr, tr, fmt.Errorf("prediction %w", err)
	}
	truth, tw, th, tr, err := readScoreMap(truthPath, split)
	if err != nil {
		return score.Report{}, pr, tr, fmt.Errorf("truth %w", err)
	}
	if pw != tw || ph != th {
		return score.Report{}, pr, tr, fmt.Errorf("%s is %dx%d but its truth %s is %dx%d; a prediction and its truth must have the same size", predPath, pw, ph, truthPath, tw, th)
	}
	if err := checkTolerance(tol, predPath, pw, ph); err != nil {
		return score.Report{}, pr, tr, err
	}
	m, err = score.Compare(ctx, pred, truth, pw, ph, tol)
	return m, pr, tr, err
}

// checkTolerance refuses a boundary tolerance above the diagonal of a
// width x height label map (file path): no two pixels lie farther apart,
// so a larger tolerance is a mistake, not a stricter or looser score. It
// is a usage error (exit 2).
func checkTolerance(tol float64, path string, width, height int) error {
	if diag := math.Hypot(float64(width), float64(height)); tol > diag {
		return usagef("--tolerance %g is larger than the diagonal of %s (%dx%d: %.0f pixels); give at most %.0f", tol, path, width, height, diag, math.Floor(diag))
	}
	return nil
}

func fmtMetric(v float64) string { return strconv.FormatFloat(v, 'f', 4, 64) }

// writeScoreTable prints the readable table: metric per line for one pair,
// a row per pair and the mean for folders.
func writeScoreTable(w io.Writer, scored []scoredPair, mean score.Report, folders bool, tol float64) {
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	if !folders {
		fmt.Fprintf(w, "%s vs %s\n", scored[0].Pred, scored[0].Truth)
		fmt.Fprintf(w, "prediction: %s\n", scored[0].PredMap.describe())
		fmt.Fprintf(w, "truth:      %s\n", scored[0].TruthMap.describe())
		for _, m := range score.Metrics() {
			fmt.Fprintf(tw, "%s\t%s\t\n", m, fmtMetric(scored[0].Get(m)))
		}
		tw.Flush()
		fmt.Fprintf(w, "(boundary tolerance %g px; vi in nats, lower is better; the rest: higher is better, 1 best)\n", tol)
		return
	}
	cols := []score.Metric{score.MetricARI, score.MetricVI, score.MetricDice, score.MetricF1, score.MetricMAP, score.MetricMeanIoU, score.MetricBF, score.MetricCovering}
	fmt.Fprintf(tw, "name\t%s\t\n", strings.Join(metricNames(cols), "\t"))
	row := func(name string, m score.Report) {
		cells := make([]string, len(cols))
		for i, c := range cols {
			cells[i] = fmtMetric(m.Get(c))
		}
		fmt.Fprintf(tw, "%s\t%s\t\n", name, strings.Join(cells, "\t"))
	}
	for _, s := range scored {
		row(s.Name, s.Report)
	}
	row(fmt.Sprintf("mean of %d", len(scored)), mean)
	tw.Flush()
	var masks []string
	for _, s := range scored {
		for _, side := range []struct {
			what string
			r    mapReading
		}{{"prediction", s.PredMap}, {"truth", s.TruthMap}} {
			switch side.r.Kind {
			case readMaskComponents:
				masks = append(masks, fmt.Sprintf("%s %s: binary mask, %s (8-connected components)", s.Name, side.what, plural(side.r.Objects, "object")))
			case readMaskUnsplit:
				masks = append(masks, fmt.Sprintf("%s %s: binary mask, one label (--split-masks off)", s.Name, side.what))
			}
		}
	}
	if len(masks) > 0 {
		fmt.Fprintf(w, "binary masks: %s\n", strings.Join(masks, "; "))
	}
	fmt.Fprintf(w, "(boundary tolerance %g px; every metric in --json and --csv)\n", tol)
}

// writeScoreCSV writes one row per pair and, for folders, a final "mean"
// row; names and paths are neutralized by csvText.
func writeScoreCSV(w io.Writer, scored []scoredPair, mean score.Report, folders bool) error {
	cw := csv.NewWriter(w)
	head := append(append([]string{"name", "pred", "truth"}, metricNames(score.Metrics())...), "pred_map", "pred_objects", "truth_map", "truth_objects")
	if err := cw.Write(head); err != nil {
		return err
	}
	rec := func(name, pred, truth string, m score.Report, pr, tr *mapReading) error {
		r := []string{csvText(name), csvText(pred), csvText(truth)}
		for _, v := range m.Values() {
			r = append(r, strconv.FormatFloat(v, 'g', 17, 64))
		}
		if pr != nil {
			r = append(r, pr.Kind, strconv.Itoa(pr.Objects), tr.Kind, strconv.Itoa(tr.Objects))
		} else {
			r = append(r, "", "", "", "")
		}
		return cw.Write(r)
	}
	for _, s := range scored {
		if err := rec(s.Name, s.Pred, s.Truth, s.Report, &s.PredMap, &s.TruthMap); err != nil {
			return err
		}
	}
	if folders {
		if err := rec("mean", "", "", mean, nil, nil); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}
