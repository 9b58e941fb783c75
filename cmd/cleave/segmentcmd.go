package main

import (
	"context"
	"fmt"
	"io"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/segment/parallel"
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
	c.workers = parallel.Workers(c.workers)
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
// (pipeline.Files: c.workers threads per image, at least 1; c.force
// replaces earlier outputs; c.saveGraph for one image), printing a
// summary line per image and warnings on stderr; it returns the exit
// status.
func segmentFiles(ctx context.Context, s settings, c *commonFlags, images []string, stdout, stderr io.Writer) int {
	f := &pipeline.Files{Images: images, Request: s, Workers: c.workers, Out: c.out, Force: c.force, SaveGraph: c.saveGraph, Voice: voice(), Stdout: stdout, Log: stderr}
	failed, err := f.Run(ctx)
	if err != nil {
		err = requestErr(err)
		fmt.Fprintf(stderr, "cleave segment: %v\n", err)
		return exitCode(err)
	}
	if failed > 0 {
		return exitFail
	}
	return exitOK
}

// plural formats a count with its noun: "1 region", "3 regions".
func plural(n int, noun string) string { return pipeline.Plural(n, noun) }

// voice is how the pipeline words its records and messages for this
// command: the version, parameter names as flags.
func voice() pipeline.Voice {
	return pipeline.Voice{Version: version, Error: withFlags, Message: flagQuoted}
}
