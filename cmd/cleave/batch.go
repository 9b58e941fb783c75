package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path"
	"strings"
	"time"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/batch"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/outlock"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/scoring"
	"github.com/cleave-seg/cleave/imageio"
	"github.com/spf13/pflag"
)

const batchExample = `Example (the generated nuclei scenes shipped with cleave):

  cleave batch --classes 2 --background dark --out results examples/nuclei

segments nuclei-1.png, nuclei-2.png and nuclei-3.png (their truth masks,
nuclei-1.truth.png and so on, are skipped and listed as such), one file
per core at a time, writes results/nuclei-1.labels.png, .overlay.png,
.preview.png, .classes.png, .regions.csv, .outlines.geojson and .json per image as
'cleave segment' does, then results/manifest.csv, results/objects.csv and
results/report.html. Running the same command again skips every image
whose record is up to date.

On a cluster, task I of N runs

  cleave batch --shard I/N --params best.json --out /shared/results /shared/images

and once all tasks are done one command builds the manifest, the objects
table and the report:

  cleave batch --rebuild /shared/results

examples/cluster has a Slurm job array and a Kubernetes Indexed Job.
`

func batchHelp(w io.Writer) {
	fs, _, _ := batchFlagSet()
	fmt.Fprintf(w, `Usage: cleave batch [flags] INPUT_DIR --out DIR
       cleave batch --rebuild DIR

Segment every image file in INPUT_DIR into DIR, with the same pipeline and
outputs as 'cleave segment'. Images are found by extension:
%s
(other files and names starting with a dot are ignored). Output paths
mirror the input paths: INPUT_DIR/a/x.png gives DIR/a/x.labels.png and so
on. When two inputs in one folder share a name up to the extension (x.png,
x.tif), both keep their extension in the output names (x.png.labels.png,
x.tif.labels.png).

Each image's STEM.json record says ok or failed with the message; a broken
file is recorded and the batch goes on; a result to check (one region, no
objects, one object over half the image, ...) is ok with warnings.
DIR/manifest.csv (input, status, regions, objects, seconds, error,
warnings, labels: the label map written, .png or .tif), DIR/objects.csv
(every row of every ok image's STEM.regions.csv, the input path in front;
images whose tables have other columns, colour and gray say, share one
header, the union, with empty cells where a table has no such column) and
DIR/report.html (counts, the date, a summary of objects per image with a
size histogram, the overlays 360 pixels wide linking the full size, the
table of files linking each image's tables, the failures and the
warnings, the parameters) are rebuilt from the records at the end, using the list of
inputs and the parameters kept in DIR/%s. A rerun skips every
image whose record is ok for the same file contents (SHA-256), parameters
and cleave version; after an interruption, even kill -9, it completes the
work, and an unsharded rerun removes the temporary files cleave left behind. Status "pending"
in the manifest marks an input with no current record yet (a shard not
finished, or a run stopped early).

Entries named like images that are not regular files or links to them
(dangling or looping links, links to folders, FIFOs, devices, sockets) and,
with --recursive, subfolders that cannot be read are never opened: they
are manifest rows with status "skipped" and the reason, named on stderr,
and do not change the exit status. INPUT_DIR itself may be a link.
Files named like truth masks, by the rule tune and score use to pair them
(stem NAME.truth, NAME_mask or NAME_truth), are skipped the same way, with
one line on stderr giving their count; --with-truths segments them too.

A rerun with a narrower selection lists on stderr the outputs in DIR of
the inputs that left it (or were deleted) and keeps them; --prune removes
them (the files their records list, then the records; never a file
cleave did not write). Not with --shard.

Only cleave's own files in DIR are replaced (the records list them): a
file in the way that cleave did not write fails its image, or for
manifest.csv, objects.csv and report.html the run (exit 2), and is left
as it is. When
an image fails, or a setting drops an output, the outputs of an earlier
run that no longer match are removed.

One batch at a time writes into DIR: a second one, or --rebuild, exits 2
at once naming the holder (pid, host and start time in DIR/%s).
With --shard I/N only every N-th file of the sorted list, starting at the
I-th, is processed; N tasks can write into one shared DIR at once, and
none removes another's temporary files. --shard auto takes I from the
scheduler, SLURM_ARRAY_TASK_ID (Slurm job array) or JOB_COMPLETION_INDEX
(Kubernetes Indexed Job), and N from CLEAVE_SHARDS, which the submitter
sets to the size of the whole array; a missing or malformed variable,
both indices set, or an index outside 0 to N-1 exits 2. Shards write no
manifest, objects table or report: run 'cleave batch --rebuild DIR' when
all are done; it also removes the temporary files of killed shards.

%s
Flags:
%s
Exit status: 0 all images ok, 1 an image failed or the run stopped early,
2 wrong usage or DIR in use by another run (nothing is written then).

%s`, strings.Join(imageio.Extensions(), " "), batch.IndexName, outlock.Name, batchExample, flagUsages(fs), caution)
}

