package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"time"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/demo"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/spf13/pflag"
)

const demoExample = `Example:

  cleave demo

writes into a new folder under the system's temporary folder (it prints
which; --out DIR chooses another). With --out cleave-demo, look at
cleave-demo/slide/segmented/*.overlay.png and
cleave-demo/slide/tuned/tune.png, and rerun any step by hand, e.g.

  cleave segment --params cleave-demo/slide/tuned/best.json --out mine cleave-demo/slide/new/slide-new-1.png
`

func demoHelp(w io.Writer) {
	fs, _ := demoFlags()
	fmt.Fprintf(w, `Usage: cleave demo [--out DIR]

Run the whole workflow on an invented inspection day with exact ground
truth, made up by cleave's own scene generators:

  slide  a fluorescence slide of cell nuclei (bright on dark, touching pairs,
         dim nuclei, uneven illumination): %d scenes with generated masks to
         tune on, %d new scenes to segment;
  plate  a machined plate under raking light (pits and scratches, darker on
         a bright graded surface, with grain): %d scene to tune on, %d new.

For each: cleave tune (a reduced search, to finish quickly) writes
best.json; cleave segment --params best.json segments the new scenes
through the same pipeline as any other run; cleave score compares them
with their truth. Scores and the place of every output are printed.

%s
Flags:
%s
%s`, demo.SlideTune, demo.SlideNew, demo.PlateTune, demo.PlateNew, demoExample, flagUsages(fs), caution)
}

type demoOptions struct {
	out         string
	force, help bool
	workers     int
}

func demoFlags() (*pflag.FlagSet, *demoOptions) {
	fs := pflag.NewFlagSet("demo", pflag.ContinueOnError)
	fs.SortFlags = false
	o := &demoOptions{}
	fs.StringVarP(&o.out, "out", "o", "", "folder for the scenes and every output (must be new or empty, unless --force); default: a new folder cleave-demo-* under the system's temporary folder")
	fs.BoolVar(&o.force, "force", false, "overwrite the outputs of an earlier demo in --out")
	fs.IntVar(&o.workers, "workers", 0, fmt.Sprintf("threads (0 = all cores; at most %d); results do not depend on it", maxWorkers))
	fs.BoolVarP(&o.help, "help", "h", false, "show this help")
	return fs, o
}

func runDemo(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	fs, o := demoFlags()
	if code, done := parseCommand(fs, args, "demo", &o.help, demoHelp, stdout, stderr); done {
		return code
	}
	if fs.NArg() > 0 {
		fmt.Fprintf(stderr, "cleave demo: unexpected arguments %q (run 'cleave demo --help')\n", fs.Args())
		return exitUsage
	}
	if o.workers < 0 || o.workers > maxWorkers {
		fmt.Fprintf(stderr, "cleave demo: --workers must be 0 (all cores) to %d, got %d\n", maxWorkers, o.workers)
		return exitUsage
	}
	if o.out == "" {
		dir, err := os.MkdirTemp("", "cleave-demo-")
		if err != nil {
			fmt.Fprintf(stderr, "cleave demo: cannot make a folder under the temporary folder %s: %v (use --out DIR)\n", os.TempDir(), pipeline.DescribeErr(err))
			return exitFail
		}
		o.out = dir
		fmt.Fprintf(stdout, "writing into %s (a new folder; --out DIR chooses another)\n", dir)
	}
	if ents, err := os.ReadDir(o.out); err == nil && len(ents) > 0 && !o.force {
		fmt.Fprintf(stderr, "cleave demo: %s is not empty (use --force to overwrite an earlier demo, or another --out)\n", o.out)
		return exitFail
	}
	start := time.Now()
	results, err := demo.Run(ctx, &demo.Config{Out: o.out, Force: o.force, Workers: o.workers, Voice: voice(), Stdout: stdout, Stderr: stderr}, demo.Scenario())
	var se *demo.StepError
	switch {
	case errors.As(err, &se):
		code := exitFail
		if se.Usage {
			code = exitUsage
		}
		fmt.Fprintf(stderr, "cleave demo: cleave %s failed (exit %d)\n", se.Step, code)
		return code
	case err != nil:
		fmt.Fprintf(stderr, "cleave demo: %v\n", err)
		return exitFail
	}
	fmt.Fprintf(stdout, "== summary (%.1f s)\n", time.Since(start).Seconds())
	for _, r := range results {
		ts := fmt.Sprintf("tuned %s %.4f", r.Tuned.Metric, r.Tuned.Score)
		if r.Tuned.CVScore != nil {
			ts += fmt.Sprintf(", cross-validated %.4f", *r.Tuned.CVScore)
		}
		fmt.Fprintf(stdout, "%-6s %d new scenes: mean ARI %.4f, object F1 %.4f (%s)\n", r.Part.Name, len(r.Part.Fresh), r.Mean.ARI, r.Mean.F1, ts)
		fmt.Fprintf(stdout, "       %s\n", r.Scores)
	}
	fmt.Fprintf(stdout, "outputs: %s/{slide,plate}/{tune,new,tuned,segmented}; overlays in segmented/*.overlay.png, heatmaps in tuned/tune.png\n", o.out)
	return exitOK
}
