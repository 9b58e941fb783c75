// Package tuning is cleave tune's work: the images decoded once with
// their truth (Load), the objective over the pipeline (each setting
// segmented with a segment.Cache shared by the settings of one image,
// then scored against the truth by every measure of segment/score), the
// timer of the chosen settings, the search itself (Run: the automatic
// settings as a baseline, default ranges around their values, the grid,
// K-fold cross-validation, the pattern search with widening, the timed
// ties; segment/tune does the searching) and the files tune.csv,
// tune.json, best.json and tune.png (Outcome.Write). The command maps its
// flags to a Config and prints the Report; this package holds no flag
// syntax: a parameter named in its notes is in backquotes ("`workers`"),
// for Config.Voice to word as the command does.
package tuning

import (
	"context"
	"fmt"
	"math"
	"slices"
	"time"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/scoring"
	"github.com/cleave-seg/cleave/segment"
	"github.com/cleave-seg/cleave/segment/score"
	"github.com/cleave-seg/cleave/segment/tune"
)

// Pair is an image with its truth file (scoring.PairImages).
type Pair = scoring.Pair

// TruthReader reads the truth label map at path (scoring.Read, binary
// masks split or not); how it was read goes into tune.json.
type TruthReader func(path string) (scoring.Map, error)

// Image is one decoded image with its truth.
type Image struct {
	Pair
	Loaded *pipeline.Loaded
	Truth  scoring.Map
}

// Load decodes every image once (pipeline.Load with opts) and reads its
// truth with read; an image and its truth must have the same size. check,
// when set, is called on each pair once both are read (the command checks
// its boundary tolerance against the truth's size there) and its error is
// returned as it is. Errors name the file.
func Load(ctx context.Context, pairs []Pair, opts *pipeline.Options, read TruthReader, check func(im *Image) error) ([]*Image, error) {
	var images []*Image
	for _, p := range pairs {
		in, err := pipeline.Load(ctx, p.Image, opts)
		if err != nil {
			return nil, fmt.Errorf("%s: %w", p.Image, err)
		}
		truth, err := read(p.Truth)
		if err != nil {
			return nil, fmt.Errorf("truth %w", err)
		}
		if w, h := in.Features.Width, in.Features.Height; truth.Width != w || truth.Height != h {
			return nil, fmt.Errorf("%s is %dx%d but its truth %s is %dx%d", p.Image, w, h, p.Truth, truth.Width, truth.Height)
		}
		im := &Image{Pair: p, Loaded: in, Truth: truth}
		if check != nil {
			if err := check(im); err != nil {
				return nil, err
			}
		}
		images = append(images, im)
	}
	return images, nil
}

// Objective segments the decoded images with a parameter set and scores
// each against its truth with boundary tolerance tol (pixels): tune's seam
// to the pipeline. Each call runs on one thread. Errors are worded by v.
func Objective(images []*Image, tol float64, v pipeline.Voice) tune.Objective {
	return func(ctx context.Context, p segment.Params, j int) (tune.Sample, error) {
		im := images[j]
		res, err := pipeline.Segment(ctx, im.Loaded, p)
		if err != nil {
			return tune.Sample{}, v.Err(err)
		}
		m, err := score.Compare(ctx, res.Labels, im.Truth.Map, tol)
		if err != nil {
			return tune.Sample{}, v.Err(err)
		}
		return tune.Sample{Report: m, Cost: tune.Cost(res), Used: res.Params}, nil
	}
}

// Timer times one segmentation of a decoded image without the search's
// shared work (its cache), so that the seconds are those of a plain
// segmentation of the decoded image. For reports only.
func Timer(images []*Image, v pipeline.Voice) tune.Timer {
	return func(ctx context.Context, p segment.Params, j int) (float64, error) {
		plain := *images[j].Loaded
		plain.Cache = nil
		start := time.Now()
		_, err := pipeline.Segment(ctx, &plain, p)
		return time.Since(start).Seconds(), v.Err(err)
	}
}