// batchOptions are batch's flags that are not segmentation parameters.
type batchOptions struct {
	out, params, shard string
	include, exclude   []string
	recursive          bool
	withTruths         bool
	failFast, quiet    bool
	rebuild, help      bool
	prune              bool
	jobs, workers      int
	// progressEvery is the interval of the plain progress line when stderr
	// is not a terminal.
	progressEvery time.Duration
}

func batchFlagSet() (*pflag.FlagSet, *settings, *batchOptions) {
	fs := pflag.NewFlagSet("batch", pflag.ContinueOnError)
	fs.SortFlags = false
	s := &settings{}
	o := &batchOptions{progressEvery: 5 * time.Second}
	fs.StringVarP(&o.out, "out", "o", "", "folder for the outputs, manifest and report (required; created if missing)")
	fs.StringVar(&o.params, "params", "", "JSON file of parameters named like the flags (e.g. a tuned best.json); flags given here win")
	fs.BoolVarP(&o.recursive, "recursive", "r", false, "descend into subfolders (symbolic links to folders are not followed)")
	fs.StringArrayVar(&o.include, "include", nil, "only files matching this glob (on the name, or on the relative path if it has a /); repeatable")
	fs.StringArrayVar(&o.exclude, "exclude", nil, "skip files matching this glob (as --include); repeatable")
	fs.BoolVar(&o.withTruths, "with-truths", false, "also segment files named like truth masks (stem NAME.truth, NAME_mask or NAME_truth), skipped by default")
	fs.IntVarP(&o.jobs, "jobs", "j", 0, fmt.Sprintf("images processed at the same time (0 = one per core; at most %d)", maxWorkers))
	fs.IntVar(&o.workers, "workers", 0, fmt.Sprintf("threads per image (0 = cores divided by --jobs; at most %d); results do not depend on it", maxWorkers))
	fs.StringVar(&o.shard, "shard", "", "I/N: process only share I (0-based) of N of the sorted file list; auto: I from SLURM_ARRAY_TASK_ID or JOB_COMPLETION_INDEX, N from CLEAVE_SHARDS")
	fs.BoolVar(&o.prune, "prune", false, "remove the outputs in --out of inputs no longer selected (by --include, --exclude, the truth-mask rule, or deleted); without it they are listed and kept")
	fs.BoolVar(&o.failFast, "fail-fast", false, "stop at the first image that fails")
	fs.BoolVarP(&o.quiet, "quiet", "q", false, "no progress and no summary on stderr (errors are still printed)")
	fs.BoolVar(&o.rebuild, "rebuild", false, "only rebuild DIR/manifest.csv, DIR/objects.csv and DIR/report.html from the records in DIR (after all shards are done)")
	addParamFlags(fs, s)
	fs.BoolVarP(&o.help, "help", "h", false, "show this help")
	return fs, s, o
}

func runBatch(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	return runBatchWith(ctx, args, stdout, stderr, nil)
}

// runBatchWith is runBatch; adjust, when not nil, changes the options
// after parsing (tests shorten the progress interval).
func runBatchWith(ctx context.Context, args []string, stdout, stderr io.Writer, adjust func(*batchOptions)) int {
	fs, s, o := batchFlagSet()
	if code, done := parseCommand(fs, args, "batch", &o.help, batchHelp, stdout, stderr); done {
		return code
	}
	if adjust != nil {
		adjust(o)
	}
	if o.rebuild {
		return runRebuild(fs, o, stderr)
	}
	plan, err := planBatch(fs, s, o, stderr)
	if err != nil {
		fmt.Fprintf(stderr, "cleave batch: %v\n", err)
		return exitCode(err)
	}
	return executeBatch(ctx, plan, stderr)
}

// runRebuild is 'cleave batch --rebuild DIR'.
func runRebuild(fs *pflag.FlagSet, o *batchOptions, stderr io.Writer) int {
	var extra []string
	fs.Visit(func(f *pflag.Flag) {
		if f.Name != "rebuild" && f.Name != "quiet" {
			extra = append(extra, "--"+f.Name)
		}
	})
	if len(extra) > 0 {
		fmt.Fprintf(stderr, "cleave batch: --rebuild takes only the output folder (and --quiet), not %s\n", strings.Join(extra, ", "))
		return exitUsage
	}
	if fs.NArg() != 1 {
		fmt.Fprintln(stderr, "cleave batch: --rebuild takes one argument, the output folder of the batch (run 'cleave batch --help')")
		return exitUsage
	}
	dir := fs.Arg(0)
	c, err := batch.Rebuild(dir, "cleave batch --rebuild", voice(), stderr)
	if err != nil {
		err = batchErr(err)
		fmt.Fprintf(stderr, "cleave batch: %v\n", err)
		return exitCode(err)
	}
	if !o.quiet {
		fmt.Fprintf(stderr, "cleave batch: %s\n", c.RebuildSummary(dir))
	}
	if c.Failed > 0 || c.Pending > 0 {
		return exitFail
	}
	return exitOK
}

