package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"strings"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/spf13/pflag"
)

const segmentExample = `Example (a generated nuclei scene shipped with cleave):

  cleave segment --classes 2 --background dark --out results examples/nuclei/nuclei-1.png

writes results/nuclei-1.labels.png (objects 1..N on background 0, 16-bit),
results/nuclei-1.overlay.png (boundaries and object numbers on the image),
results/nuclei-1.preview.png (the label map in colour),
results/nuclei-1.classes.png,
results/nuclei-1.regions.csv (measurements per object),
results/nuclei-1.outlines.geojson (object outlines as polygons) and
results/nuclei-1.json, and prints one summary line. With --labels-format tiff the label and class maps are
nuclei-1.labels.tif and nuclei-1.classes.tif (16-bit, 32-bit above 65535
labels; with --pixel-size in nm, um, mm, cm, m or inches they carry the
resolution). A PNG label map holds at most 65535 labels: above that it is
written as a 32-bit TIFF with a warning.

For a plate under raking light with dark defects:

  cleave segment --classes 2 --background bright --flatten 30 examples/plates/plate-1.png
`

func segmentHelp(w io.Writer) {
	fs, _, _ := segmentFlags()
	fmt.Fprintf(w, `Usage: cleave segment [flags] IMAGE...

Segment each image by normalized cuts: build an affinity graph over pixels
or SLIC superpixels, cut it recursively in two (or k ways), optionally group
the regions into intensity classes and objects, and write a label map, an
overlay, a colour preview, a region table and a JSON record per image into
--out.

%s
Flags:
%s
Exit status: 0 all images done, 1 an image failed, 2 wrong usage.

%s`, segmentExample, flagUsages(fs), caution)
}

// commonFlags are the flags of segment that are not parameters.
type commonFlags struct {
	out, params, saveGraph string
	force, help            bool
	workers                int
}

func segmentFlags() (*pflag.FlagSet, *settings, *commonFlags) {
	fs := pflag.NewFlagSet("segment", pflag.ContinueOnError)
	fs.SortFlags = false
	s := &settings{}
	c := &commonFlags{}
	fs.StringVarP(&c.out, "out", "o", "cleave-out", "folder for the outputs (created if missing)")
	fs.BoolVar(&c.force, "force", false, "overwrite existing outputs (never an input image; --save-graph replaces only a Matrix Market file)")
	fs.StringVar(&c.params, "params", "", "JSON file of parameters named like the flags (e.g. a tuned best.json); flags given here win")
	addParamFlags(fs, s)
	fs.StringVar(&c.saveGraph, "save-graph", "", "write the top-level affinity matrix W to this Matrix Market file (one image only)")
	fs.IntVar(&c.workers, "workers", 0, fmt.Sprintf("threads per image (0 = all cores; at most %d); results do not depend on it", maxWorkers))
	fs.BoolVarP(&c.help, "help", "h", false, "show this help")
	return fs, s, c
}

// parseSegment parses segment's command line, applying a params file.
func parseSegment(args []string, stderr io.Writer) (*pflag.FlagSet, *settings, *commonFlags, error) {
	fs, s, c := segmentFlags()
	fs.SetOutput(io.Discard)
	if err := fs.Parse(args); err != nil {
		return nil, nil, nil, usagef("%v (run 'cleave segment --help')", err)
	}
	if c.help {
		return fs, s, c, nil
	}
	if c.params != "" {
		if err := applyParamsFile(fs, c.params); err != nil {
			return nil, nil, nil, &usageError{err}
		}
	}
	if c.workers < 0 || c.workers > maxWorkers {
		return nil, nil, nil, usagef("--workers must be 0 (all cores) to %d, got %d", maxWorkers, c.workers)
	}
	if c.workers == 0 {
		c.workers = runtime.GOMAXPROCS(0)
	}
	return fs, s, c, nil
}

func runSegment(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	fs, s, c, err := parseSegment(args, stderr)
	if err != nil {
		fmt.Fprintf(stderr, "cleave segment: %v\n", err)
		return exitUsage
	}
	if c.help {
		segmentHelp(stdout)
		return exitOK
	}
	images := fs.Args()
	if len(images) == 0 {
		fmt.Fprintln(stderr, "cleave segment: no image given (run 'cleave segment --help')")
		return exitUsage
	}
	return segmentFiles(ctx, *s, c, images, stdout, stderr)
}

