package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"errors"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/examples/scenes"
	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/segment"
	"github.com/cleave-seg/cleave/segment/score"
)

// writeNuclei writes n small generated nuclei scenes (seeds from seed) as
// NAME.png with NAME.truth.png into dir and returns the scenes.
func writeNuclei(t testing.TB, dir string, seed uint64, n, size int) []*scenes.Scene {
	t.Helper()
	var out []*scenes.Scene
	for k := 0; k < n; k++ {
		sc := scenes.Nuclei(scenes.NucleiOptions{Width: size, Height: size, Seed: seed + uint64(k)})
		if err := scenes.WritePNG(filepath.Join(dir, sc.Name+".png"), sc.Image()); err != nil {
			t.Fatal(err)
		}
		if err := scenes.WritePNG(filepath.Join(dir, sc.Name+".truth.png"), sc.TruthImage()); err != nil {
			t.Fatal(err)
		}
		out = append(out, sc)
	}
	return out
}

// A small search, kept small for test time: 2 x 2 grid, 2 refinement steps.
var smallTune = []string{"--classes", "2", "--background", "dark", "--superpixels", "300",
	"--sigma-i", "0.005,0.02", "--sigma-x", "6:12:2", "--max-ncut", "0.15", "--budget", "2", "--folds", "2"}

