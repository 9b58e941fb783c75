// Package demo is cleave demo's work: an invented inspection day made up
// by the project's scene generators (Scenario), each part tuned on
// scenes with generated truth (tuning.Plan), new scenes segmented with
// the tuned parameters (pipeline.Files) and scored against their truth
// (scoring.Score), every step printed as the command that would run it
// again, with that command's output. It holds no flag syntax of its own:
// the command lines it prints are the ones a user would type, and
// parameters named in messages go through Config.Voice.
package demo

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/scoring"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/tuning"
	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/imageio/scenes"
	"github.com/cleave-seg/cleave/segment/parallel"
	"github.com/cleave-seg/cleave/segment/score"
	"github.com/cleave-seg/cleave/segment/tune"
)

// The scenario: sizes, counts and seeds (fixed, so the demo prints the
// same scores every time).
const (
	Size                = 256
	SlideTune, SlideNew = 2, 3
	PlateTune, PlateNew = 1, 2
	SlideSeed           = 4100
	PlateSeed           = 4300
	// Classes is the number of classes both parts segment into.
	Classes = 2
)

// Part is one half of the scenario: its scenes and the parameters it
// fixes (two classes on a background, shading correction) and searches
// (a reduced search: max-ncut fixed, a small budget; Folds 0:
// tuning.DefaultFolds).
type Part struct {
	Name, Title   string
	Tune, Fresh   []*scenes.Scene
	Background    string
	Flatten       float64
	MaxNcut       float64
	Budget, Folds int
}

// Scenario generates the invented inspection day: a slide of nuclei and
// a machined plate.
func Scenario() []Part {
	// A reduced search so that the demo stays quick: max-ncut fixed.
	slide := Part{Name: "slide", Title: "fluorescent nuclei, tuned on 2 annotated scenes, applied to 3 new ones",
		Background: "dark", MaxNcut: 0.15, Budget: 4, Folds: 2}
	slide.generate(SlideTune, SlideNew, func(k int) *scenes.Scene {
		return scenes.Nuclei(scenes.NucleiOptions{Width: Size, Height: Size, Seed: SlideSeed + uint64(k)})
	})
	plate := Part{Name: "plate", Title: "machined plate under raking light, tuned on 1 annotated scene, applied to 2 new ones",
		Background: "bright", Flatten: 30, MaxNcut: 0.15, Budget: 4}
	plate.generate(PlateTune, PlateNew, func(k int) *scenes.Scene {
		return scenes.Plate(scenes.PlateOptions{Width: Size, Height: Size, Seed: PlateSeed + uint64(k)})
	})
	return []Part{slide, plate}
}

// generate makes the part's scenes gen(0) .. gen(nTune+nNew-1): the first
// nTune to tune on (NAME-tune-1, ...), the rest new (NAME-new-1, ...).
func (p *Part) generate(nTune, nNew int, gen func(k int) *scenes.Scene) {
	for k := range nTune + nNew {
		sc := gen(k)
		if k < nTune {
			sc.Name = fmt.Sprintf("%s-tune-%d", p.Name, k+1)
			p.Tune = append(p.Tune, sc)
		} else {
			sc.Name = fmt.Sprintf("%s-new-%d", p.Name, k-nTune+1)
			p.Fresh = append(p.Fresh, sc)
		}
	}
}

// Config is one run of the demo.
type Config struct {
	// Out is the folder of the scenes and every output; Force replaces
	// the outputs of an earlier demo there.
	Out   string
	Force bool
	// Workers is the thread count as asked for (0: GOMAXPROCS), printed
	// in the command lines as given.
	Workers int
	// Voice words parameter names and errors as the command does.
	Voice pipeline.Voice
	// Stdout takes each step's command line and indented output; Stderr
	// the steps' errors and warnings.
	Stdout, Stderr io.Writer
}

// Request is the part's parameters as given: the defaults
// (pipeline.DefaultRequest) with the part's own.
func (p *Part) Request() pipeline.Request {
	r := pipeline.DefaultRequest()
	r.Classes, r.Background, r.Flatten = Classes, p.Background, p.Flatten
	return r
}

// folds is the part's K of the cross-validation.
func (p *Part) folds() int {
	if p.Folds == 0 {
		return tuning.DefaultFolds
	}
	return p.Folds
}