// Progress is told how far the search is (the command's progress line).
type Progress interface {
	tune.Progress
	Say(msg string)
	Finish()
}

// The default ranges around the automatic kernel widths (the median over
// the images of the values segment.Run chose): sigma-i from a quarter to
// four times it, 5 log-spaced values; sigma-x from half to twice it, 3.
const (
	SigmaISpread, SigmaISteps = 4, 5
	SigmaXSpread, SigmaXSteps = 2, 3
)

// Config is one tuning run.
type Config struct {
	Images []*Image
	// Metric decides; MetricChoice says why it was chosen (tune.json).
	Metric       score.Metric
	MetricChoice string
	// Tolerance is the boundary matching distance in pixels.
	Tolerance float64
	// Space holds the axes searched. An axis of SigmaI or SigmaX with no
	// values and not Auto is the default range around the automatic
	// value (SigmaISpread, SigmaXSpread).
	Space tune.Space
	// Base are the fixed parameters: the automatic settings scored as the
	// baseline, and the parameters the search does not set.
	Base segment.Params
	// Workers is the number of segmentations run at once (< 1:
	// GOMAXPROCS); results do not depend on it.
	Workers int
	// SmootherTies keeps the search's best among ties instead of the
	// cheapest by the cost model.
	SmootherTies bool
	// Budget is the most new settings one refinement evaluates; Folds the
	// K of the cross-validation (below 2: none).
	Budget, Folds int
	Progress      Progress // nil: none
	Voice         pipeline.Voice
	// Fixed is the parameters file of the fixed settings (every
	// parameter by name); best.json is it with the tuned values.
	Fixed map[string]any
	// Given is the text of each searched parameter as given in the fixed
	// settings, for the baseline row of tune.csv.
	Given [tune.NumParams]string
	// Unpaired are images without a truth (tune.json).
	Unpaired []string
	// Start is when the run started (tune.json's seconds).
	Start time.Time
}

// Outcome is a finished search: the report (tune.json) and what the files
// are drawn from.
type Outcome struct {
	Report   Report
	cfg      *Config
	tuner    *tune.Tuner
	baseline *tune.Evaluation
	gridBest *tune.Evaluation
	best     *tune.Evaluation
	// kept: best is the baseline (tune.Result.KeptAutomatic): no
	// searched setting beat the automatic settings by more than a tie,
	// or (unvalidated) the cross-validated score did not.
	kept, unvalidated bool
}

// nopProgress is the progress of a run without one.
type nopProgress struct{}

func (nopProgress) Plan(int)            {}
func (nopProgress) SettingDone(float64) {}
func (nopProgress) Stage(string)        {}
func (nopProgress) Say(string)          {}
func (nopProgress) Finish()             {}

