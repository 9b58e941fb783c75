package tuning

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"errors"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/scoring"
	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/imageio/scenes"
	"github.com/cleave-seg/cleave/segment"
	"github.com/cleave-seg/cleave/segment/score"
	"github.com/cleave-seg/cleave/segment/tune"
)

var ctx = context.Background()

// testOptions: the library's defaults on one worker, two classes on a
// dark background, 300 superpixels (small scenes, quick runs).
func testOptions() *pipeline.Options {
	p := segment.DefaultParams()
	p.Workers, p.Classes, p.Background, p.Superpixels = 1, 2, segment.BackgroundDark, 300
	return &pipeline.Options{
		Load:         imageio.LoadOptions{MaxMegapixels: 100},
		Features:     imageio.FeatureOptions{Space: imageio.SpaceGray, Channel: -1, Normalize: imageio.NormalizePercentile, FlattenMode: imageio.FlattenDivide},
		Params:       p,
		LabelsFormat: imageio.LabelsPNG,
	}
}

// testVoice marks where the command's wording applies.
var testVoice = pipeline.Voice{Version: "test-1", Message: func(s string) string { return strings.ReplaceAll(s, "`workers`", "WORKERS") }}

// readTruth reads a truth label map, binary masks split.
func readTruth(path string) (scoring.Map, error) { return scoring.Read(path, true) }

// writeScenes writes generated nuclei scenes (96 x 96, the project's
// generator with exact truth) as NAME.png and NAME.truth.png and returns
// their pairs.
func writeScenes(t *testing.T, seeds ...uint64) []Pair {
	t.Helper()
	dir := t.TempDir()
	var pairs []Pair
	for _, s := range seeds {
		sc := scenes.Nuclei(scenes.NucleiOptions{Width: 96, Height: 96, Seed: s})
		p := Pair{Name: sc.Name, Image: filepath.Join(dir, sc.Name+".png"), Truth: filepath.Join(dir, sc.Name+".truth.png")}
		if err := scenes.WritePNG(p.Image, sc.Image()); err != nil {
			t.Fatal(err)
		}
		if err := scenes.WritePNG(p.Truth, sc.TruthImage()); err != nil {
			t.Fatal(err)
		}
		pairs = append(pairs, p)
	}
	return pairs
}

// testConfig is a small search over sigma-i (left empty: the default
// range around the automatic value) and sigma-x (two values), the other
// parameters fixed.
func testConfig(t *testing.T, pairs []Pair) *Config {
	t.Helper()
	opts := testOptions()
	images, err := Load(ctx, pairs, opts, readTruth, nil)
	if err != nil {
		t.Fatal(err)
	}
	cfg := &Config{Images: images, Metric: score.MetricF1, MetricChoice: "test", Tolerance: 2, Base: opts.Params, Workers: 2,
		Budget: 0, Folds: 2, Voice: testVoice, Fixed: map[string]any{"classes": 2, "necks": "on"}, Start: time.Now()}
	cfg.Space[tune.SigmaX] = tune.NewAxis(tune.SigmaX, []float64{4, 12}, "4,12")
	cfg.Space[tune.MaxNcut] = tune.DefaultAxis(tune.MaxNcut, []float64{0.15})
	cfg.Space[tune.Radius] = tune.DefaultAxis(tune.Radius, []float64{5})
	cfg.Space[tune.Superpixels] = tune.DefaultAxis(tune.Superpixels, []float64{300})
	cfg.Space[tune.Compactness] = tune.DefaultAxis(tune.Compactness, []float64{20})
	cfg.Space[tune.Necks] = tune.DefaultAxis(tune.Necks, []float64{tune.On})
	cfg.Space[tune.Faint] = tune.DefaultAxis(tune.Faint, []float64{0})
	for d := range tune.NumParams {
		cfg.Given[d] = "given-" + d.String()
	}
	return cfg
}

