// Package batch is the engine of cleave batch: it plans a run over a
// folder of images (the inputs, their output stems, the entries it
// skips, the shard's share), runs the per-image pipeline on them in
// parallel, skipping every image whose record is up to date, and keeps
// the output folder consistent: the advisory lock, the index of inputs,
// the temporary files of killed runs, the outputs of inputs no longer
// selected, and manifest.csv, objects.csv and report.html rebuilt from
// the records.
package batch

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
	"strings"
	"sync"
	"syscall"
	"time"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/outlock"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/progress"
	"github.com/cleave-seg/cleave/imageio"
)

// Config is one batch as the command asked for it: the folders, the
// selection of inputs, the share of this task and the parameters. The
// command checks the syntax (ranges, globs, the shard); Plan checks the
// folders.
type Config struct {
	InputDir, Out string // as given
	// Include and Exclude are globs (path.Match) on the name, or on the
	// relative path when they hold a slash.
	Include, Exclude []string
	Recursive        bool // descend into subfolders (not through links)
	WithTruths       bool // also read files named like truth masks
	FailFast         bool // stop at the first image that fails
	Quiet            bool // no progress and no skip lines on Log
	Prune            bool // remove the outputs of inputs no longer selected
	// Jobs is the images processed at once and Workers the threads per
	// image; 0 chooses (one image per core, cores / jobs threads; the
	// cores are GOMAXPROCS, as for every worker count of cleave).
	Jobs, Workers int
	// ShardI of ShardN is this task's share: every ShardN-th input from
	// the ShardI-th (0 of 1: all). ShardFrom names where they were read,
	// for the log, or "".
	ShardI, ShardN int
	ShardFrom      string
	// Holder describes this run in the lock file and in another run's
	// refusal (the command line, for a person to recognize).
	Holder string
	// ProgressEvery is the interval of the plain progress line when Log is
	// not a terminal.
	ProgressEvery time.Duration
	// Request is the parameters as asked for (the index and the records
	// keep them; a record is current when it holds the same), Options
	// the same as the pipeline takes them (Params.Workers is set by the
	// plan).
	Request pipeline.Request
	Options *pipeline.Options
	// IsTruth reports a file name that follows the truth-mask naming rule
	// (skipped unless WithTruths); nil: none does.
	IsTruth func(name string) bool
	Voice   pipeline.Voice
	// Log receives the lines of the run: entries skipped, failures,
	// progress, earlier outputs kept or removed, warnings.
	Log io.Writer
}

// RequestError is an error in what was asked (a folder, an input name,
// a file of the user's in the way): nothing was written, and the command
// exits as for wrong usage. It is the pipeline's.
type RequestError = pipeline.RequestError

func requestf(format string, a ...any) error { return &RequestError{Err: fmt.Errorf(format, a...)} }

// Plan is a checked batch, ready to run: every input, sorted by relative
// path, and this task's share of them.
type Plan struct {
	Config
	realOut, realInput string  // symbolic links resolved
	All                []Input // every input, sorted by relative path
	Skipped            []Skip  // entries named like images that are not read, sorted
	oldIndex           *Index  // the index an earlier run left in Out, or nil
	Mine               []int   // indices into All of this shard's inputs
	jobs               int
	opts               *pipeline.Options
}

// Input is one input image.
type Input struct {
	Input string `json:"input"` // path relative to the input folder, slash-separated
	Stem  string `json:"stem"`  // output path prefix relative to the output folder, slash-separated
	// Plane is the plane segmented, when every plane is segmented on its
	// own (each plane of a file is an input of its own, stem STEM.zNNN);
	// nil otherwise.
	Plane *int `json:"plane,omitempty"`
}