// Run scores the automatic settings (the baseline), fills the default
// ranges of the kernel widths around their values, gives every image a
// segment.Cache, evaluates the grid, cross-validates when Folds >= 2,
// runs the search and times the chosen setting and its ties. It fails
// when the automatic settings fail on every image or every setting fails
// on some image.
func Run(ctx context.Context, cfg *Config) (*Outcome, error) {
	if len(cfg.Images) == 0 {
		return nil, fmt.Errorf("no images to tune on")
	}
	prog := cfg.Progress
	if prog == nil {
		prog = nopProgress{}
	}
	t := &tune.Tuner{Space: cfg.Space, Workers: cfg.Workers, Metric: cfg.Metric, SmootherTies: cfg.SmootherTies, Base: cfg.Base, Progress: prog}
	for _, im := range cfg.Images {
		t.Names = append(t.Names, im.Name)
	}
	t.Objective, t.Timer = Objective(cfg.Images, cfg.Tolerance, cfg.Voice), Timer(cfg.Images, cfg.Voice)
	all := t.All()
	defer prog.Finish()
	prog.Plan(1)
	baseline, err := t.EvaluateParams(ctx, cfg.Base, "baseline", "baseline")
	if err != nil {
		return nil, err
	}
	prog.Stage("automatic settings")
	var autoI, autoX []float64
	for j := range all {
		if baseline.Errs[j] == "" {
			autoI, autoX = append(autoI, baseline.Used[j].SigmaI), append(autoX, baseline.Used[j].SigmaX)
		}
	}
	if len(autoI) == 0 {
		return nil, fmt.Errorf("no image could be segmented with the default settings: %s", baseline.Errs[0])
	}
	t.Automatic = baseline
	if ax := t.Space[tune.SigmaI]; ax.Values == nil && !ax.Auto {
		a := tune.Median(autoI)
		t.Space[tune.SigmaI] = tune.DefaultAxis(tune.SigmaI, tune.LogSpaced(a/SigmaISpread, SigmaISpread*a, SigmaISteps))
	}
	if ax := t.Space[tune.SigmaX]; ax.Values == nil && !ax.Auto {
		b := tune.Median(autoX)
		t.Space[tune.SigmaX] = tune.DefaultAxis(tune.SigmaX, tune.LogSpaced(b/SigmaXSpread, SigmaXSpread*b, SigmaXSteps))
	}
	for d := range tune.NumParams {
		if ax := t.Space[d]; ax.Values == nil && !ax.Auto {
			return nil, fmt.Errorf("tuning: no values for %s", d)
		}
	}

	// Settings share work per image (segment.Cache): the superpixels
	// between settings of one superpixel count and compactness, and one
	// recursive bisection between settings that differ only in max-ncut
	// (the split tree grown at the grid's largest max-ncut serves the
	// smaller ones exactly).
	for _, im := range cfg.Images {
		im.Loaded.Cache = &segment.Cache{Ceiling: slices.Max(t.Space[tune.MaxNcut].Values)}
	}
	gridPts := t.Space.Grid()
	k := min(cfg.Folds, len(cfg.Images))
	searches := 1
	if k >= 2 {
		searches += k
	}
	prog.Plan(len(gridPts) + searches*cfg.Budget)
	if _, err := t.Evaluate(ctx, gridPts, "grid"); err != nil {
		return nil, err
	}
	prog.Stage("grid")
	var folds []tune.Fold
	var cv *float64
	if k >= 2 {
		f, v, err := t.CrossValidate(ctx, k, cfg.Budget)
		if err != nil {
			return nil, err
		}
		folds, cv = f, tune.Finite(v)
	}
	res, err := t.Search(ctx, all, cfg.Budget, prog.Say)
	if err != nil {
		return nil, err
	}
	if cv != nil {
		t.Validate(res, *cv, all)
	}
	if err := t.TimeTies(ctx, res); err != nil {
		return nil, err
	}
	prog.Stage("search")
	prog.Finish()
	if math.IsInf(t.Score(res.Best, all), -1) {
		return nil, fmt.Errorf("every setting failed on some image; first error: %s", firstError(t.Order))
	}
	t.Space = res.Space // the ranges as widened, for tune.png and tune.json
	o := &Outcome{cfg: cfg, tuner: t, baseline: baseline, gridBest: res.GridBest, best: res.Best, kept: res.KeptAutomatic, unvalidated: res.Unvalidated}
	o.Report = newReport(cfg, t, res, baseline, folds, cv, k, len(gridPts))
	if o.kept {
		o.Report.AutomaticKept = true
		o.Report.KeptBy = "tie"
		if o.unvalidated {
			o.Report.KeptBy = "cross-validation"
		}
		for _, d := range tune.Params() {
			if _, ok := o.Report.Best[d.String()]; ok {
				o.Report.Best[d.String()] = o.settingText(d)
			}
		}
	}
	return o, nil
}

func firstError(es []*tune.Evaluation) string {
	for _, e := range es {
		for _, m := range e.Errs {
			if m != "" {
				return m
			}
		}
	}
	return "none recorded"
}
