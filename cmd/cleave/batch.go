package main

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"maps"
	"os"
	"path"
	"path/filepath"
	"runtime"
	"slices"
	"sort"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"time"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/outlock"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/progress"
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

%s`, strings.Join(imageio.Extensions(), " "), indexName, outlock.Name, batchExample, flagUsages(fs), caution)
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

// batchPlan is a checked batch command line, ready to run.
type batchPlan struct {
	opts               batchOptions
	settings           settings
	res                *pipeline.Options
	inputDir, out      string // as given
	realOut, realInput string // symbolic links resolved
	shardI, shardN     int
	shardFrom          string       // the variables --shard auto read, for the log
	all                []batchInput // every input, sorted by relative path
	skipped            []batchSkip  // entries named like images that are not read, sorted
	oldIndex           *batchIndex  // the index an earlier run left in --out, or nil
	mine               []int        // indices into all of this shard's inputs
	jobs, workers      int
}

// batchInput is one input file.
type batchInput struct {
	Input string `json:"input"` // path relative to INPUT_DIR, slash-separated
	Stem  string `json:"stem"`  // output path prefix relative to --out, slash-separated
	// Plane is the plane segmented, with --planes all (every plane of a
	// file is an input of its own, stem STEM.zNNN); nil otherwise.
	Plane *int `json:"plane,omitempty"`
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
	plan, err := planBatch(fs, s, o)
	if err != nil {
		fmt.Fprintf(stderr, "cleave batch: %v\n", err)
		return exitCode(err)
	}
	return plan.execute(ctx, stderr)
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
	idx, err := readBatchIndex(dir)
	if err != nil {
		fmt.Fprintf(stderr, "cleave batch: %v\n", err)
		return exitUsage
	}
	// No shard may be writing while the temporary files are cleaned up
	// and the manifest is read from the records.
	lock, err := lockOut(dir, true, "cleave batch --rebuild")
	if err != nil {
		fmt.Fprintf(stderr, "cleave batch: %v\n", err)
		return exitCode(err)
	}
	defer lock.Release()
	warnUnlocked(stderr, lock, dir)
	if err := checkTopFiles(dir, idx); err != nil {
		fmt.Fprintf(stderr, "cleave batch: %v\n", err)
		return exitUsage
	}
	idx.Files = topFiles
	if err := writeBatchIndex(dir, idx, imageio.DefaultTempOwner()); err != nil {
		fmt.Fprintf(stderr, "cleave batch: %v\n", err)
		return exitFail
	}
	if err := removeTempFiles(dir, outputDirs(idx.Inputs)); err != nil {
		fmt.Fprintf(stderr, "cleave batch: %v\n", err)
		return exitFail
	}
	rows, err := writeManifestAndReport(dir, idx, imageio.DefaultTempOwner())
	if err != nil {
		fmt.Fprintf(stderr, "cleave batch: %v\n", err)
		return exitFail
	}
	c := countRows(rows)
	if !o.quiet {
		skipped := ""
		if c.skipped > 0 {
			skipped = fmt.Sprintf(", %d skipped", c.skipped)
		}
		fmt.Fprintf(stderr, "cleave batch: %s: %d ok, %d failed, %d pending%s -> %s, %s, %s\n", plural(len(rows)-c.skipped, "input"), c.ok, c.failed, c.pending, skipped,
			filepath.Join(dir, manifestName), filepath.Join(dir, objectsName), filepath.Join(dir, reportName))
	}
	if c.failed > 0 || c.pending > 0 {
		return exitFail
	}
	return exitOK
}

// planBatch checks the command line and the folders and lists the inputs,
// writing nothing. Errors of usage are usageErrors (exit 2).
func planBatch(flags *pflag.FlagSet, s *settings, o *batchOptions) (*batchPlan, error) {
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
	p := &batchPlan{opts: *o, settings: *s, inputDir: flags.Arg(0), out: o.out, shardI: 0, shardN: 1}
	if o.shard == shardAuto {
		var err error
		if p.shardI, p.shardN, p.shardFrom, err = shardFromEnv(os.LookupEnv); err != nil {
			return nil, err
		}
	} else if o.shard != "" {
		var err error
		if p.shardI, p.shardN, err = parseShard(o.shard); err != nil {
			return nil, err
		}
	}
	if o.prune && p.shardN > 1 {
		return nil, usagef("--prune works on the whole folder, so not with --shard %s: run it once, unsharded (or after the shards)", o.shard)
	}
	for _, g := range append(append([]string{}, o.include...), o.exclude...) {
		if _, err := path.Match(g, ""); err != nil {
			return nil, usagef("--include/--exclude %q is not a valid glob: %v", g, err)
		}
	}
	// Resolve with one worker to check the parameters; the real count is
	// set below.
	check, err := resolve(*s, 1)
	if err != nil {
		return nil, err
	}
	st, err := os.Stat(p.inputDir)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return nil, usagef("INPUT_DIR %s does not exist", p.inputDir)
	case err != nil:
		return nil, usagef("INPUT_DIR %s: %v", p.inputDir, err)
	case !st.IsDir():
		return nil, usagef("INPUT_DIR %s is a file, not a folder (use 'cleave segment' for single images)", p.inputDir)
	}
	if p.realInput, err = filepath.EvalSymlinks(p.inputDir); err != nil {
		return nil, usagef("INPUT_DIR %s: %v", p.inputDir, err)
	}
	if p.realInput, err = filepath.Abs(p.realInput); err != nil {
		return nil, usagef("INPUT_DIR %s: %v", p.inputDir, err)
	}
	if p.realOut, err = checkOutDir(p.out); err != nil {
		return nil, err
	}
	if within(p.realOut, p.realInput) {
		return nil, usagef("--out %s is inside INPUT_DIR %s: its outputs would be read back as inputs on the next run; choose a folder outside INPUT_DIR", p.out, p.inputDir)
	}
	// The walk starts at the resolved folder, so that an INPUT_DIR that is
	// a symbolic link (as cluster data folders often are) is followed.
	if p.all, p.skipped, err = discover(p.realInput, p.realOut, o); err != nil {
		return nil, err
	}
	if s.Planes == pipeline.PlanesAll {
		p.all = planeInputs(p.realInput, p.all, check.Load)
	}
	if p.oldIndex, err = existingIndex(p.out); err != nil {
		return nil, &usageError{err}
	}
	if p.shardN == 1 {
		if err := checkTopFiles(p.out, p.oldIndex); err != nil {
			return nil, &usageError{err}
		}
	}
	absOut, _ := filepath.Abs(p.out)
	checked := map[string]bool{}
	for _, in := range p.all {
		dir := path.Dir(in.Stem)
		if checked[dir] {
			continue
		}
		checked[dir] = true
		// A symbolic link already in --out must not lead the outputs
		// elsewhere, nor a file stand where a folder is needed.
		d, isDir, err := resolveExisting(filepath.Join(absOut, filepath.FromSlash(dir)))
		switch {
		case err != nil:
			return nil, usagef("--out %s: %v", p.out, err)
		case !isDir:
			return nil, usagef("the outputs of %s need the folder %s, but a file stands in its way in --out", in.Input, filepath.Join(p.out, filepath.FromSlash(dir)))
		case !within(d, p.realOut):
			return nil, usagef("the outputs of %s would go to %s, outside --out, through a symbolic link in --out; remove the link", in.Input, d)
		case within(d, p.realInput):
			return nil, usagef("the outputs of %s would go into %s, inside INPUT_DIR, and be read back as inputs; choose another --out", in.Input, d)
		}
	}
	for k := range p.all {
		if k%p.shardN == p.shardI {
			p.mine = append(p.mine, k)
		}
	}
	cores := runtime.NumCPU()
	p.jobs = o.jobs
	if p.jobs == 0 {
		p.jobs = cores
	}
	p.jobs = max(1, min(p.jobs, len(p.mine)))
	p.workers = o.workers
	if p.workers == 0 {
		p.workers = max(1, cores/p.jobs)
	}
	if p.res, err = resolve(*s, p.workers); err != nil {
		return nil, err
	}
	return p, nil
}

// parseShard reads "I/N" with 0 <= I < N.
func parseShard(v string) (i, n int, err error) {
	a, b, ok := strings.Cut(strings.TrimSpace(v), "/")
	if ok {
		var e1, e2 error
		i, e1 = strconv.Atoi(a)
		n, e2 = strconv.Atoi(b)
		if e1 == nil && e2 == nil && n >= 1 && i >= 0 && i < n {
			return i, n, nil
		}
	}
	return 0, 0, usagef("--shard must be I/N with 0 <= I < N (e.g. 0/4 for the first of four tasks), got %q", v)
}

// checkOutDir checks, without writing anything, that --out is or can be
// made a writable folder, and returns its absolute path with symbolic
// links resolved (of the part that exists).
func checkOutDir(out string) (string, error) {
	abs, err := filepath.Abs(out)
	if err != nil {
		return "", usagef("--out %s: %v", out, err)
	}
	existing, rest, err := existingPrefix(abs)
	switch {
	case err != nil:
		return "", usagef("--out %s: %v", out, err)
	case !isDirPath(existing):
		return "", usagef("--out %s: %s is a file, not a folder", out, existing)
	}
	// A probe file, removed at once, is the only test of writability that
	// also holds for root on a read-only file system.
	probe, err := os.CreateTemp(existing, ".cleave-probe-*")
	if err != nil {
		return "", usagef("--out %s: cannot write in %s: %v", out, existing, errors.Unwrap(err))
	}
	probe.Close()
	os.Remove(probe.Name())
	real, err := filepath.EvalSymlinks(existing)
	if err != nil {
		return "", usagef("--out %s: %v", out, err)
	}
	return filepath.Join(real, rest), nil
}

// existingPrefix splits an absolute path into its longest existing prefix
// and the rest.
func existingPrefix(abs string) (existing, rest string, err error) {
	existing = abs
	for {
		_, err := os.Stat(existing)
		if err == nil {
			return existing, rest, nil
		}
		if !errors.Is(err, fs.ErrNotExist) && !errors.Is(err, syscall.ENOTDIR) {
			return "", "", err
		}
		parent := filepath.Dir(existing)
		if parent == existing {
			return "", "", fmt.Errorf("no existing parent folder")
		}
		rest = filepath.Join(filepath.Base(existing), rest)
		existing = parent
	}
}

func isDirPath(p string) bool {
	st, err := os.Stat(p)
	return err == nil && st.IsDir()
}

// resolveExisting resolves the symbolic links of the existing part of an
// absolute path; isDir tells whether that part is a folder.
func resolveExisting(abs string) (real string, isDir bool, err error) {
	existing, rest, err := existingPrefix(abs)
	if err != nil {
		return "", false, err
	}
	r, err := filepath.EvalSymlinks(existing)
	if err != nil {
		return "", false, err
	}
	return filepath.Join(r, rest), isDirPath(existing), nil
}

// within reports whether path p is dir or lies below it (both absolute and
// clean).
func within(p, dir string) bool {
	rel, err := filepath.Rel(dir, p)
	return err == nil && rel != ".." && !strings.HasPrefix(rel, ".."+string(filepath.Separator)) && !filepath.IsAbs(rel)
}

// batchSkip is an entry of INPUT_DIR that batch does not read, with the
// reason: a manifest row with status skipped.
type batchSkip struct {
	Input  string `json:"input"` // path relative to INPUT_DIR, slash-separated
	Reason string `json:"reason"`
}

// discover lists the image files under root (a folder with symbolic links
// resolved), sorted by relative path, with their output stems, and the
// entries it skips: entries named like images (and passing --include and
// --exclude) that are not regular files or links to them (FIFOs,
// devices, sockets, dangling or looping links, links to folders), and,
// with --recursive, subfolders it cannot read. Nothing is opened but
// folders: a FIFO would block a reader for ever. Names starting with a dot
// are skipped silently (hidden files, cleave's temporary files); the
// folder realOut is not entered.
func discover(root, realOut string, o *batchOptions) ([]batchInput, []batchSkip, error) {
	var rels []string
	var skipped []batchSkip
	relOf := func(p string) (string, error) {
		rel, err := filepath.Rel(root, p)
		return filepath.ToSlash(rel), err
	}
	err := filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			if p == root {
				return fmt.Errorf("cannot read %s: %w", p, errors.Unwrap(err))
			}
			// A subfolder that cannot be read (WalkDir reports it after
			// failing to list it): recorded, and the walk goes on.
			rel, rerr := relOf(p)
			if rerr != nil {
				return rerr
			}
			skipped = append(skipped, batchSkip{Input: rel, Reason: "folder not read: " + pipeline.DescribeErr(err)})
			if d != nil && d.IsDir() {
				return filepath.SkipDir
			}
			return nil
		}
		if p == root {
			return nil
		}
		name := d.Name()
		if strings.HasPrefix(name, ".") {
			if d.IsDir() {
				return filepath.SkipDir
			}
			return nil
		}
		if d.IsDir() {
			if !o.recursive || p == realOut {
				return filepath.SkipDir
			}
			return nil
		}
		if !pipeline.IsImageName(name) {
			return nil
		}
		rel, err := relOf(p)
		if err != nil {
			return err
		}
		if !globsAllow(rel, o.include, o.exclude) {
			return nil
		}
		if !o.withTruths && isTruthName(name) {
			skipped = append(skipped, batchSkip{Input: rel, Reason: truthSkipReason})
			return nil
		}
		if reason := notRegular(p, d.Type()); reason != "" {
			skipped = append(skipped, batchSkip{Input: rel, Reason: reason})
			return nil
		}
		rels = append(rels, rel)
		return nil
	})
	if err != nil {
		return nil, nil, usagef("INPUT_DIR: %v", err)
	}
	sort.Strings(rels)
	sort.Slice(skipped, func(a, b int) bool { return skipped[a].Input < skipped[b].Input })
	inputs, err := stemsFor(rels)
	return inputs, skipped, err
}

// truthSkipReason is the manifest reason of a file skipped because it is
// named like a truth mask.
const truthSkipReason = "named like a truth mask (stem NAME.truth, NAME_mask or NAME_truth), as tune and score read them; --with-truths segments it"

// notRegular says why the entry at p, of type t (from its folder listing),
// is not read as an image, or "" for a regular file or a symbolic link to
// one. Only the link is followed (stat), nothing is opened.
func notRegular(p string, t fs.FileMode) string {
	if t.IsRegular() {
		return ""
	}
	link := ""
	if t&fs.ModeSymlink != 0 {
		st, err := os.Stat(p)
		switch {
		case outlock.IsLinkLoop(err):
			return "a symbolic link that loops (too many levels of links)"
		case errors.Is(err, fs.ErrNotExist):
			target, _ := os.Readlink(p)
			return fmt.Sprintf("a symbolic link to %s, which does not exist", target)
		case err != nil:
			return "a symbolic link that cannot be followed: " + pipeline.DescribeErr(err)
		case st.Mode().IsRegular():
			return ""
		}
		t, link = st.Mode().Type(), "a symbolic link to "
	}
	switch {
	case t.IsDir():
		return link + "a folder, not an image file (links to folders are not followed)"
	case t&fs.ModeNamedPipe != 0:
		return link + "a named pipe (FIFO), not a regular file; not opened"
	case t&fs.ModeSocket != 0:
		return link + "a socket, not a regular file; not opened"
	case t&fs.ModeDevice != 0:
		return link + "a device, not a regular file; not opened"
	}
	return link + "not a regular file; not opened"
}

// lockOut takes the lock on an output folder (outlock.Take); a refusal,
// another process holding it, is a usage error (exit 2).
func lockOut(dir string, exclusive bool, what string) (*outlock.Lock, error) {
	l, err := outlock.Take(dir, exclusive, what)
	var le *outlock.LockedError
	if errors.As(err, &le) {
		return nil, &usageError{err}
	}
	return l, err
}

// globsAllow applies --include and --exclude to a relative path: a pattern
// with a slash matches the whole path, one without matches the name.
func globsAllow(rel string, include, exclude []string) bool {
	match := func(g string) bool {
		subject := path.Base(rel)
		if strings.Contains(g, "/") {
			subject = rel
		}
		ok, _ := path.Match(g, subject)
		return ok
	}
	if len(include) > 0 {
		in := false
		for _, g := range include {
			in = in || match(g)
		}
		if !in {
			return false
		}
	}
	for _, g := range exclude {
		if match(g) {
			return false
		}
	}
	return true
}

// stemsFor gives each input its output stem: the relative path without the
// extension, or with it when another input in the same folder has the same
// stem. rels is sorted.
func stemsFor(rels []string) ([]batchInput, error) {
	count := map[string]int{}
	for _, r := range rels {
		count[strings.TrimSuffix(r, path.Ext(r))]++
	}
	out := make([]batchInput, len(rels))
	owner := map[string]string{}
	for k, r := range rels {
		stem := strings.TrimSuffix(r, path.Ext(r))
		if count[stem] > 1 {
			stem = r
		}
		if prev, dup := owner[stem]; dup {
			return nil, usagef("%s and %s would write the same outputs %s.*; rename one of them", prev, r, stem)
		}
		owner[stem] = r
		out[k] = batchInput{Input: r, Stem: stem}
	}
	return out, nil
}

// countMine names this run's inputs in words: "12 files", or with
// --planes all "30 images from 10 files" (each plane an image).
func (p *batchPlan) countMine() string {
	files := map[string]bool{}
	planes := false
	for _, k := range p.mine {
		files[p.all[k].Input] = true
		planes = planes || p.all[k].Plane != nil
	}
	if !planes {
		return plural(len(p.mine), "file")
	}
	return plural(len(p.mine), "image") + " from " + plural(len(files), "file")
}

// planeInputs makes every plane of each input an input of its own
// (--planes all), stems STEM.zNNN as cleave segment names them (see
// expandPlanes), in plane order. The planes are counted from each file's
// header (root is the resolved INPUT_DIR). A file that cannot be opened
// stays one input without a plane: segmenting it fails and records why.
func planeInputs(root string, ins []batchInput, load imageio.LoadOptions) []batchInput {
	var out []batchInput
	for _, in := range ins {
		src, err := imageio.Open(filepath.Join(root, filepath.FromSlash(in.Input)), load)
		if err != nil {
			out = append(out, in)
			continue
		}
		n := src.Stack().Planes
		src.Close()
		for z := range n {
			out = append(out, batchInput{Input: in.Input, Stem: pipeline.PlaneStem(in.Stem, z, n), Plane: &z})
		}
	}
	return out
}

// batchStatus is what happened to one input in this run.
type batchStatus int

const (
	statusComputed batchStatus = iota
	statusUpToDate
	statusFailed
	statusNotDone // interrupted or stopped by --fail-fast before finishing
)

type batchResult struct {
	k      int
	status batchStatus
	err    error
	notes  []string // printed on stderr: output names that changed (labelWarningCode)
}

// execute runs the plan: clean up, write the index, process this shard's
// inputs on p.jobs goroutines, then write the manifest and report.
func (p *batchPlan) execute(ctx context.Context, stderr io.Writer) int {
	start := time.Now()
	defer pipeline.SetMemoryLimit(p.res.Params.MaxMemory)()
	if err := os.MkdirAll(p.out, 0o755); err != nil {
		fmt.Fprintf(stderr, "cleave batch: cannot create the output folder: %v\n", err)
		return exitFail
	}
	what := "cleave batch"
	if p.shardN > 1 {
		what = fmt.Sprintf("cleave batch --shard %d/%d", p.shardI, p.shardN)
	}
	lock, err := lockOut(p.out, p.shardN == 1, what)
	if err != nil {
		fmt.Fprintf(stderr, "cleave batch: %v\n", err)
		return exitCode(err)
	}
	defer lock.Release()
	warnUnlocked(stderr, lock, p.out)
	// Temporary files of an earlier, killed run: only a run that holds the
	// lock alone removes them. A shard leaves them, since they may be
	// another shard's, being written now; its own it removes as it goes.
	if p.shardN == 1 {
		dirs := outputDirs(p.all)
		if p.oldIndex != nil {
			dirs = append(dirs, outputDirs(p.oldIndex.Inputs)...)
		}
		if err := removeTempFiles(p.out, dirs); err != nil {
			fmt.Fprintf(stderr, "cleave batch: %v\n", err)
			return exitFail
		}
	}
	// Outputs of inputs that left the selection: listed, removed with
	// --prune (an unsharded run holds the lock alone).
	if p.shardN == 1 {
		stale, err := staleOutputs(p.out, p.all)
		if err == nil && p.opts.prune {
			err = pruneStale(stale)
		}
		if err != nil {
			fmt.Fprintf(stderr, "cleave batch: %v\n", err)
			return exitFail
		}
		reportStale(stderr, p.out, stale, p.opts.prune)
	}
	idx := &batchIndex{Tool: "cleave", Version: version, InputDir: p.inputDir, Settings: p.settings, Inputs: p.all, Skipped: p.skipped, Files: []string{}}
	if p.all == nil {
		idx.Inputs = []batchInput{}
	}
	if p.skipped == nil {
		idx.Skipped = []batchSkip{}
	}
	switch {
	case p.shardN == 1:
		idx.Files = topFiles // written at the end of this run
	case p.oldIndex != nil && p.oldIndex.Files != nil:
		idx.Files = p.oldIndex.Files
	case p.oldIndex != nil:
		idx.Files = legacyTopFiles(p.out)
	}
	if err := writeBatchIndex(p.out, idx, p.owner()); err != nil {
		fmt.Fprintf(stderr, "cleave batch: %v\n", err)
		return exitFail
	}
	if !p.opts.quiet {
		truths := 0
		for _, sk := range p.skipped {
			if sk.Reason == truthSkipReason {
				truths++
				continue
			}
			fmt.Fprintf(stderr, "cleave batch: skipped %s: %s\n", filepath.Join(p.inputDir, filepath.FromSlash(sk.Input)), sk.Reason)
		}
		if truths > 0 {
			fmt.Fprintf(stderr, "cleave batch: skipped %s named like truth masks (NAME.truth, NAME_mask, NAME_truth; listed in %s); --with-truths segments them\n", plural(truths, "file"), manifestName)
		}
	}

	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	work := make(chan int)
	results := make(chan batchResult)
	var wg sync.WaitGroup
	for range p.jobs {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for k := range work {
				results <- p.one(ctx, k)
			}
		}()
	}
	go func() {
		defer close(work)
		for _, k := range p.mine {
			select {
			case work <- k:
			case <-ctx.Done():
				return
			}
		}
	}()
	go func() { wg.Wait(); close(results) }()

	prog := progress.NewBatch(stderr, len(p.mine), p.opts.quiet)
	tick := time.NewTicker(p.opts.progressEvery)
	defer tick.Stop()
	var computed, upToDate, failed, finished int
	stoppedEarly := false
	for done := false; !done; {
		select {
		case r, ok := <-results:
			if !ok {
				done = true
				break
			}
			if len(r.notes) > 0 && !p.opts.quiet {
				prog.Clear()
				for _, n := range r.notes {
					fmt.Fprintf(stderr, "cleave batch: %s\n", n)
				}
			}
			switch r.status {
			case statusComputed:
				computed++
			case statusUpToDate:
				upToDate++
			case statusFailed:
				failed++
				prog.Clear()
				fmt.Fprintf(stderr, "cleave batch: %v\n", r.err)
				if p.opts.failFast && !stoppedEarly {
					stoppedEarly = true
					cancel()
				}
			case statusNotDone:
				continue
			}
			finished++
			prog.Add(finished, failed, computed+failed)
		case <-tick.C:
			prog.Line(finished, failed)
		}
	}
	prog.Finish()
	interrupted := ctx.Err() != nil && !stoppedEarly
	notDone := len(p.mine) - finished

	wrote, warned := "", 0
	if p.shardN == 1 {
		rows, err := writeManifestAndReport(p.out, idx, p.owner())
		if err != nil {
			fmt.Fprintf(stderr, "cleave batch: %v\n", err)
			return exitFail
		}
		warned = countRows(rows).warned
		wrote = fmt.Sprintf(" -> %s, %s, %s", filepath.Join(p.out, manifestName), filepath.Join(p.out, objectsName), filepath.Join(p.out, reportName))
	}
	if !p.opts.quiet {
		shard := ""
		if p.shardN > 1 {
			shard = fmt.Sprintf(" (shard %d/%d of %d)", p.shardI, p.shardN, len(p.all))
		}
		if p.shardFrom != "" {
			shard = fmt.Sprintf(" (shard %d/%d of %d, from %s)", p.shardI, p.shardN, len(p.all), p.shardFrom)
		}
		fmt.Fprintf(stderr, "cleave batch: %s%s: %d computed now, %d already up to date, %d failed", p.countMine(), shard, computed, upToDate, failed)
		if notDone > 0 {
			fmt.Fprintf(stderr, ", %d not done", notDone)
		}
		if warned > 0 {
			fmt.Fprintf(stderr, ", %d with warnings to check (see the report)", warned)
		}
		truths := 0
		for _, sk := range p.skipped {
			if sk.Reason == truthSkipReason {
				truths++
			}
		}
		if truths > 0 {
			fmt.Fprintf(stderr, ", %s skipped", plural(truths, "truth mask"))
		}
		if n := len(p.skipped) - truths; n == 1 {
			fmt.Fprint(stderr, ", 1 other entry skipped")
		} else if n > 1 {
			fmt.Fprintf(stderr, ", %d other entries skipped", n)
		}
		fmt.Fprintf(stderr, " in %.1f s%s\n", time.Since(start).Seconds(), wrote)
		if p.shardN > 1 {
			fmt.Fprintf(stderr, "cleave batch: when every shard is done, run: cleave batch --rebuild %s\n", p.out)
		}
	}
	switch {
	case interrupted:
		fmt.Fprintln(stderr, "cleave batch: interrupted; run the same command again to finish")
		return exitFail
	case stoppedEarly:
		fmt.Fprintln(stderr, "cleave batch: stopped at the first failure (--fail-fast)")
		return exitFail
	case failed > 0:
		return exitFail
	}
	return exitOK
}

// one processes input k: skipped when its record is up to date, else
// segmented; a failure is recorded in its STEM.json.
func (p *batchPlan) one(ctx context.Context, k int) batchResult {
	in := p.all[k]
	src := filepath.Join(p.inputDir, filepath.FromSlash(in.Input))
	dir := filepath.Join(p.out, filepath.FromSlash(path.Dir(in.Stem)))
	set := pipeline.OutputSet{Dir: dir, Stem: path.Base(in.Stem)}
	if ctx.Err() != nil {
		return batchResult{k: k, status: statusNotDone}
	}
	if p.upToDate(src, set) {
		return batchResult{k: k, status: statusUpToDate}
	}
	fail := func(err error) batchResult {
		err = withFlags(err)
		rec := &pipeline.Record{Tool: "cleave", Version: version, Status: "failed", Error: err.Error(), Input: pipeline.InputInfo{Path: src},
			Settings: &p.settings, Eigenvalues: []float64{}, SplitNcuts: []float64{}, Seconds: map[string]float64{}}
		// Reached only when the output folder cannot be made, so no record
		// can be there; force is off all the same, to replace nothing.
		if werr := pipeline.WriteRecord(set.Path(".json"), rec, false, p.owner()); werr != nil {
			err = fmt.Errorf("%w (and the record could not be written: %v)", err, werr)
		}
		return batchResult{k: k, status: statusFailed, err: err}
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fail(fmt.Errorf("%s: cannot create the output folder: %w", src, err))
	}
	// No output may leave --out, even through a symbolic link placed in it.
	if real, err := filepath.EvalSymlinks(dir); err != nil {
		return fail(fmt.Errorf("%s: output folder %s: %w", src, dir, err))
	} else if abs, _ := filepath.Abs(real); !within(abs, p.realOut) {
		return batchResult{k: k, status: statusFailed, err: fmt.Errorf("%s: output folder %s leads outside --out (to %s) through a symbolic link; nothing written", src, dir, abs)}
	}
	res := p.res
	if in.Plane != nil {
		r := *p.res
		r.Selection.Plane = *in.Plane
		res = &r
	}
	// pipeline.Process records a failure in STEM.json itself, unless a
	// file that cleave did not write stands at that path.
	rec, err := pipeline.Process(ctx, pipeline.Job{Path: src, Out: set, Request: p.settings, Options: res, Replace: pipeline.ReplaceOwn, Owner: p.owner(), Voice: voice()})
	if err != nil {
		if ctx.Err() != nil {
			return batchResult{k: k, status: statusNotDone}
		}
		return batchResult{k: k, status: statusFailed, err: err}
	}
	// Other warnings are in the report; this one changes an output's
	// name, so it is said at once too.
	var notes []string
	for _, w := range rec.Warnings {
		if w.Code == pipeline.LabelWarningCode {
			notes = append(notes, fmt.Sprintf("%s: warning: %s", src, w.Message))
		}
	}
	return batchResult{k: k, status: statusComputed, notes: notes}
}

// owner is the owner tag of this run's temporary files: the process, and
// the shard when there are several (imageio.WriteAtomicAs).
func (p *batchPlan) owner() string {
	if p.shardN > 1 {
		return fmt.Sprintf("shard%dof%d-%s", p.shardI, p.shardN, imageio.DefaultTempOwner())
	}
	return imageio.DefaultTempOwner()
}

// upToDate reports whether the record of set is ok for the same cleave
// version, the same requested settings and the same input bytes, with
// every output it lists present.
func (p *batchPlan) upToDate(src string, set pipeline.OutputSet) bool {
	rec, err := pipeline.ReadRecord(set.Path(".json"))
	if err != nil || rec.Status != "ok" || rec.Version != version || rec.Settings == nil || !pipeline.SameRequest(*rec.Settings, p.settings) {
		return false
	}
	for _, name := range rec.Outputs {
		if _, err := os.Stat(filepath.Join(set.Dir, name)); err != nil {
			return false
		}
	}
	sum, err := fileSHA256(src)
	return err == nil && sum == rec.Input.SHA256
}

func fileSHA256(p string) (string, error) {
	f, err := os.Open(p)
	if err != nil {
		return "", err
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return "", err
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}

// outputDirs are the folders, relative to --out and slash-separated,
// that hold the outputs of inputs, with the top of --out itself.
func outputDirs(inputs []batchInput) []string {
	dirs := map[string]bool{".": true}
	for _, in := range inputs {
		dirs[path.Dir(in.Stem)] = true
	}
	return slices.Sorted(maps.Keys(dirs))
}

// removeTempFiles deletes, in the folders dirs of --out (relative,
// slash-separated), the temporary files that imageio.WriteAtomicAs leaves
// when a process is killed mid-write, whoever their owner. Only a run that
// holds the lock on --out alone may call it: then no other process is
// writing. Only the folders cleave writes into are looked at, so a user's
// files elsewhere under --out (even an INPUT_DIR inside it) are left
// alone.
func removeTempFiles(out string, dirs []string) error {
	for _, d := range dirs {
		folder := filepath.Join(out, filepath.FromSlash(d))
		entries, err := os.ReadDir(folder)
		if err != nil {
			continue // not created yet
		}
		for _, e := range entries {
			if _, _, ok := imageio.ParseTempName(e.Name()); ok && e.Type().IsRegular() {
				if err := os.Remove(filepath.Join(folder, e.Name())); err != nil && !errors.Is(err, fs.ErrNotExist) {
					return fmt.Errorf("cannot remove a temporary file: %w", err)
				}
			}
		}
	}
	return nil
}
