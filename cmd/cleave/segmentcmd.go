package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"strings"

	"github.com/spf13/pflag"
)

const segmentExample = `Example (a generated nuclei scene shipped with cleave):

  cleave segment --classes 2 --background dark --out results examples/nuclei/nuclei-1.png

writes results/nuclei-1.labels.png (objects 1..N on background 0, 16-bit),
results/nuclei-1.overlay.png, results/nuclei-1.classes.png,
results/nuclei-1.regions.csv and results/nuclei-1.json, and prints one
summary line. For a plate under raking light with dark defects:

  cleave segment --classes 2 --background bright --flatten 30 examples/plates/plate-1.png
`

func segmentHelp(w io.Writer) {
	fs, _, _ := segmentFlags()
	fmt.Fprintf(w, `Usage: cleave segment [flags] IMAGE...

Segment each image by normalized cuts: build an affinity graph over pixels
or SLIC superpixels, cut it recursively in two (or k ways), optionally group
the regions into intensity classes and objects, and write a label map, an
overlay, a region table and a JSON record per image into --out.

%s
Flags:
%s
Exit status: 0 all images done, 1 an image failed, 2 wrong usage.

%s`, segmentExample, fs.FlagUsagesWrapped(100), caution)
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
	fs.BoolVar(&c.force, "force", false, "overwrite existing outputs")
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
		c.workers = runtime.NumCPU()
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
	res, err := s.resolve(c.workers)
	if err != nil {
		fmt.Fprintf(stderr, "cleave segment: %v\n", err)
		return exitUsage
	}
	defer setMemoryLimit(res.params.MaxMemory)()
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
	if err := os.MkdirAll(c.out, 0o755); err != nil {
		fmt.Fprintf(stderr, "cleave segment: cannot create the output folder: %v\n", err)
		return exitFail
	}
	failed := 0
	for _, p := range images {
		if ctx.Err() != nil {
			fmt.Fprintln(stderr, "cleave segment: interrupted")
			return exitFail
		}
		j := job{path: p, out: outputSet{dir: c.out, stem: stemOf(p)}, settings: *s, resolved: res, force: c.force, saveGraph: c.saveGraph}
		rec, err := processImage(ctx, j)
		if err != nil {
			failed++
			fmt.Fprintf(stderr, "cleave segment: %v\n", err)
			continue
		}
		fmt.Fprintln(stdout, summaryLine(rec, filepath.Join(c.out, stemOf(p))))
		for _, w := range rec.Warnings {
			fmt.Fprintf(stderr, "cleave segment: %s: warning: %s\n", p, w.Message)
		}
	}
	if failed > 0 {
		return exitFail
	}
	return exitOK
}

// summaryLine is the one line per image on stdout.
func summaryLine(rec *record, prefix string) string {
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
func plural(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	return fmt.Sprintf("%d %ss", n, noun)
}
