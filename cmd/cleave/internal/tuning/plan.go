package tuning

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/progress"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/scoring"
	"github.com/cleave-seg/cleave/segment"
	"github.com/cleave-seg/cleave/segment/score"
	"github.com/cleave-seg/cleave/segment/tune"
)

// DefaultFolds is the K of the cross-validation when none is asked for.
const DefaultFolds = 3

// DefaultMetric is the metric tune maximizes when none is asked for, and
// why: object F1 when objects are segmented (a background class is
// given), ARI otherwise.
func DefaultMetric(background string) (score.Metric, string) {
	if background != "" {
		return score.MetricF1, "default with `background`: objects counted"
	}
	return score.MetricARI, "default without `background`: no objects to count"
}

// Plan is one tune as typed values, from the command line or the demo:
// the parameters as given (the fixed ones), the configuration with the
// axes given (an axis with neither values nor Auto was not given and
// takes its default), how truths are read (Split: a binary mask by its
// 8-connected components), the folders and whether outputs may be
// replaced. Notes (an image without a truth) and the progress go to Log.
type Plan struct {
	Request            pipeline.Request
	Config             *Config
	Split              bool
	Images, Truth, Out string
	Force              bool
	Log                io.Writer
}

// Run checks the fixed settings, pairs and decodes the images, fills the
// default axes, runs the search (Run), writes the files (Outcome.Write)
// and returns the outcome. Errors in the fixed settings are
// *pipeline.RequestError; a boundary tolerance above an image's diagonal
// is a *scoring.ToleranceError.
func (p *Plan) Run(ctx context.Context) (*Outcome, error) {
	cfg := p.Config
	var given [tune.NumParams]bool
	for _, d := range tune.Params() {
		given[d] = cfg.Space[d].Values != nil || cfg.Space[d].Auto
	}
	// A searched parameter given as auto or as one value is fixed: the
	// fixed settings are checked now (a wrong classes is an error in what
	// was asked), and the same settings score the baseline and give the
	// centres of the default ranges.
	fixed := p.Request
	for _, d := range tune.Params() {
		if given[d] && (cfg.Space[d].Auto || len(cfg.Space[d].Values) == 1) {
			fixed = WithSetting(fixed, d, cfg.Space[d])
		}
	}
	loadOpts, err := fixed.Options(cfg.Workers)
	if err != nil {
		return nil, &pipeline.RequestError{Err: err}
	}
	if p.Request.Planes == pipeline.PlanesAll {
		return nil, &pipeline.RequestError{Err: errors.New("`planes` all is for cleave segment and batch; tune reads one plane per image (`planes` one with `plane`, or brightest)")}
	}
	defer pipeline.SetCollector(loadOpts.Params.MaxMemory)()
	if !p.Force {
		for _, n := range Outputs() {
			if path := filepath.Join(p.Out, n); exists(path) {
				return nil, fmt.Errorf("output %s already exists (%s)", path, cfg.Voice.Msg("use `force` to overwrite"))
			}
		}
	}
	pairs, unpaired, err := scoring.PairImages(p.Images, p.Truth)
	if err != nil {
		return nil, err
	}
	for _, u := range unpaired {
		fmt.Fprintf(p.Log, "cleave tune: %s has no truth (want NAME, NAME.truth, NAME_mask or NAME_truth in %s); skipped\n", u, p.Truth)
	}
	if len(pairs) == 0 {
		return nil, fmt.Errorf("no image in %s has a truth in %s", p.Images, p.Truth)
	}
	readTruth := func(path string) (scoring.Map, error) { return scoring.Read(path, p.Split) }
	checkTol := func(im *Image) error {
		return scoring.CheckTolerance(cfg.Tolerance, im.Pair.Truth, im.Truth.Width, im.Truth.Height)
	}
	if cfg.Images, err = Load(ctx, pairs, loadOpts, readTruth, checkTol); err != nil {
		return nil, err
	}
	base, err := fixed.Options(1)
	if err != nil {
		return nil, &pipeline.RequestError{Err: err}
	}
	cfg.Base = base.Params
	p.defaultAxes(given)
	cfg.Fixed = p.Request.Map()
	for _, d := range tune.Params() {
		cfg.Given[d] = GivenText(p.Request, d)
	}
	cfg.Unpaired = unpaired
	prog := progress.NewTune(p.Log, cfg.Metric)
	cfg.Progress = prog
	defer prog.Finish()
	out, err := Run(ctx, cfg)
	if err != nil {
		return nil, err
	}
	if err := out.Write(p.Out, p.Force); err != nil {
		return nil, err
	}
	return out, nil
}