// TuneLine is the tune command a user would type to run the part's tune
// again (printed before its output; the demo runs TunePlan directly).
func (p *Part) TuneLine(tuneDir, tunedDir string, workers int, force bool) []string {
	a := []string{"tune", "--images", tuneDir, "--truth", tuneDir, "--out", tunedDir, "--workers", fmt.Sprint(workers)}
	if force {
		a = append(a, "--force")
	}
	a = append(a, "--classes", fmt.Sprint(Classes), "--background", p.Background)
	if p.Flatten != 0 {
		a = append(a, "--flatten", tune.FormatValue(p.Flatten))
	}
	a = append(a, "--max-ncut", tune.FormatValue(p.MaxNcut), "--budget", fmt.Sprint(p.Budget))
	if p.Folds != 0 {
		a = append(a, "--folds", fmt.Sprint(p.Folds))
	}
	return a
}

// TunePlan is the part's tune: its parameters, the metric tune chooses
// for them, max-ncut fixed, the rest as tune's defaults; notes go to log.
func (p *Part) TunePlan(c *Config, tuneDir, tunedDir string, log io.Writer) *tuning.Plan {
	r := p.Request()
	metric, why := tuning.DefaultMetric(r.Background)
	workers := parallel.Workers(c.Workers)
	cfg := &tuning.Config{Metric: metric, MetricChoice: c.Voice.Msg(why), Tolerance: scoring.DefaultTolerance, Workers: workers,
		Budget: p.Budget, Folds: p.folds(), Voice: c.Voice, Start: time.Now()}
	cfg.Space[tune.MaxNcut] = tune.NewAxis(tune.MaxNcut, []float64{p.MaxNcut}, tune.FormatValue(p.MaxNcut))
	return &tuning.Plan{Request: r, Config: cfg, Split: true, Images: tuneDir, Truth: tuneDir, Out: tunedDir, Force: c.Force, Log: log}
}

// Result is what one part gave: the tune's report, the mean scores of
// the new scenes and where they were written.
type Result struct {
	Part   *Part
	Tuned  tuning.Report
	Mean   score.Report
	Scores string // the CSV of the scores
}

// StepError tells that a step failed (its error was printed on Stderr
// as the step's command prints it); Usage marks an error in what was
// asked.
type StepError struct {
	Step  string // tune, segment or score
	Usage bool
}

func (e *StepError) Error() string { return "cleave " + e.Step + " failed" }

// Run writes the scenes of every part, tunes on the annotated ones,
// segments the new ones with the tuned parameters and scores them,
// printing each step as its command line with the step's output
// indented. A failed step ends the run with a *StepError.
func Run(ctx context.Context, c *Config, parts []Part) ([]Result, error) {
	var results []Result
	for i := range parts {
		p := &parts[i]
		fmt.Fprintf(c.Stdout, "== %s: %s\n", p.Name, p.Title)
		dir := filepath.Join(c.Out, p.Name)
		tuneDir, newDir := filepath.Join(dir, "tune"), filepath.Join(dir, "new")
		tunedDir, segDir := filepath.Join(dir, "tuned"), filepath.Join(dir, "segmented")
		for _, d := range []string{tuneDir, newDir} {
			if err := os.MkdirAll(d, 0o755); err != nil {
				return nil, err
			}
		}
		if err := WriteScenes(tuneDir, p.Tune); err != nil {
			return nil, err
		}
		if err := WriteScenes(newDir, p.Fresh); err != nil {
			return nil, err
		}
		scoresPath := filepath.Join(dir, "scores.csv")
		newPaths := ScenePaths(newDir, p.Fresh)
		tuneLine := p.TuneLine(tuneDir, tunedDir, c.Workers, c.Force)
		segmentLine := append([]string{"segment", "--params", filepath.Join(tunedDir, "best.json"), "--out", segDir, "--workers", fmt.Sprint(c.Workers)}, newPaths...)
		if c.Force {
			segmentLine = slices.Insert(segmentLine, 7, "--force")
		}
		scoreLine := []string{"score", "--csv", scoresPath, segDir, newDir}
		if c.Force {
			scoreLine = append(scoreLine, "--force")
		}
		var out *tuning.Outcome
		var mean *score.Report
		for _, st := range []struct {
			line []string
			run  func(io.Writer) error
		}{
			{tuneLine, func(w io.Writer) (err error) {
				out, err = p.TunePlan(c, tuneDir, tunedDir, c.Stderr).Run(ctx)
				if err == nil {
					out.WriteSummary(w, tunedDir)
				}
				return err
			}},
			{segmentLine, func(w io.Writer) error {
				workers := parallel.Workers(c.Workers)
				f := &pipeline.Files{Images: newPaths, Request: out.Tuned(p.Request()), Workers: workers, Out: segDir, Force: c.Force, Voice: c.Voice, Stdout: w, Log: c.Stderr}
				failed, err := f.Run(ctx)
				if err == nil && failed > 0 {
					return errFailed
				}
				return err
			}},
			{scoreLine, func(w io.Writer) (err error) {
				mean, err = c.score(ctx, segDir, newDir, scoresPath, w)
				return err
			}},
		} {
			fmt.Fprintf(c.Stdout, "$ cleave %s\n", strings.Join(st.line, " "))
			var buf bytes.Buffer
			if err := st.run(&buf); err != nil {
				return nil, c.stepFailed(ctx, st.line[0], err)
			}
			fmt.Fprint(c.Stdout, Indent(buf.String()))
		}
		results = append(results, Result{Part: p, Tuned: out.Report, Mean: *mean, Scores: scoresPath})
		fmt.Fprintln(c.Stdout)
	}
	return results, nil
}

