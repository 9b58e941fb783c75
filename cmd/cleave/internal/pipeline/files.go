package pipeline

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
)

// RequestError is an error in what was asked (a parameter, the images
// given, an output in the way of an input): nothing was written, and the
// command exits as for wrong usage. Its message names parameters as the
// pipeline does (Voice).
type RequestError struct{ Err error }

func (e *RequestError) Error() string { return e.Err.Error() }
func (e *RequestError) Unwrap() error { return e.Err }

// ErrInterrupted is returned when the context ended a run of Files.
var ErrInterrupted = errors.New("interrupted")

// Files is a segmentation of single image files into one folder, cleave
// segment's work (the demo's too).
type Files struct {
	Images  []string
	Request Request
	// Workers is the number of threads per image (at least 1).
	Workers int
	// Out is the output folder, created when missing; Force replaces
	// earlier outputs.
	Out   string
	Force bool
	// SaveGraph names a Matrix Market file for the affinity matrix (one
	// image only).
	SaveGraph string
	Voice     Voice
	// Stdout takes one summary line per image (and per stack); Log the
	// errors of images and the warnings, each line starting with
	// "cleave segment: ".
	Stdout, Log io.Writer
}

// Run segments every image in turn (with every plane on its own for
// Request.Planes "all", and a STEM.stack.json summary of each stack),
// printing a summary line per image on Stdout and its errors and
// warnings on Log. It returns the number of images that failed, or an
// error that stopped the run before any image was segmented (a
// *RequestError for what was asked) or during it (ErrInterrupted).
func (f *Files) Run(ctx context.Context) (failed int, err error) {
	opts, err := f.Request.Options(f.Workers)
	if err != nil {
		return 0, &RequestError{Err: err}
	}
	defer SetCollector(opts.Params.MaxMemory)()
	if f.SaveGraph != "" && len(f.Images) > 1 {
		return 0, &RequestError{Err: errors.New("`save-graph` takes one image; give a single IMAGE")}
	}
	stems := map[string]string{}
	for _, p := range f.Images {
		st := Stem(p)
		if prev, dup := stems[st]; dup {
			return 0, &RequestError{Err: fmt.Errorf("%s and %s would write the same outputs %s.*; segment them into different `out` folders", prev, p, st)}
		}
		stems[st] = p
	}
	replace := ReplaceNone
	if f.Force {
		replace = ReplaceAny
	}
	var jobs []Job
	stacks := map[string][]int{} // planes all: image -> indices of its jobs
	for _, p := range f.Images {
		j := Job{Path: p, Out: OutputSet{Dir: f.Out, Stem: Stem(p)}, Request: f.Request, Options: opts, Replace: replace, SaveGraph: f.SaveGraph, Voice: f.Voice}
		if f.Request.Planes != PlanesAll {
			jobs = append(jobs, j)
			continue
		}
		planeJobs, err := ExpandPlanes(j)
		if err != nil {
			return 0, f.Voice.Err(err)
		}
		for range planeJobs {
			stacks[p] = append(stacks[p], len(jobs))
			jobs = append(jobs, planeJobs[len(stacks[p])-1])
		}
	}
	if err := CheckNotInputs(jobs); err != nil {
		return 0, &RequestError{Err: err}
	}
	if err := os.MkdirAll(f.Out, 0o755); err != nil {
		return 0, fmt.Errorf("cannot create the output folder: %v", err)
	}
	recs := make([]*Record, len(jobs))
	for k, j := range jobs {
		if ctx.Err() != nil {
			return failed, ErrInterrupted
		}
		p := j.Path
		rec, err := Process(ctx, j)
		recs[k] = rec
		if err != nil {
			failed++
			fmt.Fprintf(f.Log, "cleave segment: %v\n", err)
			if st, serr := os.Stat(p); serr == nil && st.IsDir() {
				fmt.Fprintf(f.Log, "cleave segment: to segment the images in the folder %s, run: cleave batch %s %s %s\n", p, p, f.Voice.Msg("`out`"), f.Out)
			}
			continue
		}
		fmt.Fprintln(f.Stdout, SummaryLine(rec, filepath.Join(f.Out, j.Out.Stem)))
		for _, w := range rec.Warnings {
			fmt.Fprintf(f.Log, "cleave segment: %s: warning: %s\n", p, w.Message)
		}
	}
	for _, p := range f.Images {
		idx, ok := stacks[p]
		if !ok {
			continue
		}
		sum := StackSummaryOf(p, jobs, recs, idx)
		path := filepath.Join(f.Out, Stem(p)+".stack.json")
		if err := WriteStackSummary(path, sum, replace != ReplaceNone); err != nil {
			failed++
			fmt.Fprintf(f.Log, "cleave segment: %v\n", err)
			continue
		}
		fmt.Fprintf(f.Stdout, "%s: %s segmented, %d failed -> %s\n", p, Plural(len(idx), "plane"), sum.Failed, path)
	}
	return failed, nil
}

// SummaryLine is the line printed for one segmented image: its size,
// regions, objects when a background class was asked for, warnings,
// seconds and the outputs' prefix.
func SummaryLine(rec *Record, prefix string) string {
	var b strings.Builder
	fmt.Fprintf(&b, "%s: %dx%d, %s", rec.Input.Path, rec.Input.Width, rec.Input.Height, Plural(rec.Regions, "region"))
	if v, ok := rec.Params["background"].(string); ok && v != "" {
		fmt.Fprintf(&b, ", %s", Plural(rec.Objects, "object"))
	}
	if n := len(rec.Warnings); n > 0 {
		fmt.Fprintf(&b, ", %s (see stderr and the record)", Plural(n, "warning"))
	}
	fmt.Fprintf(&b, ", %.2f s -> %s.*", rec.Seconds["total"], prefix)
	return b.String()
}

// Stem is a file's name without its extension: the stem of the outputs
// of a single image.
func Stem(path string) string {
	base := filepath.Base(path)
	return strings.TrimSuffix(base, filepath.Ext(base))
}
