package batch

import (
	"bytes"
	"context"
	"encoding/csv"
	"errors"
	"image"
	"image/color"
	"image/png"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/segment"
)

// writeDisc writes a 48 x 40 8-bit gray PNG: a bright disc (200) of
// radius r on a dark ground (30).
func writeDisc(t *testing.T, p string, r int) {
	t.Helper()
	if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
		t.Fatal(err)
	}
	img := image.NewGray(image.Rect(0, 0, 48, 40))
	for y := range 40 {
		for x := range 48 {
			v := uint8(30)
			if dx, dy := x-24, y-20; dx*dx+dy*dy <= r*r {
				v = 200
			}
			img.SetGray(x, y, color.Gray{Y: v})
		}
	}
	var buf bytes.Buffer
	if err := png.Encode(&buf, img); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(p, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}

// twoDiscs writes a.png (a disc of radius 8) and b.png (radius 10) into a
// new input folder and returns it with an output folder beside it, not
// yet made.
func twoDiscs(t *testing.T) (in, out string) {
	t.Helper()
	root := t.TempDir()
	in, out = filepath.Join(root, "in"), filepath.Join(root, "out")
	writeDisc(t, filepath.Join(in, "a.png"), 8)
	writeDisc(t, filepath.Join(in, "b.png"), 10)
	return in, out
}

// mustPlan returns the plan of c, failing the test when NewPlan refuses
// it.
func mustPlan(t *testing.T, c Config) *Plan {
	t.Helper()
	p, err := NewPlan(c)
	if err != nil {
		t.Fatal(err)
	}
	return p
}

// runPlan plans c and runs it to the end, failing the test (with the log
// written so far) when either step fails.
func runPlan(t *testing.T, c Config, log *bytes.Buffer) Outcome {
	t.Helper()
	oc, err := mustPlan(t, c).Run(context.Background())
	if err != nil {
		t.Fatalf("%v\n%s", err, log.String())
	}
	return oc
}

// testVoice words the engine's advice with plain quotes, so that the
// tests see where the command's wording applies.
var testVoice = pipeline.Voice{
	Version: "test-1",
	Message: func(s string) string { return strings.ReplaceAll(s, "`", "'") },
	Error:   func(err error) error { return err },
}

// testConfig is a batch of in into out with the library's default
// parameters (segment.DefaultParams), two classes on a dark background.
func testConfig(in, out string, log *bytes.Buffer) Config {
	p := segment.DefaultParams()
	p.Classes, p.Background = 2, segment.Background("dark")
	return Config{
		InputDir: in, Out: out, Jobs: 2, Workers: 1, ShardN: 1, Holder: "the test", ProgressEvery: time.Hour,
		Request: pipeline.Request{Classes: 2, Background: "dark"},
		Options: &pipeline.Options{
			Load:         imageio.LoadOptions{MaxMegapixels: 100},
			Features:     imageio.FeatureOptions{Space: imageio.SpaceGray, Channel: -1, Normalize: imageio.NormalizePercentile, FlattenMode: imageio.FlattenDivide},
			Params:       p,
			LabelsFormat: imageio.LabelsPNG,
		},
		IsTruth: func(name string) bool { return strings.Contains(name, "_mask.") },
		Voice:   testVoice,
		Log:     log,
	}
}

func inputsOf(p *Plan) []string {
	var out []string
	for _, in := range p.All {
		out = append(out, in.Input+"->"+in.Stem)
	}
	return out
}