// DefaultFaintLevel is the level of the faint search (segment.Params.Faint)
// tune tries beside off when objects are segmented on a dark or bright
// background and faint is not given. Our choice, on the project's
// generated clusters (tune seeds 15720-15722): of levels 3.5 to 6 it
// scored best there (object F1 0.822 off, 0.831 at 5, 0.878 at 4),
// and it is a search value, kept only where it wins on the images.
const DefaultFaintLevel = 4

// defaultAxes fills the axes not given with their defaults: max-ncut the
// default and half of it, faint off and DefaultFaintLevel when objects
// are segmented on a dark or bright background with two classes and no
// searched setting is a pixel graph (else as given), the other
// parameters as the fixed settings give them; sigma-i and sigma-x are
// left empty, for Run to centre on the automatic values.
func (p *Plan) defaultAxes(given [tune.NumParams]bool) {
	s, sp := p.Request, &p.Config.Space
	if !given[tune.MaxNcut] {
		d := segment.DefaultParams().MaxNcut
		sp[tune.MaxNcut] = tune.DefaultAxis(tune.MaxNcut, []float64{d / 2, d})
	}
	if !given[tune.Radius] {
		sp[tune.Radius] = tune.DefaultAxis(tune.Radius, []float64{float64(s.Radius)})
	}
	if !given[tune.Superpixels] {
		sp[tune.Superpixels] = tune.AutoAxis(tune.Superpixels, "auto (default)")
		if n, auto, err := pipeline.ParseAuto("superpixels", s.Superpixels); err == nil && !auto {
			sp[tune.Superpixels] = tune.DefaultAxis(tune.Superpixels, []float64{n})
		}
	}
	if !given[tune.Compactness] {
		sp[tune.Compactness] = tune.DefaultAxis(tune.Compactness, []float64{s.Compactness})
	}
	if !given[tune.Necks] {
		v := tune.On
		if s.NecksAsked() == "off" {
			v = tune.Off
		}
		sp[tune.Necks] = tune.DefaultAxis(tune.Necks, []float64{v})
	}
	if !given[tune.Faint] {
		sp[tune.Faint] = tune.DefaultAxis(tune.Faint, []float64{float64(s.Faint)})
		pixelGraph := slices.Contains(sp[tune.Superpixels].Values, 0) // the faint search scores superpixels
		if s.Faint == 0 && s.Classes == 2 && (s.Background == string(segment.BackgroundDark) || s.Background == string(segment.BackgroundBright)) && !pixelGraph {
			sp[tune.Faint] = tune.DefaultAxis(tune.Faint, []float64{0, DefaultFaintLevel})
		}
	}
}

func exists(p string) bool { _, err := os.Lstat(p); return err == nil }

// WithSetting is r with searched parameter d fixed to the single value of
// its axis, or to auto.
func WithSetting(r pipeline.Request, d tune.Param, ax tune.Axis) pipeline.Request {
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
		r.SigmaI = txt
	case tune.SigmaX:
		r.SigmaX = txt
	case tune.Superpixels:
		r.Superpixels = txt
	case tune.MaxNcut:
		r.MaxNcut = v
	case tune.Radius:
		r.Radius = int(v)
	case tune.Compactness:
		r.Compactness = v
	case tune.Necks:
		r.Necks = tune.OnOff(v)
	case tune.Faint:
		r.Faint = int(v)
	}
	return r
}

// Tuned is r with the tuned values of o: what a segmentation with
// best.json as its parameters runs with.
func (o *Outcome) Tuned(r pipeline.Request) pipeline.Request {
	for _, d := range tune.Params() {
		v, auto := o.Setting(d)
		ax := tune.Axis{Param: d, Values: []float64{v}}
		if auto {
			ax = tune.AutoAxis(d, "auto")
		}
		r = WithSetting(r, d, ax)
	}
	return r
}