// On two generated nuclei scenes (seeds 13140-13141): sigma-i's default
// range is the median automatic value times 1/4 .. 4 (5 log-spaced
// values, each rounded to 4 digits); the reported score is the mean F1 of
// the chosen parameters segmented again without the search's cache (the
// cache shares work only, segment.Cache); no grid setting scores above
// it; the files say the same as the report; the notes are worded by the
// voice.
func TestRunOnScenes(t *testing.T) {
	if testing.Short() {
		t.Skip("segments 2 scenes about 25 times")
	}
	pairs := writeScenes(t, 13140, 13141)
	cfg := testConfig(t, pairs)
	out, err := Run(ctx, cfg)
	if err != nil {
		t.Fatal(err)
	}
	rep := out.Report

	// The automatic sigma-i, found here by segmenting with the base.
	var auto []float64
	for _, im := range cfg.Images {
		plain := *im.Loaded
		plain.Cache = nil
		res, err := pipeline.Segment(ctx, &plain, cfg.Base)
		if err != nil {
			t.Fatal(err)
		}
		auto = append(auto, res.Params.SigmaI)
	}
	a := tune.Median(auto)
	grid := rep.Space["sigma-i"].(map[string]any)["grid"].([]float64)
	want := tune.DefaultAxis(tune.SigmaI, tune.LogSpaced(a/4, 4*a, 5)).Values
	if len(grid) != 5 || !slices.Equal(grid, want) {
		t.Errorf("sigma-i grid %v, want %v around the automatic %v", grid, want, a)
	}
	if rep.GridSize != 10 || rep.Evaluations < 10 {
		t.Errorf("grid %d settings, %d evaluations; want 5 x 2", rep.GridSize, rep.Evaluations)
	}

	// The choice segmented again, without the cache.
	// With the automatic settings kept (no grid setting beat them by
	// more than a tie) best.json leaves both widths to the image.
	best := out.ParamsFile()
	p := cfg.Base
	if rep.AutomaticKept {
		if best["sigma-i"] != "auto" || best["sigma-x"] != "auto" {
			t.Errorf("automatic settings kept, but best.json holds sigma-i %v, sigma-x %v", best["sigma-i"], best["sigma-x"])
		}
	} else {
		p.SigmaI, p.AutoSigmaI = best["sigma-i"].(float64), false
		p.SigmaX, p.AutoSigmaX = best["sigma-x"].(float64), false
	}
	var sum float64
	for _, im := range cfg.Images {
		plain := *im.Loaded
		plain.Cache = nil
		res, err := pipeline.Segment(ctx, &plain, p)
		if err != nil {
			t.Fatal(err)
		}
		m, err := score.Compare(ctx, res.Labels, im.Truth.Map, 2)
		if err != nil {
			t.Fatal(err)
		}
		sum += m.F1
	}
	if got := sum / 2; got != rep.Score {
		t.Errorf("the choice scores %v when segmented again, the report says %v", got, rep.Score)
	}
	if best["classes"] != 2 || best["necks"] != "on" || best["radius"] != int64(5) || best["superpixels"] != int64(300) {
		t.Errorf("best.json passes the fixed settings through wrongly: %v", best)
	}
	if !strings.Contains(rep.Timing, "WORKERS") || strings.Contains(rep.Timing, "`") {
		t.Errorf("timing note not worded by the voice: %q", rep.Timing)
	}
	if rep.Version != "test-1" || rep.CVFolds != 2 || len(rep.Folds) != 2 || rep.CVScore == nil {
		t.Errorf("version %q, folds %d (%d results), cross-validated %v", rep.Version, rep.CVFolds, len(rep.Folds), rep.CVScore)
	}

	dir := filepath.Join(t.TempDir(), "out")
	if err := out.Write(dir, false); err != nil {
		t.Fatal(err)
	}
	// tune.csv: a header, the baseline (the settings as given), then every
	// evaluation; no grid row's mean F1 above the choice.
	f, err := os.ReadFile(filepath.Join(dir, "tune.csv"))
	if err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(bytes.NewReader(f)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(rows) != rep.Evaluations+2 || rows[1][0] != "baseline" || rows[1][1] != "given-sigma-i" {
		t.Fatalf("tune.csv: %d rows (want %d), baseline row %v", len(rows), rep.Evaluations+2, rows[1])
	}
	if slices.Contains(rows[0], "necks") {
		t.Errorf("tune.csv names necks, which was not searched: %v", rows[0])
	}
	col := map[string]int{}
	for i, h := range rows[0] {
		col[h] = i
	}
	for _, r := range rows[2:] {
		var v float64
		if err := json.Unmarshal([]byte(r[col["mean_f1"]]), &v); err != nil {
			t.Fatalf("row %v: %v", r, err)
		}
		if v > rep.Score && !tune.Tied(v, rep.Score) {
			t.Errorf("row %v scores %v above the choice %v", r, v, rep.Score)
		}
	}
	// best.json and tune.json read back as written.
	var bj map[string]any
	var tj Report
	for name, v := range map[string]any{"best.json": &bj, "tune.json": &tj} {
		data, err := os.ReadFile(filepath.Join(dir, name))
		if err != nil {
			t.Fatal(err)
		}
		if err := json.Unmarshal(data, v); err != nil {
			t.Fatalf("%s: %v", name, err)
		}
	}
	wantSX := "auto"
	if v, ok := best["sigma-x"].(float64); ok {
		wantSX = tune.FormatValue(v)
	}
	if bj["sigma-i"] != best["sigma-i"] || tj.Score != rep.Score || tj.Best["sigma-x"] != wantSX || tj.Seconds <= 0 {
		t.Errorf("files disagree with the report: best.json %v, tune.json score %v best %v seconds %v", bj, tj.Score, tj.Best, tj.Seconds)
	}
	if _, err := os.Stat(filepath.Join(dir, "tune.png")); err != nil {
		t.Error(err)
	}
	// Without force nothing is replaced.
	if err := out.Write(dir, false); !errors.Is(err, imageio.ErrExists) {
		t.Errorf("second write without force: %v, want imageio.ErrExists", err)
	}
}

// Load refuses a truth of another size, naming both files; check's
// error comes back as it is; an unreadable image is named.
func TestLoadErrors(t *testing.T) {
	pairs := writeScenes(t, 13142)
	small := scenes.Nuclei(scenes.NucleiOptions{Width: 120, Height: 96, Seed: 13142})
	bad := filepath.Join(t.TempDir(), "small.truth.png")
	if err := scenes.WritePNG(bad, small.TruthImage()); err != nil {
		t.Fatal(err)
	}
	_, err := Load(ctx, []Pair{{Name: "x", Image: pairs[0].Image, Truth: bad}}, testOptions(), readTruth, nil)
	if err == nil || !strings.Contains(err.Error(), "96x96") || !strings.Contains(err.Error(), "120x96") || !strings.Contains(err.Error(), bad) {
		t.Errorf("size mismatch: %v", err)
	}
	sentinel := errors.New("tolerance too large")
	var seen *Image
	_, err = Load(ctx, pairs, testOptions(), readTruth, func(im *Image) error { seen = im; return sentinel })
	if err != sentinel || seen == nil || seen.Truth.Width != 96 || seen.Name != pairs[0].Name {
		t.Errorf("check: %v, saw %+v", err, seen)
	}
	missing := filepath.Join(t.TempDir(), "none.png")
	_, err = Load(ctx, []Pair{{Name: "none", Image: missing, Truth: pairs[0].Truth}}, testOptions(), readTruth, nil)
	if err == nil || !strings.Contains(err.Error(), missing) {
		t.Errorf("missing image: %v", err)
	}
}

// The colour range of tune.png: 0..1 for metrics bounded by 1; for vi 0
// up to the largest value rounded up to 1, 2 or 5 times a power of ten
// (worked by hand).
func TestHeatmapRange(t *testing.T) {
	for _, c := range []struct {
		m    score.Metric
		vmax float64
		hi   float64
	}{
		{score.MetricF1, 0.3, 1}, {score.MetricARI, 2, 1},
		{score.MetricVI, 0.37, 0.5}, {score.MetricVI, 3.2, 5}, {score.MetricVI, 1, 1}, {score.MetricVI, 1.01, 2},
		{score.MetricVI, 0, 1}, {score.MetricVI, math.Inf(-1), 1},
	} {
		lo, hi, note := HeatmapRange(c.m, c.vmax)
		if lo != 0 || math.Abs(hi-c.hi) > 1e-12 || note == "" {
			t.Errorf("%s at %v: %v..%v, want 0..%v", c.m, c.vmax, lo, hi, c.hi)
		}
	}
}

// Run refuses a search without images.
func TestRunNoImages(t *testing.T) {
	if _, err := Run(ctx, &Config{}); err == nil {
		t.Error("no images accepted")
	}
}

// The necks switch and the faint level are reported (tune.csv,
// tune.json) only when two or more of their values are searched; the
// other parameters always.
func TestReported(t *testing.T) {
	var s tune.Space
	s[tune.Necks] = tune.DefaultAxis(tune.Necks, []float64{tune.On})
	s[tune.Faint] = tune.DefaultAxis(tune.Faint, []float64{0})
	if got := Reported(&s); len(got) != int(tune.NumParams)-2 || slices.Contains(got, tune.Necks) || slices.Contains(got, tune.Faint) {
		t.Errorf("necks and faint fixed: reported %v", got)
	}
	s[tune.Necks] = tune.NewAxis(tune.Necks, []float64{tune.On, tune.Off}, "on,off")
	if got := Reported(&s); len(got) != int(tune.NumParams)-1 || got[len(got)-1] != tune.Necks {
		t.Errorf("necks searched: reported %v", got)
	}
	s[tune.Faint] = tune.NewAxis(tune.Faint, []float64{0, 4}, "0,4")
	if got := Reported(&s); len(got) != int(tune.NumParams) || got[len(got)-1] != tune.Faint {
		t.Errorf("necks and faint searched: reported %v", got)
	}
	m := map[string]string{"sigma-i": "0.1", "necks": "on"}
	s[tune.Necks] = tune.DefaultAxis(tune.Necks, []float64{tune.Off})
	trim(&s, m)
	if _, ok := m["necks"]; ok || m["sigma-i"] != "0.1" {
		t.Errorf("trim: %v", m)
	}
}