// batchErr is an error of the batch engine in this command's words: a
// batch.RequestError (the folders, the lock) is a usage error (exit 2).
func batchErr(err error) error {
	var re *batch.RequestError
	if errors.As(err, &re) {
		return &usageError{err}
	}
	return withFlags(err)
}

// planBatch checks the command line and maps it to the engine's Config,
// then lets the engine check the folders and list the inputs, writing
// nothing. Errors of usage are usageErrors (exit 2).
func planBatch(flags *pflag.FlagSet, s *settings, o *batchOptions, stderr io.Writer) (*batch.Plan, error) {
	if o.params != "" {
		if err := applyParamsFile(flags, o.params); err != nil {
			return nil, &usageError{err}
		}
	}
	switch {
	case flags.NArg() == 0:
		return nil, usagef("no INPUT_DIR given (run 'cleave batch --help')")
	case flags.NArg() > 1:
		return nil, usagef("one INPUT_DIR expected, got %d arguments: %s", flags.NArg(), strings.Join(flags.Args(), " "))
	case o.out == "":
		return nil, usagef("--out DIR is required: the folder for the outputs")
	case o.jobs < 0 || o.jobs > maxWorkers:
		return nil, usagef("--jobs must be 0 (one per core) to %d, got %d", maxWorkers, o.jobs)
	case o.workers < 0 || o.workers > maxWorkers:
		return nil, usagef("--workers must be 0 (automatic) to %d, got %d", maxWorkers, o.workers)
	}
	c := batch.Config{InputDir: flags.Arg(0), Out: o.out, Include: o.include, Exclude: o.exclude, Recursive: o.recursive, WithTruths: o.withTruths,
		FailFast: o.failFast, Quiet: o.quiet, Prune: o.prune, Jobs: o.jobs, Workers: o.workers,
		ProgressEvery: o.progressEvery, Request: *s, IsTruth: scoring.IsTruthName, Voice: voice(), Log: stderr}
	var err error
	if c.ShardI, c.ShardN, c.ShardFrom, err = batch.Shard(o.shard, os.LookupEnv); err != nil {
		return nil, batchErr(err)
	}
	if o.prune && c.ShardN > 1 {
		return nil, usagef("--prune works on the whole folder, so not with --shard %s: run it once, unsharded (or after the shards)", o.shard)
	}
	for _, g := range append(append([]string{}, o.include...), o.exclude...) {
		if _, err := path.Match(g, ""); err != nil {
			return nil, usagef("--include/--exclude %q is not a valid glob: %v", g, err)
		}
	}
	// Resolved with one worker; the plan sets the count per image.
	if c.Options, err = resolve(*s, 1); err != nil {
		return nil, err
	}
	c.Holder = "cleave batch"
	if c.ShardN > 1 {
		c.Holder = fmt.Sprintf("cleave batch --shard %d/%d", c.ShardI, c.ShardN)
	}
	p, err := batch.NewPlan(c)
	if err != nil {
		return nil, batchErr(err)
	}
	return p, nil
}

// executeBatch runs the plan and prints its summary; it returns the exit
// code.
func executeBatch(ctx context.Context, p *batch.Plan, stderr io.Writer) int {
	oc, err := p.Run(ctx)
	if err != nil {
		err = batchErr(err)
		fmt.Fprintf(stderr, "cleave batch: %v\n", err)
		return exitCode(err)
	}
	if !p.Quiet {
		fmt.Fprintf(stderr, "cleave batch: %s\n", p.Summary(oc))
		if p.ShardN > 1 {
			fmt.Fprintf(stderr, "cleave batch: when every shard is done, run: cleave batch --rebuild %s\n", p.Out)
		}
	}
	switch {
	case oc.Interrupted:
		fmt.Fprintln(stderr, "cleave batch: interrupted; run the same command again to finish")
		return exitFail
	case oc.StoppedEarly:
		fmt.Fprintln(stderr, "cleave batch: stopped at the first failure (--fail-fast)")
		return exitFail
	case oc.Failed > 0:
		return exitFail
	}
	return exitOK
}