func readCSV(t *testing.T, path string) [][]string {
	t.Helper()
	f, err := os.Open(path)
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

// best.json must reproduce the tuned run: cleave segment --params best.json
// on a tuning image gives the label map whose object F1 (score.MatchObjects,
// hand-worked tests in segment/score) tune recorded for the best setting,
// exactly; f1 is the documented default metric with --background. And the
// search does not depend on --workers or the clock: with --tie-break
// smoother and with the default (faster: the cost model, no timing in the
// choice) two runs give the same best.json bytes and tune.csv (but for the
// two seconds columns). Progress lines go to stderr.
func TestTuneReproducesAndIsDeterministic(t *testing.T) {
	dir := t.TempDir()
	sc := writeNuclei(t, dir, 7100, 2, 112)
	outs := map[string]string{}
	for _, c := range []struct{ name, w string }{{"1", "1"}, {"2", "2"}, {"faster1", "1"}, {"faster2", "2"}} {
		out := filepath.Join(dir, "tuned"+c.name)
		args := []string{"tune", "--images", dir, "--truth", dir, "--out", out, "--workers", c.w}
		if !strings.HasPrefix(c.name, "faster") {
			args = append(args, "--tie-break", "smoother")
		}
		var stdout, stderr bytes.Buffer
		if code := run(context.Background(), append(args, smallTune...), &stdout, &stderr); code != exitOK {
			t.Fatalf("exit %d: %s", code, stderr.String())
		}
		for _, want := range []string{"metric:              f1 (default with --background", "best:                mean f1 ", "s per image", "cross-validated:     held-out f1", "best.json"} {
			if !strings.Contains(stdout.String(), want) {
				t.Errorf("summary lacks %q:\n%s", want, stdout.String())
			}
		}
		if !regexp.MustCompile(`(?m)^cleave tune: \d+/\d+ settings evaluated, best mean f1 so far [0-9.]+ \(grid done\)$`).MatchString(stderr.String()) {
			t.Errorf("stderr lacks the progress line of the grid:\n%s", stderr.String())
		}
		outs[c.name] = out
	}
	var b1 []byte
	var r1 [][]string
	for _, pair := range [][2]string{{"1", "2"}, {"faster1", "faster2"}} {
		ba, _ := os.ReadFile(filepath.Join(outs[pair[0]], "best.json"))
		bb, _ := os.ReadFile(filepath.Join(outs[pair[1]], "best.json"))
		if !bytes.Equal(ba, bb) || len(ba) == 0 {
			t.Errorf("%s/%s: best.json differs between the two runs:\n%s\n%s", pair[0], pair[1], ba, bb)
		}
		ra, rb := readCSV(t, filepath.Join(outs[pair[0]], "tune.csv")), readCSV(t, filepath.Join(outs[pair[1]], "tune.csv"))
		secCol, perCol, costCol := slices.Index(ra[0], "seconds"), slices.Index(ra[0], "seconds_per_image"), slices.Index(ra[0], "cost_per_image")
		if secCol < 0 || perCol < 0 || costCol < 0 || len(ra) != len(rb) || ra[0][7] != "f1:"+sc[0].Name {
			t.Fatalf("csv header %v, %d vs %d rows", ra[0], len(ra), len(rb))
		}
		for _, m := range []string{"mean_f1", "mean_map", "mean_ari"} {
			if !slices.Contains(ra[0], m) {
				t.Errorf("tune.csv lacks %s: %v", m, ra[0])
			}
		}
		timed := 0
		for i := range ra {
			if i > 0 && ra[i][perCol] != "" {
				timed++
			}
			if i > 0 && ra[i][costCol] == "" {
				t.Errorf("%s: tune.csv row %d has no cost: %v", pair[0], i, ra[i])
			}
			ra[i][secCol], rb[i][secCol], ra[i][perCol], rb[i][perCol] = "", "", "", ""
			if strings.Join(ra[i], ",") != strings.Join(rb[i], ",") {
				t.Errorf("%s/%s: tune.csv row %d differs: %v vs %v", pair[0], pair[1], i, ra[i], rb[i])
			}
		}
		if timed == 0 {
			t.Errorf("%s: no setting of tune.csv has its seconds per image", pair[0])
		}
		if pair[0] == "1" {
			b1, r1 = ba, ra
		}
	}
	// The default run had ties to break (measured on these scenes), and
	// both runs list the same tied settings with the same costs, the
	// cheapest within 10% chosen.
	var fa, fb tuneReport
	for _, x := range []struct {
		name string
		rep  *tuneReport
	}{{"faster1", &fa}, {"faster2", &fb}} {
		raw, _ := os.ReadFile(filepath.Join(outs[x.name], "tune.json"))
		if err := json.Unmarshal(raw, x.rep); err != nil {
			t.Fatal(err)
		}
	}
	strip := func(ts []tiedSetting) string {
		var b strings.Builder
		for _, s := range ts {
			s.SecondsPerImage = nil
			j, _ := json.Marshal(s)
			b.Write(j)
		}
		return b.String()
	}
	if fa.TieBreak != "faster" || len(fa.Tied) < 2 || fa.CostPerImage == nil || strip(fa.Tied) != strip(fb.Tied) {
		t.Errorf("default tie-break: %q, %d tied settings, cost %v; ties differ between runs: %v", fa.TieBreak, len(fa.Tied), fa.CostPerImage, strip(fa.Tied) != strip(fb.Tied))
	} else {
		low := math.Inf(1)
		for _, s := range fa.Tied {
			low = math.Min(low, *s.CostPerImage)
		}
		if !fa.Tied[0].Chosen || *fa.Tied[0].CostPerImage > costMargin*low || *fa.CostPerImage != *fa.Tied[0].CostPerImage {
			t.Errorf("chosen tie %+v, lowest cost %v", fa.Tied[0], low)
		}
	}
	// The grid has 2 x 2 settings; baseline, grid and refine rows all present.
	stages := map[string]int{}
	for _, r := range r1[1:] {
		stages[r[0]]++
	}
	if stages["baseline"] != 1 || stages["grid"] != 4 || stages["refine"] < 1 {
		t.Errorf("stages %v, want 1 baseline, 4 grid, some refine", stages)
	}

	// best.json holds every parameter and the tuned values.
	var best map[string]any
	if err := json.Unmarshal(b1, &best); err != nil {
		t.Fatal(err)
	}
	for _, k := range paramNames() {
		if _, ok := best[k]; !ok {
			t.Errorf("best.json lacks %q", k)
		}
	}
	if best["classes"] != 2.0 || best["background"] != "dark" || best["superpixels"] != 300.0 {
		t.Errorf("fixed settings not passed through: %v", best)
	}
	var rep tuneReport
	raw, _ := os.ReadFile(filepath.Join(outs["1"], "tune.json"))
	if err := json.Unmarshal(raw, &rep); err != nil {
		t.Fatal(err)
	}
	if rep.CVScore == nil || rep.CVFolds != 2 || len(rep.Folds) != 2 || rep.GridSize != 4 || rep.Evaluations != len(r1)-2 {
		t.Errorf("tune.json: %+v", rep)
	}
	if rep.Metric != "f1" || rep.TieBreak != "smoother" || rep.BestMetrics == nil || rep.BestMetrics.F1 != rep.Score || rep.SecondsPerImage == nil || len(rep.Tied) == 0 || rep.Widenings == nil {
		t.Errorf("tune.json: metric %q, best metrics %+v, score %v, seconds per image %v, timed ties %d, widenings %v",
			rep.Metric, rep.BestMetrics, rep.Score, rep.SecondsPerImage, len(rep.Tied), rep.Widenings)
	}
	// Find the best row in tune.csv: its per-image F1.
	var want float64 = math.NaN()
	for _, r := range r1[1:] {
		if r[0] != "baseline" && r[1] == rep.Best["sigma-i"] && r[2] == rep.Best["sigma-x"] && r[3] == rep.Best["max-ncut"] {
			want, _ = strconv.ParseFloat(r[7], 64) // f1 of the first image
		}
	}
	if math.IsNaN(want) || math.Abs(want-rep.Score) > 0.5 {
		t.Fatalf("best setting %v not found in tune.csv", rep.Best)
	}
	seg := filepath.Join(dir, "seg")
	runOK(t, "segment", "--params", filepath.Join(outs["1"], "best.json"), "--out", seg, filepath.Join(dir, sc[0].Name+".png"))
	labels, _, _, err := imageio.ReadLabels(filepath.Join(seg, sc[0].Name+".labels.png"))
	if err != nil {
		t.Fatal(err)
	}
	// tune.csv holds 10 significant digits.
	if got := score.MatchObjects(labels, sc[0].Truth).F1; math.Abs(got-want) > 1e-9 {
		t.Errorf("segment --params best.json: object F1 %.12g, tune recorded %.12g", got, want)
	}
	// tune.png is a PNG of the documented size.
	f, err := os.Open(filepath.Join(outs["1"], "tune.png"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	cfg, err := png.DecodeConfig(f)
	if err != nil || cfg.Width != plotW || cfg.Height != plotH {
		t.Errorf("tune.png: %v, %dx%d", err, cfg.Width, cfg.Height)
	}
}

// Log-spaced values are a geometric sequence (common practice: A:B:N as in
// numpy.geomspace): 0.01:0.1:3 has the middle value sqrt(0.01*0.1).
func TestParseSpec(t *testing.T) {
	for _, c := range []struct {
		spec    string
		integer bool
		want    []float64
		auto    bool
	}{
		{"0.01:0.1:3", false, []float64{0.01, 0.03162, 0.1}, false},
		{"4:32:4", false, []float64{4, 8, 16, 32}, false},
		{"3,8,5,5", true, []float64{3, 5, 8}, false},
		{"2:8:3", true, []float64{2, 4, 8}, false},
		{"0.15", false, []float64{0.15}, false},
		{"auto", false, nil, true},
	} {
		name := "sigma-x"
		if c.integer {
			name = "radius"
		}
		d, err := parseSpec(name, c.spec, c.integer, true, false)
		if err != nil {
			t.Errorf("%s: %v", c.spec, err)
			continue
		}
		if d.auto != c.auto || len(d.values) != len(c.want) {
			t.Errorf("%s: got %v auto %v, want %v", c.spec, d.values, d.auto, c.want)
			continue
		}
		for i := range c.want {
			if d.values[i] != c.want[i] {
				t.Errorf("%s: got %v, want %v", c.spec, d.values, c.want)
			}
		}
	}
	for _, bad := range []string{"1:2", "0:1:3", "-1", "a,b", "1:2:0", "1:2:x", "2.5", "65", "3,5,100", "1:1e9:3"} {
		if _, err := parseSpec("radius", bad, true, false, false); err == nil || !strings.Contains(err.Error(), "--radius") {
			t.Errorf("%q: error %v", bad, err)
		}
	}
	// Values outside a parameter's range (segment's ranges) are refused.
	for _, c := range [][2]string{{"sigma-i", "1e-9"}, {"sigma-i", "0.1,200"}, {"sigma-x", "1:1e7:3"}, {"max-ncut", "0.1,3"}, {"compactness", "20,1e5"}, {"superpixels", "2000000"}} {
		if _, err := parseSpec(c[0], c[1], c[0] == "superpixels", true, c[0] == "superpixels"); err == nil || !strings.Contains(err.Error(), "outside the range") {
			t.Errorf("--%s %s: error %v, want one about the range", c[0], c[1], err)
		}
	}
}

// The chosen setting is the best row of tune.csv for the metric, within
// the documented tie tolerance (relative 1e-4): the largest mean ARI or
// mAP, or the smallest mean VI (--metric vi is minimized).
func TestTuneChoosesBestRow(t *testing.T) {
	dir := t.TempDir()
	writeNuclei(t, dir, 7300, 2, 112)
	for _, c := range []struct {
		metric string
		col    string
		sign   float64
	}{{"ari", "mean_ari", 1}, {"map", "mean_map", 1}, {"vi", "mean_vi", -1}} {
		out := filepath.Join(dir, "tuned-"+c.metric)
		args := append([]string{"tune", "--images", dir, "--truth", dir, "--out", out, "--metric", c.metric}, smallTune...)
		runOK(t, args...)
		rows := readCSV(t, filepath.Join(out, "tune.csv"))
		col := -1
		for i, h := range rows[0] {
			if h == c.col {
				col = i
			}
		}
		extreme := math.Inf(-1)
		for _, r := range rows[1:] {
			if r[0] == "baseline" {
				continue
			}
			v, err := strconv.ParseFloat(r[col], 64)
			if err != nil {
				t.Fatalf("%s: %v", c.col, err)
			}
			extreme = math.Max(extreme, c.sign*v)
		}
		var rep tuneReport
		raw, _ := os.ReadFile(filepath.Join(out, "tune.json"))
		if err := json.Unmarshal(raw, &rep); err != nil {
			t.Fatal(err)
		}
		if math.Abs(c.sign*rep.Score-extreme) > 1e-9+tieRelative*math.Abs(extreme) || rep.Metric != c.metric || rep.MetricChoice != "--metric" {
			t.Errorf("--metric %s: tune.json metric %q (%s), score %v, best row of tune.csv %v", c.metric, rep.Metric, rep.MetricChoice, rep.Score, c.sign*extreme)
		}
	}
}

func TestSmootherOrder(t *testing.T) {
	// Ties go to wider kernels, then a smaller max-ncut (the documented order).
	a := point{0.01, 20, 0.1, 5, 0, 20}
	b := point{0.01, 10, 0.1, 5, 0, 20}
	c := point{0.01, 20, 0.2, 5, 0, 20}
	if !smoother(a, b) || smoother(b, a) || !smoother(a, c) || smoother(a, a) {
		t.Error("smoother order wrong")
	}
}

func TestTuneErrors(t *testing.T) {
	dir := t.TempDir()
	writeNuclei(t, dir, 7200, 1, 112)
	lone := filepath.Join(dir, "lone")
	if err := os.Mkdir(lone, 0o755); err != nil {
		t.Fatal(err)
	}
	writeTestPNG(t, filepath.Join(lone, "a.png"), 40, 40)
	mism := filepath.Join(dir, "mism")
	if err := os.Mkdir(mism, 0o755); err != nil {
		t.Fatal(err)
	}
	writeTestPNG(t, filepath.Join(mism, "a.png"), 40, 40)
	writeGrayPNG(t, filepath.Join(mism, "a_mask.png"), 30, 40, false)
	done := filepath.Join(dir, "done")
	if err := os.Mkdir(done, 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(done, "best.json"), []byte("{}"), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out")
	for _, c := range []struct {
		name string
		args []string
		code int
		want string
	}{
		{"no_images", []string{"tune", "--truth", dir, "--out", out}, exitUsage, "--images"},
		{"metric", []string{"tune", "--images", dir, "--truth", dir, "--out", out, "--metric", "speed"}, exitUsage, `--metric must be one of f1, map, ari, dice, bf, covering, vi, got "speed"`},
		{"tie_break", []string{"tune", "--images", dir, "--truth", dir, "--out", out, "--tie-break", "slower"}, exitUsage, "--tie-break must be faster or smoother"},
		{"spec", []string{"tune", "--images", dir, "--truth", dir, "--out", out, "--sigma-x", "1:2"}, exitUsage, "--sigma-x"},
		{"fixed_param", []string{"tune", "--images", dir, "--truth", dir, "--out", out, "--background", "grey", "--classes", "2"}, exitUsage, "background"},
		{"no_pairs", []string{"tune", "--images", lone, "--truth", lone, "--out", out}, exitFail, "no image"},
		{"size", []string{"tune", "--images", mism, "--truth", mism, "--out", out}, exitFail, "a_mask.png is 30x40"},
		{"exists", []string{"tune", "--images", dir, "--truth", dir, "--out", done}, exitFail, "already exists"},
		{"missing_folder", []string{"tune", "--images", filepath.Join(dir, "nope"), "--truth", dir, "--out", out}, exitFail, "nope"},
		{"budget", []string{"tune", "--images", dir, "--truth", dir, "--out", out, "--budget", "1001"}, exitUsage, "--budget must be 0 to 1000"},
		{"folds", []string{"tune", "--images", dir, "--truth", dir, "--out", out, "--folds", "1000000"}, exitUsage, "--folds must be 0 to 100"},
		{"workers", []string{"tune", "--images", dir, "--truth", dir, "--out", out, "--workers", "1000000"}, exitUsage, "--workers must be 0"},
		{"tolerance", []string{"tune", "--images", dir, "--truth", dir, "--out", out, "--tolerance", "1e5"}, exitUsage, "--tolerance 100000 is larger than the diagonal of " + filepath.Join(dir, "nuclei-7200.truth.png")},
		{"classes", []string{"tune", "--images", dir, "--truth", dir, "--out", out, "--classes", "2147483648"}, exitUsage, "--classes"},
	} {
		var stdout, stderr bytes.Buffer
		code := run(context.Background(), c.args, &stdout, &stderr)
		if code != c.code || !strings.Contains(stderr.String(), c.want) {
			t.Errorf("%s: exit %d, stderr %q; want exit %d mentioning %q", c.name, code, stderr.String(), c.code, c.want)
		}
	}
}

// Ctrl-C (a cancelled context) stops tune with exit 1 and writes nothing.
func TestTuneInterrupted(t *testing.T) {
	dir := t.TempDir()
	writeNuclei(t, dir, 7400, 1, 112)
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	out := filepath.Join(dir, "out")
	var stdout, stderr bytes.Buffer
	code := run(ctx, append([]string{"tune", "--images", dir, "--truth", dir, "--out", out}, smallTune...), &stdout, &stderr)
	if code != exitFail || !strings.Contains(stderr.String(), "interrupted") {
		t.Errorf("exit %d, stderr %q", code, stderr.String())
	}
	if _, err := os.Stat(filepath.Join(out, "best.json")); err == nil {
		t.Error("best.json written after an interrupt")
	}
}

// The metric tune maximizes: the one given, else the documented default
// (object F1 with --background, since objects are what users count; ARI
// without, when there are no objects). An unknown name is a usage error
// naming the flag and the allowed values.
func TestTuneMetricChoice(t *testing.T) {
	for _, c := range []struct {
		given, background string
		want, why         string
		usage             bool
	}{
		{"", "dark", "f1", "default with --background", false},
		{"", "bright", "f1", "default with --background", false},
		{"", "", "ari", "default without --background", false},
		{"map", "dark", "map", "--metric", false},
		{"ari", "dark", "ari", "--metric", false},
		{"f1", "", "f1", "--metric", false},
		{"vi", "", "vi", "--metric", false},
		{"mAP", "dark", "", "", true},
		{"speed", "", "", "", true},
	} {
		got, why, err := chooseMetric(c.given, c.background)
		if c.usage {
			var u *usageError
			if !errors.As(err, &u) || !strings.Contains(err.Error(), "--metric must be one of f1, map, ari") || !strings.Contains(err.Error(), c.given) {
				t.Errorf("%q: error %v, want a usage error naming --metric, the allowed values and %q", c.given, err, c.given)
			}
			continue
		}
		if err != nil || got != c.want || !strings.HasPrefix(why, c.why) {
			t.Errorf("--metric %q --background %q: %q (%s) %v; want %q (%s...)", c.given, c.background, got, why, err, c.want, c.why)
		}
	}
}

// synthTuner is a tuner over sigma-x alone (grid sx, the other parameters
// fixed) on two images whose object F1 is f(sigma-x) and whose cost model
// per image is cost(sigma-x, image); every segmentation times 1 s: the
// search code on an objective known in closed form, without segmenting.
func synthTuner(sx []float64, f, cost func(sx float64, img int) float64) *tuner {
	t := &tuner{ctx: context.Background(), metric: "f1", workers: 1, cache: map[string]*evaluation{},
		images: make([]*loaded, 2), names: []string{"a", "b"}}
	t.dims[dimSigmaI] = defaultDim("sigma-i", []float64{0.02}, false)
	t.dims[dimSigmaX] = defaultDim("sigma-x", slices.Clone(sx), false)
	t.dims[dimMaxNcut] = defaultDim("max-ncut", []float64{0.15}, false)
	t.dims[dimRadius] = defaultDim("radius", []float64{5}, true)
	t.dims[dimSuperpixels] = dim{name: "superpixels", auto: true}
	t.dims[dimCompactness] = defaultDim("compactness", []float64{20}, false)
	t.evalFn = func(p point, img int) (metrics, error) {
		v := f(p[dimSigmaX], img)
		if math.IsNaN(v) {
			return metrics{}, errors.New("synthetic failure")
		}
		return metrics{F1: v}, nil
	}
	t.costFn = func(p point, img int) float64 { return cost(p[dimSigmaX], img) }
	t.timeFn = func(point, int) (float64, error) { return 1, nil }
	return t
}

// Edge widening on an objective with its peak at opt, F1 = 1/(1 +
// ln(sx/opt)^2) (a closed form chosen for the test: one maximum, at opt),
// from the grid 4, 8, 16 (log step ln 2). An optimum inside the range
// widens nothing; one outside widens the range toward it, one grid step
// (a factor 2) at a time, at most twice, and the search then finds a
// better setting outside the initial range; a plateau reaching inside the
// range widens nothing.
func TestTuneWidensAtTheEdge(t *testing.T) {
	peak := func(opt float64) func(float64, int) float64 {
		return func(sx float64, _ int) float64 { l := math.Log(sx / opt); return 1 / (1 + l*l) }
	}
	for _, c := range []struct {
		name     string
		f        func(float64, int) float64
		side     string
		n        int     // widenings expected
		lo, hi   float64 // where the best must lie
		outsides bool    // the best lies outside 4..16
	}{
		{"inside", peak(10), "", 0, 9, 11, false},
		{"above", peak(40), "high", 2, 36, 44, true},
		{"below", peak(1.5), "low", 2, 1.35, 1.65, true},
		// Far away: two widenings (16 -> 32 -> 64), then refinement up to
		// one more grid step (128) and no further.
		{"far_above", peak(1000), "high", 2, 64, 128, true},
		// A plateau: refinement may step one grid step beyond (to 32).
		{"plateau", func(float64, int) float64 { return 0.9 }, "", 0, 4, 32, false},
	} {
		tn := synthTuner([]float64{4, 8, 16}, c.f, func(float64, int) float64 { return 1 })
		var said []string
		res, err := tn.search([]int{0, 1}, 8, func(m string) { said = append(said, m) })
		if err != nil {
			t.Fatal(err)
		}
		if len(res.widened) != c.n || len(said) != c.n {
			t.Errorf("%s: %d widenings %+v, %d messages; want %d", c.name, len(res.widened), res.widened, len(said), c.n)
		}
		for i, w := range res.widened {
			if w.Parameter != "sigma-x" || w.Side != c.side || !strings.Contains(said[i], "sigma-x") || !strings.Contains(said[i], "widened") {
				t.Errorf("%s: widening %+v, message %q", c.name, w, said[i])
			}
		}
		got := res.best.pt[dimSigmaX]
		if got < c.lo || got > c.hi {
			t.Errorf("%s: best sigma-x %v, want within [%v, %v]", c.name, got, c.lo, c.hi)
		}
		if c.outsides && !(tn.objective(res.best, []int{0, 1}) > c.f(16, 0)+1e-3 || tn.objective(res.best, []int{0, 1}) > c.f(4, 0)+1e-3) {
			t.Errorf("%s: widening did not improve on the initial range", c.name)
		}
		if c.n == maxWidenings && len(res.dims[dimSigmaX].values) != 3+maxWidenings {
			t.Errorf("%s: widened grid %v", c.name, res.dims[dimSigmaX].values)
		}
	}
}

// Ties (objectives within a relative 1e-4) go to the setting cheapest by
// the cost model (mean over the images of the per-image cost); of
// settings within costMargin (10%) of the lowest mean cost, to the
// smoother (larger sigma-x). Grid 4, 8, 16 only (budget 0); the objective
// and the costs are given (hand-made cases, expected choices worked by
// hand). The clock plays no part: each case runs with seconds that favour
// the most expensive setting and with seconds that favour the cheapest,
// and the choice is the same; the seconds reported are those measured.
func TestTuneTieBreakFaster(t *testing.T) {
	flat := func(float64, int) float64 { return 0.9 }
	linear := func(sx float64, _ int) float64 { return sx }
	table := func(m map[float64]float64) func(float64, int) float64 {
		return func(sx float64, _ int) float64 { return m[sx] }
	}
	for _, c := range []struct {
		name string
		f    func(float64, int) float64
		cost func(float64, int) float64
		want float64
	}{
		{"cheaper_wins", flat, linear, 4},
		{"equal_cost_smoother_wins", flat, func(float64, int) float64 { return 1 }, 16},
		{"within_10pct_smoother_wins", flat, table(map[float64]float64{4: 1, 8: 1.05, 16: 1.09}), 16},
		{"beyond_10pct_cheaper_wins", flat, table(map[float64]float64{4: 1, 8: 1.05, 16: 1.15}), 8},
		// Means over the images 10.5, 5, 6.5: 8 is cheapest, 16 is 30% above.
		{"mean_over_images", flat, func(sx float64, img int) float64 {
			return [][]float64{{1, 5, 10}, {20, 5, 3}}[img][map[float64]int{4: 0, 8: 1, 16: 2}[sx]]
		}, 8},
		{"tied_within_1e-4", func(sx float64, _ int) float64 {
			if sx == 4 {
				return 0.9 * (1 - 5e-5)
			}
			return 0.9
		}, linear, 4},
		{"not_tied_at_1e-3", func(sx float64, _ int) float64 {
			if sx == 4 {
				return 0.9 * (1 - 1e-3)
			}
			return 0.9
		}, linear, 8},
	} {
		for _, clock := range []struct {
			name string
			secs func(sx float64) float64
		}{{"clock_favours_costly", func(sx float64) float64 { return 1 / c.cost(sx, 0) }}, {"clock_favours_cheap", func(sx float64) float64 { return c.cost(sx, 0) }}} {
			tn := synthTuner([]float64{4, 8, 16}, c.f, c.cost)
			tn.timeFn = func(p point, _ int) (float64, error) { return clock.secs(p[dimSigmaX]), nil }
			res, err := tn.search([]int{0, 1}, 0, nil)
			if err != nil {
				t.Fatal(err)
			}
			if err := tn.timeTies(res); err != nil {
				t.Fatal(err)
			}
			if got := res.best.pt[dimSigmaX]; got != c.want || len(res.widened) != 0 {
				t.Errorf("%s, %s: chose sigma-x %v (widenings %v), want %v", c.name, clock.name, got, res.widened, c.want)
			}
			if len(res.ties) == 0 || res.ties[0] != res.best {
				t.Errorf("%s, %s: ties %d, the chosen setting not first", c.name, clock.name, len(res.ties))
			}
			if s := tn.secondsPerImage(res.best, []int{0, 1}); s != clock.secs(c.want) {
				t.Errorf("%s, %s: seconds per image %v, want the measured %v", c.name, clock.name, s, clock.secs(c.want))
			}
		}
	}
}

// With --tie-break smoother the tie stays on the search's best (the
// smoother on ties), whatever the costs: on a flat objective with cost
// rising in sigma-x, the grid's best is the smoothest, 16 (hand-worked).
func TestTuneTieBreakSmoother(t *testing.T) {
	tn := synthTuner([]float64{4, 8, 16}, func(float64, int) float64 { return 0.9 }, func(sx float64, _ int) float64 { return sx })
	tn.smootherTies = true
	res, err := tn.search([]int{0, 1}, 0, nil)
	if err != nil {
		t.Fatal(err)
	}
	if got := res.best.pt[dimSigmaX]; got != 16 || len(res.ties) != 1 {
		t.Errorf("chose sigma-x %v with %d ties listed, want 16 alone", got, len(res.ties))
	}
}

// The cost model of a segmentation result: nonzeros x (1 + log2 regions),
// worked by hand: 10 nonzeros and 4 regions give 10 x 3 = 30; one region
// gives the nonzeros alone.
func TestSegCost(t *testing.T) {
	g := &affinity.Graph{N: 4, RowPtr: []int{0, 3, 5, 8, 10}, Col: make([]int32, 10), Weight: make([]float32, 10)}
	for _, c := range []struct {
		regions int
		want    float64
	}{{4, 30}, {1, 10}, {0, 10}} {
		if got := segCost(&segment.Result{Graph: g, NumRegions: c.regions}); got != c.want {
			t.Errorf("%d regions: cost %v, want %v", c.regions, got, c.want)
		}
	}
	if got := segCost(&segment.Result{}); got != 0 {
		t.Errorf("no graph: cost %v, want 0", got)
	}
}

// A fold whose choice fails on its held-out image records why in its
// result (tune.json's fold_results[].error), and the cross-validated score
// is absent. Image b fails for sigma-x >= 16, where image a scores best.
func TestTuneFoldErrorRecorded(t *testing.T) {
	tn := synthTuner([]float64{4, 8, 16}, func(sx float64, img int) float64 {
		if img == 1 && sx >= 16 {
			return math.NaN()
		}
		return 1 / (1 + math.Abs(math.Log(sx/16)))
	}, func(float64, int) float64 { return 1 })
	folds, cv, err := tn.crossValidate(2, 0)
	if err != nil {
		t.Fatal(err)
	}
	if len(folds) != 2 || !math.IsNaN(cv) {
		t.Fatalf("folds %+v, cv %v", folds, cv)
	}
	f := folds[1]
	if f.HeldScore != nil || !strings.Contains(f.Error, "held-out b") || !strings.Contains(f.Error, "synthetic failure") {
		t.Errorf("fold holding b: held-out score %v, error %q", f.HeldScore, f.Error)
	}
	if folds[0].Error != "" || folds[0].HeldScore == nil {
		t.Errorf("fold holding a: %+v", folds[0])
	}
}