// NewPlan checks the folders of c and lists the inputs, writing nothing.
// An error in what was asked is a *RequestError.
func NewPlan(c Config) (*Plan, error) {
	if c.ShardN == 0 {
		c.ShardN = 1
	}
	if c.Log == nil {
		c.Log = io.Discard
	}
	if c.IsTruth == nil {
		c.IsTruth = func(string) bool { return false }
	}
	p := &Plan{Config: c}
	st, err := os.Stat(p.InputDir)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return nil, requestf("INPUT_DIR %s does not exist", p.InputDir)
	case err != nil:
		return nil, requestf("INPUT_DIR %s: %v", p.InputDir, err)
	case !st.IsDir():
		return nil, requestf("INPUT_DIR %s is a file, not a folder (use 'cleave segment' for single images)", p.InputDir)
	}
	if p.realInput, err = filepath.EvalSymlinks(p.InputDir); err != nil {
		return nil, requestf("INPUT_DIR %s: %v", p.InputDir, err)
	}
	if p.realInput, err = filepath.Abs(p.realInput); err != nil {
		return nil, requestf("INPUT_DIR %s: %v", p.InputDir, err)
	}
	if p.realOut, err = checkOutDir(p.Out); err != nil {
		return nil, err
	}
	if within(p.realOut, p.realInput) {
		return nil, requestf("`out` %s is inside INPUT_DIR %s: its outputs would be read back as inputs on the next run; choose a folder outside INPUT_DIR", p.Out, p.InputDir)
	}
	// The walk starts at the resolved folder, so that an INPUT_DIR that is
	// a symbolic link (as cluster data folders often are) is followed.
	if p.All, p.Skipped, err = p.discover(); err != nil {
		return nil, err
	}
	if p.Options.EveryPlane {
		p.All = planeInputs(p.realInput, p.All, p.Options.Load)
	}
	if p.oldIndex, err = existingIndex(p.Out); err != nil {
		return nil, &RequestError{Err: err}
	}
	if p.ShardN == 1 {
		if err := checkTopFiles(p.Out, p.oldIndex); err != nil {
			return nil, &RequestError{Err: err}
		}
	}
	absOut, _ := filepath.Abs(p.Out)
	checked := map[string]bool{}
	for _, in := range p.All {
		dir := path.Dir(in.Stem)
		if checked[dir] {
			continue
		}
		checked[dir] = true
		// A symbolic link already in the output folder must not lead the
		// outputs elsewhere, nor a file stand where a folder is needed.
		d, isDir, err := resolveExisting(filepath.Join(absOut, filepath.FromSlash(dir)))
		switch {
		case err != nil:
			return nil, requestf("`out` %s: %v", p.Out, err)
		case !isDir:
			return nil, requestf("the outputs of %s need the folder %s, but a file stands in its way in `out`", in.Input, filepath.Join(p.Out, filepath.FromSlash(dir)))
		case !within(d, p.realOut):
			return nil, requestf("the outputs of %s would go to %s, outside `out`, through a symbolic link in `out`; remove the link", in.Input, d)
		case within(d, p.realInput):
			return nil, requestf("the outputs of %s would go into %s, inside INPUT_DIR, and be read back as inputs; choose another `out`", in.Input, d)
		}
	}
	for k := range p.All {
		if k%p.ShardN == p.ShardI {
			p.Mine = append(p.Mine, k)
		}
	}
	cores := runtime.GOMAXPROCS(0)
	p.jobs = c.Jobs
	if p.jobs == 0 {
		p.jobs = cores
	}
	p.jobs = max(1, min(p.jobs, len(p.Mine)))
	workers := c.Workers
	if workers == 0 {
		workers = max(1, cores/p.jobs)
	}
	opts := *c.Options
	opts.Params.Workers = workers
	p.opts = &opts
	return p, nil
}

