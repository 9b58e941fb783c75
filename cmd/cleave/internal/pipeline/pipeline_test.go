package pipeline

import (
	"context"
	"errors"
	"image"
	"image/color"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/segment"
)

// writeDisc writes a w x h 8-bit gray PNG: a bright disc (200) of radius
// h/4 on a dark ground (30).
func writeDisc(t *testing.T, p string, w, h int) {
	t.Helper()
	img := image.NewGray(image.Rect(0, 0, w, h))
	r := h / 4
	for y := range h {
		for x := range w {
			v := uint8(30)
			if dx, dy := x-w/2, y-h/2; dx*dx+dy*dy <= r*r {
				v = 200
			}
			img.SetGray(x, y, color.Gray{Y: v})
		}
	}
	f, err := os.Create(p)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if err := png.Encode(f, img); err != nil {
		t.Fatal(err)
	}
}

// testOptions are the options of a small run: the library's defaults
// (segment.DefaultParams) on one worker, two classes on a dark
// background.
func testOptions() *Options {
	p := segment.DefaultParams()
	p.Workers, p.Classes, p.Background = 1, 2, segment.Background("dark")
	return &Options{
		Load:         imageio.LoadOptions{MaxMegapixels: 100},
		Features:     imageio.FeatureOptions{Space: imageio.SpaceGray, Channel: -1, Normalize: imageio.NormalizePercentile, FlattenMode: imageio.FlattenDivide},
		Params:       p,
		LabelsFormat: imageio.LabelsPNG,
	}
}

// testVoice words the test's messages with a marker, so that the tests
// see where the command's wording applies.
var testVoice = Voice{
	Version: "test-1",
	Error:   func(err error) error { return errors.New(strings.ReplaceAll(err.Error(), "`out`", "OUT")) },
	Message: func(s string) string { return strings.ReplaceAll(s, "`", "'") },
}

func testJob(t *testing.T, replace Replace) Job {
	t.Helper()
	dir := t.TempDir()
	img := filepath.Join(dir, "disc.png")
	writeDisc(t, img, 48, 40)
	return Job{Path: img, Out: OutputSet{Dir: filepath.Join(dir, "out"), Stem: "disc"}, Request: Request{Classes: 2, Background: "dark"},
		Options: testOptions(), Replace: replace, Voice: testVoice}
}

// A run writes every output it announces, lists them in the record with
// status ok, and each output is one of the suffixes of OutputSuffixes.
func TestProcessWritesWhatItLists(t *testing.T) {
	j := testJob(t, ReplaceNone)
	if err := os.MkdirAll(j.Out.Dir, 0o755); err != nil {
		t.Fatal(err)
	}
	rec, err := Process(context.Background(), j)
	if err != nil {
		t.Fatal(err)
	}
	if rec.Status != "ok" || rec.Version != "test-1" || rec.Settings == nil || rec.Settings.Classes != 2 {
		t.Fatalf("record %+v", rec)
	}
	want := []string{"disc.classes.png", "disc.labels.png", "disc.outlines.geojson", "disc.overlay.png", "disc.preview.png", "disc.regions.csv"}
	got := slices.Sorted(slices.Values(rec.Outputs))
	if !slices.Equal(got, want) {
		t.Fatalf("outputs %v, want %v", got, want)
	}
	for _, name := range rec.Outputs {
		if _, err := os.Stat(filepath.Join(j.Out.Dir, name)); err != nil {
			t.Errorf("listed output %s: %v", name, err)
		}
		if !slices.ContainsFunc(OutputSuffixes(), func(s string) bool { return name == "disc"+s }) {
			t.Errorf("output %s has no suffix of OutputSuffixes()", name)
		}
	}
	onDisk, err := ReadRecord(j.Out.Path(SuffixRecord))
	if err != nil {
		t.Fatal(err)
	}
	if onDisk.Status != "ok" || !slices.Equal(onDisk.Outputs, rec.Outputs) {
		t.Errorf("record on disk %+v", onDisk)
	}
	// Every file Outputs names but the record was written, and the record
	// itself exists.
	for _, p := range j.Outputs() {
		if _, err := os.Stat(p); err != nil {
			t.Errorf("Outputs() names %s: %v", p, err)
		}
	}
}