// segmentFiles segments images with the parameters s into c.out
// (c.workers threads per image, at least 1; c.force replaces earlier
// outputs; c.saveGraph for one image), printing a summary line per image
// and warnings on stderr; it returns the exit status. The demo runs its
// segmentation through it too.
func segmentFiles(ctx context.Context, s settings, c *commonFlags, images []string, stdout, stderr io.Writer) int {
	res, err := resolve(s, c.workers)
	if err != nil {
		fmt.Fprintf(stderr, "cleave segment: %v\n", err)
		return exitUsage
	}
	defer pipeline.SetCollector(res.Params.MaxMemory)()
	if c.saveGraph != "" && len(images) > 1 {
		fmt.Fprintln(stderr, "cleave segment: --save-graph takes one image; give a single IMAGE")
		return exitUsage
	}
	stems := map[string]string{}
	for _, p := range images {
		st := stemOf(p)
		if prev, dup := stems[st]; dup {
			fmt.Fprintf(stderr, "cleave segment: %s and %s would write the same outputs %s.*; segment them into different --out folders\n", prev, p, st)
			return exitUsage
		}
		stems[st] = p
	}
	replace := pipeline.ReplaceNone
	if c.force {
		replace = pipeline.ReplaceAny
	}
	var jobs []pipeline.Job
	stacks := map[string][]int{} // --planes all: image -> indices of its jobs
	for _, p := range images {
		j := pipeline.Job{Path: p, Out: pipeline.OutputSet{Dir: c.out, Stem: stemOf(p)}, Request: s, Options: res, Replace: replace, SaveGraph: c.saveGraph, Voice: voice()}
		if s.Planes != pipeline.PlanesAll {
			jobs = append(jobs, j)
			continue
		}
		planeJobs, err := pipeline.ExpandPlanes(j)
		if err != nil {
			fmt.Fprintf(stderr, "cleave segment: %v\n", withFlags(err))
			return exitFail
		}
		for range planeJobs {
			stacks[p] = append(stacks[p], len(jobs))
			jobs = append(jobs, planeJobs[len(stacks[p])-1])
		}
	}
	if err := pipeline.CheckNotInputs(jobs); err != nil {
		fmt.Fprintf(stderr, "cleave segment: %v\n", withFlags(err))
		return exitUsage
	}
	if err := os.MkdirAll(c.out, 0o755); err != nil {
		fmt.Fprintf(stderr, "cleave segment: cannot create the output folder: %v\n", err)
		return exitFail
	}
	failed := 0
	recs := make([]*pipeline.Record, len(jobs))
	for k, j := range jobs {
		if ctx.Err() != nil {
			fmt.Fprintln(stderr, "cleave segment: interrupted")
			return exitFail
		}
		p := j.Path
		rec, err := pipeline.Process(ctx, j)
		recs[k] = rec
		if err != nil {
			failed++
			fmt.Fprintf(stderr, "cleave segment: %v\n", err)
			if st, serr := os.Stat(p); serr == nil && st.IsDir() {
				fmt.Fprintf(stderr, "cleave segment: to segment the images in the folder %s, run: cleave batch %s --out %s\n", p, p, c.out)
			}
			continue
		}
		fmt.Fprintln(stdout, summaryLine(rec, filepath.Join(c.out, j.Out.Stem)))
		for _, w := range rec.Warnings {
			fmt.Fprintf(stderr, "cleave segment: %s: warning: %s\n", p, w.Message)
		}
	}
	for _, p := range images {
		idx, ok := stacks[p]
		if !ok {
			continue
		}
		sum := pipeline.StackSummaryOf(p, jobs, recs, idx)
		path := filepath.Join(c.out, stemOf(p)+".stack.json")
		if err := pipeline.WriteStackSummary(path, sum, replace != pipeline.ReplaceNone); err != nil {
			failed++
			fmt.Fprintf(stderr, "cleave segment: %v\n", err)
			continue
		}
		fmt.Fprintf(stdout, "%s: %s segmented, %d failed -> %s\n", p, plural(len(idx), "plane"), sum.Failed, path)
	}
	if failed > 0 {
		return exitFail
	}
	return exitOK
}

// summaryLine is the one line per image on stdout.
func summaryLine(rec *pipeline.Record, prefix string) string {
	var b strings.Builder
	fmt.Fprintf(&b, "%s: %dx%d, %s", rec.Input.Path, rec.Input.Width, rec.Input.Height, plural(rec.Regions, "region"))
	if v, ok := rec.Params["background"].(string); ok && v != "" {
		fmt.Fprintf(&b, ", %s", plural(rec.Objects, "object"))
	}
	if n := len(rec.Warnings); n > 0 {
		fmt.Fprintf(&b, ", %s (see stderr and the record)", plural(n, "warning"))
	}
	fmt.Fprintf(&b, ", %.2f s -> %s.*", rec.Seconds["total"], prefix)
	return b.String()
}

// plural formats a count with its noun: "1 region", "3 regions".
func plural(n int, noun string) string { return pipeline.Plural(n, noun) }

// voice is how the pipeline words its records and messages for this
// command: the version, parameter names as flags.
func voice() pipeline.Voice {
	return pipeline.Voice{Version: version, Error: withFlags, Message: flagQuoted}
}

// stemOf is the file name without its extension.
func stemOf(path string) string {
	base := filepath.Base(path)
	return strings.TrimSuffix(base, filepath.Ext(base))
}