// checkOutDir checks, without writing anything, that the output folder is or can be
// made a writable folder, and returns its absolute path with symbolic
// links resolved (of the part that exists).
func checkOutDir(out string) (string, error) {
	abs, err := filepath.Abs(out)
	if err != nil {
		return "", requestf("`out` %s: %v", out, err)
	}
	existing, rest, err := existingPrefix(abs)
	switch {
	case err != nil:
		return "", requestf("`out` %s: %v", out, err)
	case !isDirPath(existing):
		return "", requestf("`out` %s: %s is a file, not a folder", out, existing)
	}
	// A probe file, removed at once, is the only test of writability that
	// also holds for root on a read-only file system.
	probe, err := os.CreateTemp(existing, ".cleave-probe-*")
	if err != nil {
		return "", requestf("`out` %s: cannot write in %s: %v", out, existing, errors.Unwrap(err))
	}
	probe.Close()
	os.Remove(probe.Name())
	real, err := filepath.EvalSymlinks(existing)
	if err != nil {
		return "", requestf("`out` %s: %v", out, err)
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

// Skip is an entry of INPUT_DIR that batch does not read, with the
// reason: a manifest row with status skipped.
type Skip struct {
	Input  string `json:"input"` // path relative to INPUT_DIR, slash-separated
	Reason string `json:"reason"`
}

// discover lists the image files under the resolved input folder, sorted
// by relative path, with their output stems, and the entries it skips:
// entries named like images (and passing Include and Exclude) that are
// not regular files or links to them (FIFOs, devices, sockets, dangling
// or looping links, links to folders), files named like truth masks
// (unless WithTruths), and, with Recursive, subfolders it cannot read.
// Nothing is opened but folders: a FIFO would block a reader for ever.
// Names starting with a dot are skipped silently (hidden files, cleave's
// temporary files); the output folder is not entered.
func (p *Plan) discover() ([]Input, []Skip, error) {
	root, realOut := p.realInput, p.realOut
	var rels []string
	var skipped []Skip
	relOf := func(p string) (string, error) {
		rel, err := filepath.Rel(root, p)
		return filepath.ToSlash(rel), err
	}
	err := filepath.WalkDir(root, func(q string, d fs.DirEntry, err error) error {
		if err != nil {
			if q == root {
				return fmt.Errorf("cannot read %s: %w", q, errors.Unwrap(err))
			}
			// A subfolder that cannot be read (WalkDir reports it after
			// failing to list it): recorded, and the walk goes on.
			rel, rerr := relOf(q)
			if rerr != nil {
				return rerr
			}
			skipped = append(skipped, Skip{Input: rel, Reason: "folder not read: " + pipeline.DescribeErr(err)})
			if d != nil && d.IsDir() {
				return filepath.SkipDir
			}
			return nil
		}
		if q == root {
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
			if !p.Recursive || q == realOut {
				return filepath.SkipDir
			}
			return nil
		}
		if !pipeline.IsImageName(name) {
			return nil
		}
		rel, err := relOf(q)
		if err != nil {
			return err
		}
		if !globsAllow(rel, p.Include, p.Exclude) {
			return nil
		}
		if !p.WithTruths && p.IsTruth(name) {
			skipped = append(skipped, Skip{Input: rel, Reason: p.truthReason()})
			return nil
		}
		if reason := notRegular(q, d.Type()); reason != "" {
			skipped = append(skipped, Skip{Input: rel, Reason: reason})
			return nil
		}
		rels = append(rels, rel)
		return nil
	})
	if err != nil {
		return nil, nil, requestf("INPUT_DIR: %v", err)
	}
	sort.Strings(rels)
	sort.Slice(skipped, func(a, b int) bool { return skipped[a].Input < skipped[b].Input })
	inputs, err := stemsFor(rels)
	return inputs, skipped, err
}

// truthSkipReason is the manifest reason of a file skipped because it is
// named like a truth mask (in the words of the Voice: truthReason).
const truthSkipReason = "named like a truth mask (stem NAME.truth, NAME_mask or NAME_truth), as tune and score read them; `with-truths` segments it"

func (p *Plan) truthReason() string { return p.Voice.Msg(truthSkipReason) }

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
// another process holding it, is a *RequestError.
func lockOut(dir string, exclusive bool, what string) (*outlock.Lock, error) {
	l, err := outlock.Take(dir, exclusive, what)
	var le *outlock.LockedError
	if errors.As(err, &le) {
		return nil, &RequestError{Err: err}
	}
	return l, err
}

// globsAllow applies Include and Exclude to a relative path: a pattern
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
func stemsFor(rels []string) ([]Input, error) {
	count := map[string]int{}
	for _, r := range rels {
		count[strings.TrimSuffix(r, path.Ext(r))]++
	}
	out := make([]Input, len(rels))
	owner := map[string]string{}
	for k, r := range rels {
		stem := strings.TrimSuffix(r, path.Ext(r))
		if count[stem] > 1 {
			stem = r
		}
		if prev, dup := owner[stem]; dup {
			return nil, requestf("%s and %s would write the same outputs %s.*; rename one of them", prev, r, stem)
		}
		owner[stem] = r
		out[k] = Input{Input: r, Stem: stem}
	}
	return out, nil
}

// CountMine names this task's inputs in words: "12 files", or with every
// plane on its own "30 images from 10 files" (each plane an image).
func (p *Plan) CountMine() string {
	files := map[string]bool{}
	planes := false
	for _, k := range p.Mine {
		files[p.All[k].Input] = true
		planes = planes || p.All[k].Plane != nil
	}
	if !planes {
		return pipeline.Plural(len(p.Mine), "file")
	}
	return pipeline.Plural(len(p.Mine), "image") + " from " + pipeline.Plural(len(files), "file")
}

// planeInputs makes every plane of each input an input of its own
// (every plane on its own), stems STEM.zNNN as cleave segment names them (see
// expandPlanes), in plane order. The planes are counted from each file's
// header (root is the resolved INPUT_DIR). A file that cannot be opened
// stays one input without a plane: segmenting it fails and records why.
func planeInputs(root string, ins []Input, load imageio.LoadOptions) []Input {
	var out []Input
	for _, in := range ins {
		src, err := imageio.Open(filepath.Join(root, filepath.FromSlash(in.Input)), load)
		if err != nil {
			out = append(out, in)
			continue
		}
		n := src.Stack().Planes
		src.Close()
		for z := range n {
			out = append(out, Input{Input: in.Input, Stem: pipeline.PlaneStem(in.Stem, z, n), Plane: &z})
		}
	}
	return out
}

// status is what happened to one input in this run.
type status int

const (
	statusComputed status = iota
	statusUpToDate
	statusFailed
	statusNotDone // interrupted or stopped by FailFast before finishing
)

type result struct {
	k      int
	status status
	err    error
	notes  []string // printed on stderr: output names that changed (labelWarningCode)
}

// Outcome is what a run did with this task's inputs.
type Outcome struct {
	Computed, UpToDate, Failed int
	NotDone                    int // not finished: interrupted, or stopped at a failure
	// Warned counts the ok inputs with warnings to check (from the
	// manifest; unsharded runs only).
	Warned int
	// Interrupted tells that the context ended the run; StoppedEarly that
	// FailFast stopped it.
	Interrupted, StoppedEarly bool
	Seconds                   float64
}

// logf writes one line of the run to Log.
func (p *Plan) logf(format string, a ...any) {
	fmt.Fprintf(p.Log, "cleave batch: "+format+"\n", a...)
}

// Run runs the plan: it takes the lock on the output folder, removes the
// temporary files of killed runs (when it holds the lock alone), lists or
// prunes the outputs of inputs no longer selected, writes the index,
// processes this shard's inputs on Jobs goroutines (skipping those whose
// record is current) and, unsharded, writes the manifest, objects table
// and report. An error means the run could not start or finish its
// files; a failed image is counted, not an error. A refusal of the lock
// is a *RequestError.
func (p *Plan) Run(ctx context.Context) (Outcome, error) {
	start := time.Now()
	var oc Outcome
	defer pipeline.SetCollector(p.opts.Params.MaxMemory)()
	if err := os.MkdirAll(p.Out, 0o755); err != nil {
		return oc, fmt.Errorf("cannot create the output folder: %v", err)
	}
	lock, err := lockOut(p.Out, p.ShardN == 1, p.Holder)
	if err != nil {
		return oc, err
	}
	defer lock.Release()
	warnUnlocked(p.Log, lock, p.Out)
	// Temporary files of an earlier, killed run: only a run that holds the
	// lock alone removes them. A shard leaves them, since they may be
	// another shard's, being written now; its own it removes as it goes.
	if p.ShardN == 1 {
		dirs := outputDirs(p.All)
		if p.oldIndex != nil {
			dirs = append(dirs, outputDirs(p.oldIndex.Inputs)...)
		}
		if err := removeTempFiles(p.Out, dirs); err != nil {
			return oc, err
		}
	}
	// Outputs of inputs that left the selection: listed, removed with
	// Prune (an unsharded run holds the lock alone).
	if p.ShardN == 1 {
		stale, err := staleOutputs(p.Out, p.All)
		if err == nil && p.Prune {
			err = pruneStale(stale)
		}
		if err != nil {
			return oc, err
		}
		reportStale(p.Log, p.Out, stale, p.Prune, p.Voice)
	}
	idx := &Index{Tool: "cleave", Version: p.Voice.Version, InputDir: p.InputDir, Settings: p.Request, Inputs: p.All, Skipped: p.Skipped, Files: []string{}}
	if p.All == nil {
		idx.Inputs = []Input{}
	}
	if p.Skipped == nil {
		idx.Skipped = []Skip{}
	}
	switch {
	case p.ShardN == 1:
		idx.Files = topFiles // written at the end of this run
	case p.oldIndex != nil && p.oldIndex.Files != nil:
		idx.Files = p.oldIndex.Files
	case p.oldIndex != nil:
		idx.Files = legacyTopFiles(p.Out)
	}
	if err := writeIndex(p.Out, idx, p.owner()); err != nil {
		return oc, err
	}
	if !p.Quiet {
		truths := p.TruthsSkipped()
		for _, sk := range p.Skipped {
			if sk.Reason == p.truthReason() {
				continue
			}
			p.logf("skipped %s: %s", filepath.Join(p.InputDir, filepath.FromSlash(sk.Input)), sk.Reason)
		}
		if truths > 0 {
			p.logf("%s", p.Voice.Msg(fmt.Sprintf("skipped %s named like truth masks (NAME.truth, NAME_mask, NAME_truth; listed in %s); `with-truths` segments them", pipeline.Plural(truths, "file"), ManifestName)))
		}
	}

	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	work := make(chan int)
	results := make(chan result)
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
		for _, k := range p.Mine {
			select {
			case work <- k:
			case <-ctx.Done():
				return
			}
		}
	}()
	go func() { wg.Wait(); close(results) }()

	prog := progress.NewBatch(p.Log, len(p.Mine), p.Quiet)
	every := p.ProgressEvery
	if every <= 0 {
		every = 5 * time.Second
	}
	tick := time.NewTicker(every)
	defer tick.Stop()
	finished := 0
	for done := false; !done; {
		select {
		case r, ok := <-results:
			if !ok {
				done = true
				break
			}
			if len(r.notes) > 0 && !p.Quiet {
				prog.Clear()
				for _, n := range r.notes {
					p.logf("%s", n)
				}
			}
			switch r.status {
			case statusComputed:
				oc.Computed++
			case statusUpToDate:
				oc.UpToDate++
			case statusFailed:
				oc.Failed++
				prog.Clear()
				p.logf("%v", r.err)
				if p.FailFast && !oc.StoppedEarly {
					oc.StoppedEarly = true
					cancel()
				}
			case statusNotDone:
				continue
			}
			finished++
			prog.Add(finished, oc.Failed, oc.Computed+oc.Failed)
		case <-tick.C:
			prog.Line(finished, oc.Failed)
		}
	}
	prog.Finish()
	oc.Interrupted = ctx.Err() != nil && !oc.StoppedEarly
	oc.NotDone = len(p.Mine) - finished
	if p.ShardN == 1 {
		rows, err := writeManifestAndReport(p.Out, idx, p.owner(), p.Voice.Version)
		if err != nil {
			return oc, err
		}
		oc.Warned = CountRows(rows).Warned
	}
	oc.Seconds = time.Since(start).Seconds()
	return oc, nil
}

// TruthsSkipped counts the inputs skipped as truth masks.
func (p *Plan) TruthsSkipped() int {
	n := 0
	for _, sk := range p.Skipped {
		if sk.Reason == p.truthReason() {
			n++
		}
	}
	return n
}

// one processes input k: skipped when its record is up to date, else
// segmented; a failure is recorded in its STEM.json.
func (p *Plan) one(ctx context.Context, k int) result {
	in := p.All[k]
	src := filepath.Join(p.InputDir, filepath.FromSlash(in.Input))
	dir := filepath.Join(p.Out, filepath.FromSlash(path.Dir(in.Stem)))
	set := pipeline.OutputSet{Dir: dir, Stem: path.Base(in.Stem)}
	if ctx.Err() != nil {
		return result{k: k, status: statusNotDone}
	}
	if p.upToDate(src, set) {
		return result{k: k, status: statusUpToDate}
	}
	fail := func(err error) result {
		err = p.Voice.Err(err)
		rec := &pipeline.Record{Tool: "cleave", Version: p.Voice.Version, Status: "failed", Error: err.Error(), Input: pipeline.InputInfo{Path: src},
			Settings: &p.Request, Eigenvalues: []float64{}, SplitNcuts: []float64{}, Seconds: map[string]float64{}}
		// Reached only when the output folder cannot be made, so no record
		// can be there; force is off all the same, to replace nothing.
		if werr := pipeline.WriteRecord(set.Path(".json"), rec, false, p.owner()); werr != nil {
			err = fmt.Errorf("%w (and the record could not be written: %v)", err, werr)
		}
		return result{k: k, status: statusFailed, err: err}
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fail(fmt.Errorf("%s: cannot create the output folder: %w", src, err))
	}
	// No output may leave the output folder, even through a symbolic link placed in it.
	if real, err := filepath.EvalSymlinks(dir); err != nil {
		return fail(fmt.Errorf("%s: output folder %s: %w", src, dir, err))
	} else if abs, _ := filepath.Abs(real); !within(abs, p.realOut) {
		return result{k: k, status: statusFailed, err: p.Voice.Err(fmt.Errorf("%s: output folder %s leads outside `out` (to %s) through a symbolic link; nothing written", src, dir, abs))}
	}
	res := p.opts
	if in.Plane != nil {
		r := *p.opts
		r.Selection.Plane = *in.Plane
		res = &r
	}
	// pipeline.Process records a failure in STEM.json itself, unless a
	// file that cleave did not write stands at that path.
	rec, err := pipeline.Process(ctx, pipeline.Job{Path: src, Out: set, Request: p.Request, Options: res, Replace: pipeline.ReplaceOwn, Owner: p.owner(), Voice: p.Voice})
	if err != nil {
		if ctx.Err() != nil {
			return result{k: k, status: statusNotDone}
		}
		return result{k: k, status: statusFailed, err: err}
	}
	// Other warnings are in the report; this one changes an output's
	// name, so it is said at once too.
	var notes []string
	for _, w := range rec.Warnings {
		if w.Code == pipeline.LabelWarningCode {
			notes = append(notes, fmt.Sprintf("%s: warning: %s", src, w.Message))
		}
	}
	return result{k: k, status: statusComputed, notes: notes}
}

// owner is the owner tag of this run's temporary files: the process, and
// the shard when there are several (imageio.WriteAtomicAs).
func (p *Plan) owner() string {
	if p.ShardN > 1 {
		return fmt.Sprintf("shard%dof%d-%s", p.ShardI, p.ShardN, imageio.DefaultTempOwner())
	}
	return imageio.DefaultTempOwner()
}

// upToDate reports whether the record of set is ok for the same cleave
// version, the same requested settings and the same input bytes, with
// every output it lists present.
func (p *Plan) upToDate(src string, set pipeline.OutputSet) bool {
	rec, err := pipeline.ReadRecord(set.Path(".json"))
	if err != nil || rec.Status != "ok" || rec.Version != p.Voice.Version || rec.Settings == nil || !pipeline.SameRequest(*rec.Settings, p.Request) {
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

// outputDirs are the folders, relative to the output folder and slash-separated,
// that hold the outputs of inputs, with its top itself.
func outputDirs(inputs []Input) []string {
	dirs := map[string]bool{".": true}
	for _, in := range inputs {
		dirs[path.Dir(in.Stem)] = true
	}
	return slices.Sorted(maps.Keys(dirs))
}

// removeTempFiles deletes, in the folders dirs of out (relative,
// slash-separated), the temporary files that imageio.WriteAtomicAs leaves
// when a process is killed mid-write, whoever their owner. Only a run that
// holds the lock on out alone may call it: then no other process is
// writing. Only the folders cleave writes into are looked at, so a user's
// files elsewhere under out (even an INPUT_DIR inside it) are left
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

// Rebuild rebuilds manifest.csv, objects.csv and report.html of the batch
// in dir from its index and the records, once every shard is done. It
// holds the lock alone, so it also removes the temporary files that
// killed shards left. holder describes the run in the lock (Config.Holder),
// log receives a warning when the folder cannot be locked. Errors in what
// was asked (no batch index, a file of the user's where the manifest or
// report goes, the lock held) are *RequestError.
func Rebuild(dir, holder string, v pipeline.Voice, log io.Writer) (Counts, error) {
	idx, err := ReadIndex(dir)
	if err != nil {
		return Counts{}, &RequestError{Err: err}
	}
	// No shard may be writing while the temporary files are cleaned up
	// and the manifest is read from the records.
	lock, err := lockOut(dir, true, holder)
	if err != nil {
		return Counts{}, err
	}
	defer lock.Release()
	warnUnlocked(log, lock, dir)
	if err := checkTopFiles(dir, idx); err != nil {
		return Counts{}, &RequestError{Err: err}
	}
	idx.Files = topFiles
	owner := imageio.DefaultTempOwner()
	if err := writeIndex(dir, idx, owner); err != nil {
		return Counts{}, err
	}
	if err := removeTempFiles(dir, outputDirs(idx.Inputs)); err != nil {
		return Counts{}, err
	}
	rows, err := writeManifestAndReport(dir, idx, owner, v.Version)
	if err != nil {
		return Counts{}, err
	}
	return CountRows(rows), nil
}