// errFailed is a segment step in which an image failed (its error is
// already printed).
var errFailed = errors.New("an image failed")

// stepFailed prints a step's error as the step's command prints it and
// returns the StepError.
func (c *Config) stepFailed(ctx context.Context, step string, err error) error {
	var re *pipeline.RequestError
	var te *scoring.ToleranceError
	usage := errors.As(err, &re) || errors.As(err, &te)
	switch {
	case err == errFailed:
	case step == "tune" && ctx.Err() != nil:
		fmt.Fprintln(c.Stderr, "cleave tune: interrupted")
	case re != nil:
		fmt.Fprintf(c.Stderr, "cleave %s: %v\n", step, c.Voice.Err(re.Err))
	case usage:
		fmt.Fprintf(c.Stderr, "cleave %s: %v\n", step, c.Voice.Err(err))
	default:
		fmt.Fprintf(c.Stderr, "cleave %s: %v\n", step, err)
	}
	return &StepError{Step: step, Usage: usage}
}

// score scores the label maps in segDir against the truths in truthDir
// (every file paired), writes the scores to csvPath and prints the table
// of cleave score; it returns the mean.
func (c *Config) score(ctx context.Context, segDir, truthDir, csvPath string, w io.Writer) (*score.Report, error) {
	pairs, un, err := scoring.PairPredictions(segDir, truthDir)
	if err != nil {
		return nil, err
	}
	if un.Count() > 0 {
		return nil, fmt.Errorf("unpaired files: %s", scoring.UnpairedMessage(un, segDir, truthDir))
	}
	res, err := scoring.Score(ctx, pairs, scoring.DefaultTolerance, true)
	if err != nil {
		return nil, err
	}
	if err := imageio.WriteAtomic(csvPath, c.Force, func(w io.Writer) error { return scoring.WriteCSV(w, res, true) }); err != nil {
		return nil, fmt.Errorf("%s: %w", c.Voice.Msg("`csv`"), err)
	}
	scoring.WriteTable(w, res, true, scoring.DefaultTolerance, c.Voice)
	return &res.Mean, nil
}

// WriteScenes writes NAME.png and NAME.truth.png for each scene into dir.
func WriteScenes(dir string, ss []*scenes.Scene) error {
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

// ScenePaths are the image files WriteScenes writes for ss into dir.
func ScenePaths(dir string, ss []*scenes.Scene) []string {
	var p []string
	for _, s := range ss {
		p = append(p, filepath.Join(dir, s.Name+".png"))
	}
	return p
}

// Indent indents every line of s by two spaces.
func Indent(s string) string {
	if s == "" {
		return ""
	}
	return "  " + strings.ReplaceAll(strings.TrimSuffix(s, "\n"), "\n", "\n  ") + "\n"
}