// The plan lists the images by relative path with their stems, skips
// hidden files, other files and (unless recursive) subfolders without a
// row, names the entries it does not read with the reason, and shares
// the inputs out by shard.
func TestPlanInputs(t *testing.T) {
	root := t.TempDir()
	in := filepath.Join(root, "in")
	writeDisc(t, filepath.Join(in, "b.png"), 8)
	writeDisc(t, filepath.Join(in, "a.png"), 8)
	writeDisc(t, filepath.Join(in, "a_mask.png"), 8)
	writeDisc(t, filepath.Join(in, ".hidden.png"), 8)
	writeDisc(t, filepath.Join(in, "sub", "c.png"), 8)
	if err := os.WriteFile(filepath.Join(in, "notes.txt"), []byte("x"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := syscall.Mkfifo(filepath.Join(in, "pipe.png"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.Symlink("gone.png", filepath.Join(in, "dangling.png")); err != nil {
		t.Fatal(err)
	}
	var log bytes.Buffer
	c := testConfig(in, filepath.Join(root, "out"), &log)
	p, err := NewPlan(c)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := inputsOf(p), []string{"a.png->a", "b.png->b"}; !slices.Equal(got, want) {
		t.Errorf("inputs %v, want %v", got, want)
	}
	var skipped []string
	for _, s := range p.Skipped {
		skipped = append(skipped, s.Input)
	}
	if want := []string{"a_mask.png", "dangling.png", "pipe.png"}; !slices.Equal(skipped, want) {
		t.Errorf("skipped %v, want %v", skipped, want)
	}
	if p.TruthsSkipped() != 1 || !strings.Contains(p.Skipped[0].Reason, "'with-truths' segments it") {
		t.Errorf("truth skip %+v (the reason in the voice's words)", p.Skipped[0])
	}
	if !strings.Contains(p.Skipped[2].Reason, "named pipe") {
		t.Errorf("FIFO reason %q", p.Skipped[2].Reason)
	}
	if len(p.Mine) != 2 || p.CountMine() != "2 files" {
		t.Errorf("mine %v (%s)", p.Mine, p.CountMine())
	}

	c.Recursive, c.WithTruths, c.Exclude = true, true, []string{"b.*"}
	p, err = NewPlan(c)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := inputsOf(p), []string{"a.png->a", "a_mask.png->a_mask", "sub/c.png->sub/c"}; !slices.Equal(got, want) {
		t.Errorf("recursive inputs %v, want %v", got, want)
	}
	c.ShardI, c.ShardN = 1, 2
	if p, err = NewPlan(c); err != nil || !slices.Equal(p.Mine, []int{1}) {
		t.Errorf("shard 1/2: mine %v, %v; want [1]", p.Mine, err)
	}
}

// What the plan refuses is a RequestError naming the problem: a missing
// input folder, a file given as one, an output folder inside it.
func TestPlanRefusals(t *testing.T) {
	root := t.TempDir()
	in := filepath.Join(root, "in")
	writeDisc(t, filepath.Join(in, "a.png"), 8)
	for _, c := range []struct {
		in, out, want string
	}{
		{filepath.Join(root, "missing"), filepath.Join(root, "out"), "does not exist"},
		{filepath.Join(in, "a.png"), filepath.Join(root, "out"), "is a file, not a folder"},
		{in, filepath.Join(in, "out"), "is inside INPUT_DIR"},
	} {
		_, err := NewPlan(testConfig(c.in, c.out, &bytes.Buffer{}))
		var re *RequestError
		if !errors.As(err, &re) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("in %s out %s: %v, want a RequestError with %q", c.in, c.out, err, c.want)
		}
	}
}

func readCSV(t *testing.T, p string) [][]string {
	t.Helper()
	f, err := os.Open(p)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return rows
}

// A run segments every input and writes the index, the manifest, the
// objects table and the report; a rerun finds every record current; a
// changed input or other parameters are computed again.
func TestRunResume(t *testing.T) {
	in, out := twoDiscs(t)
	var log bytes.Buffer
	run := func(c Config) Outcome { return runPlan(t, c, &log) }
	c := testConfig(in, out, &log)
	if oc := run(c); oc.Computed != 2 || oc.UpToDate != 0 || oc.Failed != 0 || oc.NotDone != 0 {
		t.Fatalf("first run %+v\n%s", oc, log.String())
	}
	rows := readCSV(t, filepath.Join(out, ManifestName))
	if len(rows) != 3 || rows[1][0] != "a.png" || rows[1][1] != "ok" || rows[2][1] != "ok" || rows[1][7] != "a.labels.png" {
		t.Errorf("manifest %v", rows)
	}
	if objs := readCSV(t, filepath.Join(out, ObjectsName)); len(objs) != 3 || objs[0][0] != "input" {
		t.Errorf("objects.csv %v (want the header and one disc per image)", objs)
	}
	idx, err := ReadIndex(out)
	if err != nil || idx.Version != "test-1" || len(idx.Inputs) != 2 || !slices.Equal(idx.Files, topFiles) {
		t.Errorf("index %+v, %v", idx, err)
	}
	if oc := run(c); oc.Computed != 0 || oc.UpToDate != 2 {
		t.Errorf("rerun %+v, want both up to date", oc)
	}
	writeDisc(t, filepath.Join(in, "b.png"), 12)
	if oc := run(c); oc.Computed != 1 || oc.UpToDate != 1 {
		t.Errorf("after b changed %+v, want b computed", oc)
	}
	// A record lists outputs that went missing: computed again.
	if err := os.Remove(filepath.Join(out, "a.overlay.png")); err != nil {
		t.Fatal(err)
	}
	if oc := run(c); oc.Computed != 1 || oc.UpToDate != 1 {
		t.Errorf("after an output of a was removed %+v", oc)
	}
	c.Request.MinArea = 5
	c.Options.Params.MinArea = 5
	if oc := run(c); oc.Computed != 2 {
		t.Errorf("other parameters %+v, want both computed", oc)
	}
	// Another version's records are not current either.
	c.Voice.Version = "test-2"
	if oc := run(c); oc.Computed != 2 {
		t.Errorf("another version %+v, want both computed", oc)
	}
}

// An unsharded run removes the temporary files of killed runs in the
// folders it writes (whoever their owner) and lists the outputs of
// inputs no longer selected; Prune removes them. A shard removes no
// temporary file it does not own.
func TestRunCleanup(t *testing.T) {
	in, out := twoDiscs(t)
	var log bytes.Buffer
	c := testConfig(in, out, &log)
	runPlan(t, c, &log)
	// The name pattern imageio.WriteAtomicAs gives its temporary files
	// (imageio.ParseTempName reads it back).
	killed := filepath.Join(out, ".a.overlay.png.tmp-shard1of2-pid999999-42")
	if _, _, ok := imageio.ParseTempName(filepath.Base(killed)); !ok {
		t.Fatalf("%s is not a temporary name", killed)
	}
	userFile := filepath.Join(out, ".mine.tmp")
	for _, p := range []string{killed, userFile} {
		if err := os.WriteFile(p, []byte("x"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	shard := c
	shard.ShardI, shard.ShardN = 0, 2
	runPlan(t, shard, &log)
	if _, err := os.Stat(killed); err != nil {
		t.Errorf("a shard removed another's temporary file: %v", err)
	}
	runPlan(t, c, &log)
	if _, err := os.Stat(killed); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("an unsharded run left a killed run's temporary file: %v", err)
	}
	if _, err := os.Stat(userFile); err != nil {
		t.Errorf("a file not named like cleave's temporary files was removed: %v", err)
	}

	// b leaves the selection: its outputs are kept and listed...
	log.Reset()
	c.Exclude = []string{"b.png"}
	runPlan(t, c, &log)
	if !strings.Contains(log.String(), "kept 7 earlier outputs in "+out+" of 1 input no longer selected (or gone): b.*; 'prune' removes them") {
		t.Errorf("log %q", log.String())
	}
	if _, err := os.Stat(filepath.Join(out, "b.labels.png")); err != nil {
		t.Errorf("b's outputs not kept: %v", err)
	}
	// ... and removed with Prune, a's left alone.
	log.Reset()
	c.Prune = true
	runPlan(t, c, &log)
	if !strings.Contains(log.String(), "removed 7 earlier outputs of 1 input no longer selected ('prune'): b.*") {
		t.Errorf("log %q", log.String())
	}
	left, _ := filepath.Glob(filepath.Join(out, "b.*"))
	if len(left) != 0 {
		t.Errorf("left after prune: %v", left)
	}
	if _, err := os.Stat(filepath.Join(out, "a.labels.png")); err != nil {
		t.Errorf("a's outputs: %v", err)
	}
}

// Shards write no manifest; Rebuild, once they are done, makes it from
// the index and the records; a folder without an index is refused.
func TestRebuild(t *testing.T) {
	root := t.TempDir()
	in, out := filepath.Join(root, "in"), filepath.Join(root, "out")
	for _, n := range []string{"a", "b", "c"} {
		writeDisc(t, filepath.Join(in, n+".png"), 8)
	}
	var log bytes.Buffer
	c := testConfig(in, out, &log)
	c.ShardN = 3
	for _, i := range []int{0, 2} {
		c.ShardI = i
		if oc, err := mustPlan(t, c).Run(context.Background()); err != nil || oc.Computed != 1 {
			t.Fatalf("shard %d: %+v, %v", i, oc, err)
		}
	}
	if _, err := os.Stat(filepath.Join(out, ManifestName)); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("a shard wrote the manifest: %v", err)
	}
	counts, err := Rebuild(out, "rebuild of the test", testVoice, &log)
	if err != nil {
		t.Fatal(err)
	}
	if counts != (Counts{Rows: 3, OK: 2, Pending: 1}) {
		t.Errorf("counts %+v, want 2 ok and b pending", counts)
	}
	rows := readCSV(t, filepath.Join(out, ManifestName))
	if rows[2][0] != "b.png" || rows[2][1] != "pending" || rows[2][5] != "no record yet" {
		t.Errorf("b's row %v", rows[2])
	}
	_, err = Rebuild(root, "rebuild of the test", testVoice, &log)
	var re *RequestError
	if !errors.As(err, &re) || !strings.Contains(err.Error(), IndexName+" is missing") {
		t.Errorf("no index: %v", err)
	}
}

// Report links are relative paths with every segment escaped (RFC 3986
// percent-encoding by net/url), never read as a URL scheme.
func TestRelURL(t *testing.T) {
	for in, want := range map[string]string{
		"a/b.png":        "./a/b.png",
		"a b/#1?.png":    "./a%20b/%231%3F.png",
		"javascript:x":   "./javascript:x",
		"dir/100%.png":   "./dir/100%25.png",
		"sub/x.labels.p": "./sub/x.labels.p",
	} {
		if got := relURL(in); got != want {
			t.Errorf("relURL(%q) = %q, want %q", in, got, want)
		}
	}
}

// The report states the counts, the failures and the warnings, and the
// summary gives the objects per image: for 1, 3 and 8 objects the mean
// 4.0 and the median 3 (worked by hand).
func TestWriteReport(t *testing.T) {
	rows := []manifestRow{
		{Input: "a.png", Stem: "a", Status: rowOK, Objects: 1, Regions: 2},
		{Input: "b.png", Stem: "b", Status: rowOK, Objects: 3, Regions: 4, Warnings: []string{"check <this>"}},
		{Input: "c.png", Stem: "c", Status: rowOK, Objects: 8, Regions: 9},
		{Input: "d.png", Stem: "d", Status: rowFailed, Error: "d.png: broken"},
		{Input: "e.png", Stem: "e", Status: rowPending},
		{Input: "f.png", Status: rowSkipped, Error: "a named pipe"},
	}
	var buf bytes.Buffer
	idx := &Index{Tool: "cleave", InputDir: "in", Settings: pipeline.Request{Classes: 2, Channel: "GFP"}}
	if err := writeReport(&buf, idx, rows, nil, time.Date(2026, 1, 2, 3, 4, 0, 0, time.UTC), "v9"); err != nil {
		t.Fatal(err)
	}
	page := buf.String()
	for _, want := range []string{
		"5 inputs: <b>3 ok</b> (1 with warnings to check), <b>1 failed</b>, <b>1 pending</b>",
		"<b>1 skipped</b>", "cleave v9", "2026-01-02 03:04 UTC",
		"<td>d.png</td><td>d.png: broken</td>",
		"check &lt;this&gt;",
		"4.0 on average; fewest 1, median 3, most 8",
		"<tr><td>channel</td><td>GFP</td></tr>",
		`<a href="./a.overlay.png"><img src="./a.overlay.png"`,
	} {
		if !strings.Contains(page, want) {
			t.Errorf("report lacks %q", want)
		}
	}
	if strings.Contains(page, "<this>") {
		t.Error("a warning was not escaped")
	}
}

// A broken input fails alone: its record says why, the others are done;
// with FailFast the run stops at it, and a cancelled context leaves the
// inputs not done (a rerun finishes them).
func TestRunFailures(t *testing.T) {
	root := t.TempDir()
	in, out := filepath.Join(root, "in"), filepath.Join(root, "out")
	writeDisc(t, filepath.Join(in, "b.png"), 8)
	writeDisc(t, filepath.Join(in, "c.png"), 8)
	if err := os.WriteFile(filepath.Join(in, "a.png"), []byte("not a PNG"), 0o644); err != nil {
		t.Fatal(err)
	}
	var log bytes.Buffer
	c := testConfig(in, out, &log)
	c.Jobs = 1
	plan := func(c Config) *Plan { return mustPlan(t, c) }

	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	oc, err := plan(c).Run(ctx)
	if err != nil || !oc.Interrupted || oc.NotDone != 3 || oc.Computed+oc.Failed != 0 {
		t.Errorf("cancelled run: %+v, %v; want interrupted, 3 not done", oc, err)
	}
	if rows := readCSV(t, filepath.Join(out, ManifestName)); rows[1][1] != "pending" {
		t.Errorf("manifest after the cancelled run %v", rows)
	}

	c.FailFast = true
	oc, err = plan(c).Run(context.Background())
	if err != nil || !oc.StoppedEarly || oc.Failed != 1 || oc.Interrupted || oc.NotDone == 0 {
		t.Errorf("fail-fast run: %+v, %v; want stopped at a.png", oc, err)
	}
	c.FailFast = false
	log.Reset()
	oc, err = plan(c).Run(context.Background())
	if err != nil || oc.Failed != 1 || oc.Computed != 2 || oc.NotDone != 0 {
		t.Errorf("full run: %+v, %v", oc, err)
	}
	if !strings.Contains(log.String(), "cleave batch: "+filepath.Join(in, "a.png")+": ") {
		t.Errorf("the failure is not named on the log: %q", log.String())
	}
	rec, err := pipeline.ReadRecord(filepath.Join(out, "a.json"))
	if err != nil || rec.Status != "failed" || !strings.Contains(rec.Error, "a.png") {
		t.Errorf("a's record %+v, %v", rec, err)
	}
	rows := readCSV(t, filepath.Join(out, ManifestName))
	if rows[1][0] != "a.png" || rows[1][1] != "failed" || rows[1][5] == "" {
		t.Errorf("a's manifest row %v", rows[1])
	}
}