// ReplaceNone refuses an output that exists and writes nothing; the
// message asks for `force` in the command's words.
func TestProcessReplaceNoneRefuses(t *testing.T) {
	j := testJob(t, ReplaceNone)
	if err := os.MkdirAll(j.Out.Dir, 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(j.Out.Path(SuffixOverlay), []byte("mine"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err := Process(context.Background(), j)
	if err == nil || !strings.Contains(err.Error(), "already exists") || !strings.Contains(err.Error(), j.Path) {
		t.Fatalf("err %v, want a refusal naming the input", err)
	}
	if b, _ := os.ReadFile(j.Out.Path(SuffixOverlay)); string(b) != "mine" {
		t.Error("the existing file was changed")
	}
	if _, err := os.Stat(j.Out.Path(SuffixRecord)); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("a record was written: %v", err)
	}
}

// ReplaceOwn refuses a file that the earlier record does not list (the
// user's), leaves it as it is, and records the failure in STEM.json.
func TestProcessReplaceOwnRefusesForeignFile(t *testing.T) {
	j := testJob(t, ReplaceOwn)
	if err := os.MkdirAll(j.Out.Dir, 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(j.Out.Path(SuffixRegions), []byte("user's table"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err := Process(context.Background(), j)
	if err == nil || !strings.Contains(err.Error(), "not written by cleave") || !strings.Contains(err.Error(), "choose another OUT") {
		t.Fatalf("err %v, want the refusal in the voice's words", err)
	}
	if b, _ := os.ReadFile(j.Out.Path(SuffixRegions)); string(b) != "user's table" {
		t.Error("the user's file was changed")
	}
	rec, err := ReadRecord(j.Out.Path(SuffixRecord))
	if err != nil {
		t.Fatal(err)
	}
	if rec.Status != "failed" || !strings.Contains(rec.Error, "not written by cleave") {
		t.Errorf("record %+v", rec)
	}
}

// A rerun whose image fails removes the outputs of the earlier run (they
// no longer match the input) and records the failure; a file the record
// never listed is not touched.
func TestProcessFailureRemovesEarlierOutputs(t *testing.T) {
	j := testJob(t, ReplaceOwn)
	if err := os.MkdirAll(j.Out.Dir, 0o755); err != nil {
		t.Fatal(err)
	}
	first, err := Process(context.Background(), j)
	if err != nil {
		t.Fatal(err)
	}
	other := filepath.Join(j.Out.Dir, "disc.notes.txt")
	if err := os.WriteFile(other, []byte("x"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(j.Path, []byte("not an image"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err = Process(context.Background(), j)
	if err == nil {
		t.Fatal("a broken input was segmented")
	}
	for _, name := range first.Outputs {
		if _, serr := os.Stat(filepath.Join(j.Out.Dir, name)); !errors.Is(serr, os.ErrNotExist) {
			t.Errorf("earlier output %s still there (%v)", name, serr)
		}
	}
	if _, err := os.Stat(other); err != nil {
		t.Errorf("a file the record did not list was removed: %v", err)
	}
	rec, err := ReadRecord(j.Out.Path(SuffixRecord))
	if err != nil {
		t.Fatal(err)
	}
	if rec.Status != "failed" || len(rec.Outputs) != 0 || !strings.Contains(rec.Error, j.Path) {
		t.Errorf("record %+v", rec)
	}
}

// An earlier record's outputs count as cleave's only under names that
// cleave gives this stem; a record that is not cleave's is refused.
func TestPriorOutputs(t *testing.T) {
	dir := t.TempDir()
	set := OutputSet{Dir: dir, Stem: "a"}
	own, err := priorOutputs(set)
	if err != nil || len(own) != 0 {
		t.Fatalf("no record: %v, %v", own, err)
	}
	rec := &Record{Tool: "cleave", Status: "ok", Outputs: []string{"a.labels.png", "a.regions.csv", "../x.png", "b.labels.png", "a.mine.txt"}}
	if err := WriteRecord(set.Path(SuffixRecord), rec, false, ""); err != nil {
		t.Fatal(err)
	}
	own, err = priorOutputs(set)
	if err != nil {
		t.Fatal(err)
	}
	got := slices.Sorted(func(yield func(string) bool) {
		for k := range own {
			if !yield(k) {
				return
			}
		}
	})
	if want := []string{"a.json", "a.labels.png", "a.regions.csv"}; !slices.Equal(got, want) {
		t.Errorf("own %v, want %v", got, want)
	}
	if err := os.WriteFile(set.Path(SuffixRecord), []byte(`{"tool": "other"}`), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := priorOutputs(set); err == nil || !strings.Contains(err.Error(), "not a record that cleave wrote") {
		t.Errorf("foreign record: %v", err)
	}
	if msg := RecordBlocked(set.Path(SuffixRecord), errors.New("x")); !strings.Contains(msg, "not a record that cleave wrote") {
		t.Errorf("RecordBlocked: %s", msg)
	}
}

// Labels above 65535 do not fit a 16-bit PNG: the maps switch to TIFF
// (the PNG limit is the format's 16-bit sample, common practice).
func TestLabelsFormatFor(t *testing.T) {
	for _, c := range []struct {
		asked    string
		max      int32
		want     string
		switched bool
	}{
		{imageio.LabelsPNG, 65535, imageio.LabelsPNG, false},
		{imageio.LabelsPNG, 65536, imageio.LabelsTIFF, true},
		{imageio.LabelsTIFF, 3, imageio.LabelsTIFF, false},
	} {
		f, s := LabelsFormatFor(c.asked, c.max)
		if f != c.want || s != c.switched {
			t.Errorf("LabelsFormatFor(%s, %d) = %s, %v", c.asked, c.max, f, s)
		}
	}
}

// Plane stems sort in plane order: three digits at least, more when the
// stack needs them.
func TestPlaneStem(t *testing.T) {
	for _, c := range []struct {
		z, n int
		want string
	}{{0, 1, "s.z000"}, {7, 20, "s.z007"}, {999, 1000, "s.z999"}, {42, 1001, "s.z0042"}} {
		if got := PlaneStem("s", c.z, c.n); got != c.want {
			t.Errorf("PlaneStem(s, %d, %d) = %s, want %s", c.z, c.n, got, c.want)
		}
	}
}

// The unused parts of a stack are named in the voice's words; with every
// plane segmented no plane counts as unused.
func TestStackWarnings(t *testing.T) {
	info := InputInfo{Stack: &StackInfo{Channels: 2, Planes: 5, Frames: 1, ChannelNames: []string{"DAPI", "GFP"}, Channel: 1, ChannelName: "GFP", Plane: 2}}
	ws := stackWarnings(info, false, testVoice)
	if len(ws) != 2 || ws[0].Code != "unused-channels" || ws[1].Code != "unused-pages" {
		t.Fatalf("warnings %+v", ws)
	}
	if !strings.Contains(ws[0].Message, "DAPI, GFP") || !strings.Contains(ws[0].Message, "'channel'") || strings.Contains(ws[0].Message, "`") {
		t.Errorf("channel warning %q", ws[0].Message)
	}
	if !strings.Contains(ws[1].Message, "5 planes") || !strings.Contains(ws[1].Message, "plane 2") {
		t.Errorf("plane warning %q", ws[1].Message)
	}
	if ws := stackWarnings(info, true, testVoice); len(ws) != 1 {
		t.Errorf("every plane segmented: %+v", ws)
	}
	if ws := stackWarnings(InputInfo{Pages: 3}, false, Voice{}); len(ws) != 1 || !strings.Contains(ws[0].Message, "3 images (pages)") {
		t.Errorf("pages: %+v", ws)
	}
}

// The pixel size asked for wins; the file's is converted between metric
// units (1 um = 1000 nm, SI) and dropped when the unit is not a valid
// column name.
func TestPixelSizeFor(t *testing.T) {
	cal := imageio.Calibration{PixelSize: 0.5, PixelSizeY: 0.5, Unit: "µm", Source: "ome-xml"}
	if p := pixelSizeFor(2, "", cal); p == nil || p.Size != 2 || p.Unit != DefaultUnit || p.Source != "flag" {
		t.Errorf("asked: %+v", p)
	}
	if p := pixelSizeFor(0, "nm", cal); p == nil || math.Abs(p.Size-500) > 1e-9 || p.Unit != "nm" || p.Source != "ome-xml" {
		t.Errorf("converted: %+v", p)
	}
	if p := pixelSizeFor(0, "furlong", cal); p == nil || p.Size != 0.5 || p.Unit != "µm" {
		t.Errorf("unknown unit keeps the file's: %+v", p)
	}
	if p := pixelSizeFor(0, "", imageio.Calibration{PixelSize: 1, PixelSizeY: 1, Unit: "a b"}); p != nil {
		t.Errorf("bad unit name: %+v", p)
	}
	if p := pixelSizeFor(0, "", imageio.Calibration{}); p != nil {
		t.Errorf("no size: %+v", p)
	}
}

func TestCheckUnit(t *testing.T) {
	for _, u := range []string{"um", "µm", "mm^2", "px_2", "m/s"} {
		if err := CheckUnit(u); err != nil {
			t.Errorf("%q: %v", u, err)
		}
	}
	for u, want := range map[string]error{"=1": ErrUnitChars, "a,b": ErrUnitChars, "": ErrUnitLength, "abcdefghijklmnopq": ErrUnitLength} {
		if err := CheckUnit(u); !errors.Is(err, want) {
			t.Errorf("%q: %v, want %v", u, err, want)
		}
	}
}

// Images processed at once share the memory limit: a second reservation
// waits until the first is released, and gives up when its context ends.
func TestMemoryBudget(t *testing.T) {
	b := budgetFor(baseBytes + 100)
	held, err := b.acquire(context.Background(), baseBytes+80)
	if err != nil || held != 80 {
		t.Fatalf("acquire: %d, %v", held, err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := b.acquire(ctx, baseBytes+80); !errors.Is(err, context.Canceled) {
		t.Fatalf("second acquire with too little left: %v", err)
	}
	done := make(chan int64)
	go func() {
		n, _ := b.acquire(context.Background(), baseBytes+80)
		done <- n
	}()
	b.release(held)
	if n := <-done; n != 80 {
		t.Fatalf("after release: %d", n)
	}
	b.release(80)
	// A request above the whole budget takes all of it.
	if n, _ := b.acquire(context.Background(), 1<<40); n != 100 {
		t.Errorf("oversized request took %d, want 100", n)
	}
	if budgetFor(0) != nil {
		t.Error("no limit has a budget")
	}
}

// Load decodes the image and its features; Segment runs on them.
func TestLoadAndSegment(t *testing.T) {
	dir := t.TempDir()
	img := filepath.Join(dir, "d.png")
	writeDisc(t, img, 48, 40)
	o := testOptions()
	in, err := Load(context.Background(), img, o)
	if err != nil {
		t.Fatal(err)
	}
	if in.Features.Width != 48 || in.Features.Height != 40 || len(in.Info.SHA256) != 64 {
		t.Fatalf("loaded %+v", in.Info)
	}
	res, err := Segment(context.Background(), in, o.Params)
	if err != nil {
		t.Fatal(err)
	}
	if res.NumObjects != 1 {
		t.Errorf("one disc, %d objects", res.NumObjects)
	}
	o.Load.MaxMegapixels = 1e-3 // 1000 pixels < 48 x 40
	if _, err := Load(context.Background(), img, o); err == nil || strings.HasPrefix(err.Error(), img) {
		t.Errorf("too large: %v (want an error without the path)", err)
	}
}

// No output may be an input (compared as files, so a link counts), and a
// graph file may replace only a Matrix Market file, never another output.
func TestCheckNotInputs(t *testing.T) {
	dir := t.TempDir()
	img := filepath.Join(dir, "x.png")
	writeDisc(t, img, 24, 20)
	j := Job{Path: img, Out: OutputSet{Dir: dir, Stem: "x"}, Options: testOptions()}
	if err := CheckNotInputs([]Job{j}); err != nil {
		t.Fatalf("plain job: %v", err)
	}
	// An input named like another's output: y.overlay.png is the input.
	other := filepath.Join(dir, "y.overlay.png")
	if err := os.Symlink(img, other); err != nil {
		t.Fatal(err)
	}
	k := Job{Path: other, Out: OutputSet{Dir: dir, Stem: "x"}, Options: testOptions()}
	err := CheckNotInputs([]Job{j, {Path: img, Out: OutputSet{Dir: dir, Stem: "y"}, Options: testOptions()}, k})
	if err == nil || !strings.Contains(err.Error(), "cleave never replaces an input, even with `force`") {
		t.Errorf("an output that is an input: %v", err)
	}
	g := j
	g.SaveGraph = j.Out.Path(SuffixPreview)
	if err := CheckNotInputs([]Job{g}); err == nil || !strings.Contains(err.Error(), "is also an output") {
		t.Errorf("graph over an output: %v", err)
	}
	g.SaveGraph = filepath.Join(dir, "notes.txt")
	if err := os.WriteFile(g.SaveGraph, []byte("mine"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := CheckNotInputs([]Job{g}); err == nil || !strings.Contains(err.Error(), "not a Matrix Market file") {
		t.Errorf("graph over a user's file: %v", err)
	}
	if err := os.WriteFile(g.SaveGraph, []byte("%%MatrixMarket matrix coordinate real symmetric\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := CheckNotInputs([]Job{g}); err != nil {
		t.Errorf("graph over a graph file: %v", err)
	}
}

// colourHint adds the colour suggestion to a no-objects warning only when
// a colour image was segmented by its luminance: not for gray images, a
// chosen channel, lab features or other warnings.
func TestColourHint(t *testing.T) {
	none := segment.Warning{Code: segment.WarnNoObjects, Message: "no objects found"}
	one := segment.Warning{Code: segment.WarnOneObject, Message: "object 1 covers 60% of the image"}
	gray := imageio.FeatureOptions{Space: imageio.SpaceGray, Channel: -1}
	for _, c := range []struct {
		name     string
		channels int
		f        imageio.FeatureOptions
		w        segment.Warning
		hint     bool
	}{
		{"colour, luminance", 3, gray, none, true},
		{"colour with alpha", 4, gray, none, true},
		{"default space", 3, imageio.FeatureOptions{Channel: -1}, none, true},
		{"gray image", 1, gray, none, false},
		{"chosen channel", 3, imageio.FeatureOptions{Space: imageio.SpaceGray, Channel: 1}, none, false},
		{"lab", 3, imageio.FeatureOptions{Space: imageio.SpaceLab, Channel: -1}, none, false},
		{"other warning", 3, gray, one, false},
	} {
		in := []segment.Warning{c.w}
		out := colourHint(in, c.channels, c.f)
		if len(out) != 1 || out[0].Code != c.w.Code {
			t.Fatalf("%s: got %+v", c.name, out)
		}
		got := strings.Contains(out[0].Message, "`features` lab")
		if got != c.hint || !strings.HasPrefix(out[0].Message, c.w.Message) {
			t.Errorf("%s: message %q, hint %v, want %v", c.name, out[0].Message, got, c.hint)
		}
		if in[0] != c.w {
			t.Errorf("%s: the caller's warning was changed", c.name)
		}
	}
}