// GivenText is searched parameter d of r as given, for the baseline row
// of tune.csv.
func GivenText(r pipeline.Request, d tune.Param) string {
	switch d {
	case tune.SigmaI:
		return strings.TrimSpace(r.SigmaI)
	case tune.SigmaX:
		return strings.TrimSpace(r.SigmaX)
	case tune.Superpixels:
		return strings.TrimSpace(r.Superpixels)
	case tune.MaxNcut:
		return tune.FormatValue(r.MaxNcut)
	case tune.Radius:
		return strconv.Itoa(r.Radius)
	case tune.Necks:
		return r.NecksAsked()
	case tune.Faint:
		return strconv.Itoa(r.Faint)
	}
	return tune.FormatValue(r.Compactness)
}

// MaxAxisSteps bounds N of a log-spaced axis A:B:N.
const MaxAxisSteps = 50

// ParseAxis reads a search axis of d as text: A:B:N (N values log-spaced
// from A to B, both included), a list a,b,c, a single value, or auto
// where the parameter allows it; a switch (necks) takes on, off or both
// (on,off). Every error names the parameter in backquotes.
func ParseAxis(d tune.Param, text string) (tune.Axis, error) {
	name := "`" + d.String() + "`"
	t := strings.TrimSpace(text)
	if d.Switch() {
		var vals []float64
		for _, s := range strings.Split(t, ",") {
			switch strings.TrimSpace(s) {
			case "on":
				vals = append(vals, tune.On)
			case "off":
				vals = append(vals, tune.Off)
			default:
				return tune.Axis{}, fmt.Errorf("%s: %q is not on or off (want on, off or on,off)", name, s)
			}
		}
		return tune.NewAxis(d, vals, text), nil
	}
	if strings.EqualFold(t, "auto") {
		if !d.CanBeAuto() {
			return tune.Axis{}, fmt.Errorf("%s cannot be auto", name)
		}
		return tune.AutoAxis(d, text), nil
	}
	allowZero := d == tune.Superpixels || d == tune.Faint
	num := func(s string) (float64, error) {
		v, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
		switch {
		case err != nil || math.IsNaN(v) || math.IsInf(v, 0):
			return 0, fmt.Errorf("%s: %q is not a number (want A:B:N, a list a,b,c or one value)", name, s)
		case d.Integer() && v != math.Trunc(v):
			return 0, fmt.Errorf("%s: %q is not a whole number", name, s)
		case v < 0 || (v == 0 && !allowZero):
			return 0, fmt.Errorf("%s: %q must be positive", name, s)
		}
		if lo, hi := d.Bounds(); v < lo || v > hi {
			return 0, fmt.Errorf("%s: %q is outside the range %g to %g", name, s, lo, hi)
		}
		if d == tune.Faint && v != 0 && v < segment.MinFaint {
			return 0, fmt.Errorf("%s: %q must be 0 (off) or %d to %d", name, s, segment.MinFaint, segment.MaxFaint)
		}
		return v, nil
	}
	var vals []float64
	if strings.Contains(t, ":") {
		parts := strings.Split(t, ":")
		if len(parts) != 3 {
			return tune.Axis{}, fmt.Errorf("%s: %q is not A:B:N", name, text)
		}
		a, err := num(parts[0])
		if err != nil {
			return tune.Axis{}, err
		}
		b, err := num(parts[1])
		if err != nil {
			return tune.Axis{}, err
		}
		n, err := strconv.Atoi(strings.TrimSpace(parts[2]))
		if err != nil || n < 1 || n > MaxAxisSteps {
			return tune.Axis{}, fmt.Errorf("%s: N in %q must be a whole number from 1 to %d", name, text, MaxAxisSteps)
		}
		if a == 0 || b == 0 {
			return tune.Axis{}, fmt.Errorf("%s: %q: log-spaced values need A and B above 0 (give 0 in a list)", name, text)
		}
		vals = tune.LogSpaced(a, b, n)
	} else {
		for _, s := range strings.Split(t, ",") {
			v, err := num(s)
			if err != nil {
				return tune.Axis{}, err
			}
			vals = append(vals, v)
		}
	}
	return tune.NewAxis(d, vals, text), nil
}
