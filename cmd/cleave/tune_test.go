package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/tuning"
	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/imageio/render"
	"github.com/cleave-seg/cleave/imageio/scenes"
	"github.com/cleave-seg/cleave/segment/score"
	"github.com/cleave-seg/cleave/segment/tune"
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

// A small search, kept small for test time: 2 x 2 grid, 2 refinement
// steps, the faint search held off.
var smallTune = []string{"--classes", "2", "--background", "dark", "--superpixels", "300",
	"--sigma-i", "0.005,0.02", "--sigma-x", "6:12:2", "--max-ncut", "0.15", "--faint", "0", "--budget", "2", "--folds", "2"}

// readCSV reads a whole CSV file.
func readCSV(t *testing.T, path string) [][]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatalf("%s: %v", path, err)
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
	var fa, fb tuning.Report
	for _, x := range []struct {
		name string
		rep  *tuning.Report
	}{{"faster1", &fa}, {"faster2", &fb}} {
		raw, _ := os.ReadFile(filepath.Join(outs[x.name], "tune.json"))
		if err := json.Unmarshal(raw, x.rep); err != nil {
			t.Fatal(err)
		}
	}
	strip := func(ts []tuning.TiedSetting) string {
		var b strings.Builder
		for _, s := range ts {
			s.SecondsPerImage = nil
			j, _ := json.Marshal(s)
			b.Write(j)
		}
		return b.String()
	}
	if fa.TieBreak != "faster" || len(fa.Tied) < 2 || fa.CostPerImage == nil || strip(fa.Tied) != strip(fb.Tied) || fa.AutomaticKept != fb.AutomaticKept {
		t.Errorf("default tie-break: %q, %d tied settings, cost %v; ties differ between runs: %v", fa.TieBreak, len(fa.Tied), fa.CostPerImage, strip(fa.Tied) != strip(fb.Tied))
	} else if fa.AutomaticKept {
		// Every grid setting tied with the automatic ones: those are
		// kept, and no tied setting is marked chosen.
		for _, s := range fa.Tied {
			if s.Chosen {
				t.Errorf("automatic settings kept, yet tied setting %v marked chosen", s.Params)
			}
		}
		if fa.Baseline == nil || *fa.Baseline != fa.Score || fa.Best["sigma-i"] != "auto" || fa.Best["sigma-x"] != "auto" {
			t.Errorf("automatic settings kept: score %v, automatic %v, best %v", fa.Score, fa.Baseline, fa.Best)
		}
	} else {
		low := math.Inf(1)
		for _, s := range fa.Tied {
			low = math.Min(low, *s.CostPerImage)
		}
		if !fa.Tied[0].Chosen || *fa.Tied[0].CostPerImage > tune.CostMargin*low || *fa.CostPerImage != *fa.Tied[0].CostPerImage {
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
	var rep tuning.Report
	raw, _ := os.ReadFile(filepath.Join(outs["1"], "tune.json"))
	if err := json.Unmarshal(raw, &rep); err != nil {
		t.Fatal(err)
	}
	if rep.CVScore == nil || rep.CVFolds != 2 || len(rep.Folds) != 2 || rep.GridSize != 4 || rep.Evaluations != len(r1)-2 {
		t.Errorf("tune.json: %+v", rep)
	}
	if rep.Metric != score.MetricF1 || rep.TieBreak != "smoother" || rep.BestMetrics == nil || rep.BestMetrics.F1 != rep.Score || rep.SecondsPerImage == nil || len(rep.Tied) == 0 || rep.Widenings == nil {
		t.Errorf("tune.json: metric %q, best metrics %+v, score %v, seconds per image %v, timed ties %d, widenings %v",
			rep.Metric, rep.BestMetrics, rep.Score, rep.SecondsPerImage, len(rep.Tied), rep.Widenings)
	}
	// Find the best row in tune.csv: its per-image F1.
	var want float64 = math.NaN()
	for _, r := range r1[1:] {
		if rep.AutomaticKept && r[0] == "baseline" || !rep.AutomaticKept && r[0] != "baseline" && r[1] == rep.Best["sigma-i"] && r[2] == rep.Best["sigma-x"] && r[3] == rep.Best["max-ncut"] {
			want, _ = strconv.ParseFloat(r[7], 64) // f1 of the first image
		}
	}
	if math.IsNaN(want) || math.Abs(want-rep.Score) > 0.5 {
		t.Fatalf("best setting %v not found in tune.csv", rep.Best)
	}
	seg := filepath.Join(dir, "seg")
	runOK(t, "segment", "--params", filepath.Join(outs["1"], "best.json"), "--out", seg, filepath.Join(dir, sc[0].Name+".png"))
	lm, err := imageio.ReadLabels(filepath.Join(seg, sc[0].Name+".labels.png"))
	if err != nil {
		t.Fatal(err)
	}
	labels := lm.Pix
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
	if err != nil || cfg.Width != render.HeatmapWidth || cfg.Height != render.HeatmapHeight {
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
		d := tune.SigmaX
		if c.integer {
			d = tune.Radius
		}
		ax, err := parseSpec(d, c.spec)
		if err != nil {
			t.Errorf("%s: %v", c.spec, err)
			continue
		}
		if ax.Auto != c.auto || len(ax.Values) != len(c.want) {
			t.Errorf("%s: got %v auto %v, want %v", c.spec, ax.Values, ax.Auto, c.want)
			continue
		}
		for i := range c.want {
			if ax.Values[i] != c.want[i] {
				t.Errorf("%s: got %v, want %v", c.spec, ax.Values, c.want)
			}
		}
	}
	for _, bad := range []string{"1:2", "0:1:3", "-1", "a,b", "1:2:0", "1:2:x", "2.5", "65", "3,5,100", "1:1e9:3"} {
		if _, err := parseSpec(tune.Radius, bad); err == nil || !strings.Contains(err.Error(), "--radius") {
			t.Errorf("%q: error %v", bad, err)
		}
	}
	// Values outside a parameter's range (segment's ranges) are refused.
	for _, c := range []struct {
		d    tune.Param
		spec string
	}{{tune.SigmaI, "1e-9"}, {tune.SigmaI, "0.1,200"}, {tune.SigmaX, "1:1e7:3"}, {tune.MaxNcut, "0.1,3"}, {tune.Compactness, "20,1e5"}, {tune.Superpixels, "2000000"}} {
		if _, err := parseSpec(c.d, c.spec); err == nil || !strings.Contains(err.Error(), "outside the range") {
			t.Errorf("--%s %s: error %v, want one about the range", c.d, c.spec, err)
		}
	}
}

// --necks takes on, off or both; anything else is refused naming the flag.
func TestParseSpecNecks(t *testing.T) {
	for spec, want := range map[string][]float64{"on": {tune.On}, "off": {tune.Off}, "on,off": {tune.Off, tune.On}, " off , on ": {tune.Off, tune.On}} {
		ax, err := parseSpec(tune.Necks, spec)
		if err != nil || !slices.Equal(ax.Values, want) || ax.Refinable() {
			t.Errorf("%q: %+v, %v; want %v", spec, ax, err, want)
		}
	}
	for _, bad := range []string{"auto", "1", "on,maybe", "", "yes"} {
		if _, err := parseSpec(tune.Necks, bad); err == nil || !strings.Contains(err.Error(), "--necks") {
			t.Errorf("%q: error %v", bad, err)
		}
	}
}

// --necks on,off searches the shape split: tune.csv gains a necks column
// holding on and off, tune.json lists its grid as on/off (not refined),
// best.json names the chosen value as a params file gives it; without
// --necks, or with one value, there is no necks column and best.json
// holds the value given (default on).
func TestTuneNecks(t *testing.T) {
	dir := t.TempDir()
	writeNuclei(t, dir, 13150, 1, 112)
	fixed := []string{"--classes", "2", "--background", "dark", "--superpixels", "300", "--sigma-i", "0.02", "--sigma-x", "8",
		"--max-ncut", "0.15", "--faint", "0", "--budget", "0", "--folds", "0"}
	for _, c := range []struct {
		name   string
		necks  []string
		column bool
		best   []string // the values best.json may hold
	}{
		{"searched", []string{"--necks", "on,off"}, true, []string{"on", "off"}},
		{"default", nil, false, []string{"on"}},
		{"off", []string{"--necks", "off"}, false, []string{"off"}},
	} {
		out := filepath.Join(dir, "tuned-"+c.name)
		runOK(t, append(append([]string{"tune", "--images", dir, "--truth", dir, "--out", out}, fixed...), c.necks...)...)
		rows := readCSV(t, filepath.Join(out, "tune.csv"))
		col := slices.Index(rows[0], "necks")
		if (col >= 0) != c.column {
			t.Errorf("%s: tune.csv header %v", c.name, rows[0])
		}
		var rep tuning.Report
		var best map[string]any
		for name, v := range map[string]any{"tune.json": &rep, "best.json": &best} {
			raw, err := os.ReadFile(filepath.Join(out, name))
			if err != nil {
				t.Fatal(err)
			}
			if err := json.Unmarshal(raw, v); err != nil {
				t.Fatal(err)
			}
		}
		if !slices.Contains(c.best, fmt.Sprint(best["necks"])) {
			t.Errorf("%s: best.json necks %v, want one of %v", c.name, best["necks"], c.best)
		}
		if !c.column {
			if _, ok := rep.Space["necks"]; ok || rep.Best["necks"] != "" {
				t.Errorf("%s: tune.json names necks: %v, %v", c.name, rep.Space["necks"], rep.Best)
			}
			continue
		}
		var seen []string
		for _, r := range rows[1:] {
			seen = append(seen, r[col])
		}
		slices.Sort(seen)
		if !slices.Equal(slices.Compact(seen), []string{"off", "on"}) || len(rows) != 4 {
			t.Errorf("%s: necks column %v in %d rows, want baseline on, then off and on", c.name, seen, len(rows))
		}
		sp, _ := rep.Space["necks"].(map[string]any)
		if fmt.Sprint(sp["grid"]) != "[off on]" || sp["refined"] != false || rep.Best["necks"] != best["necks"] {
			t.Errorf("%s: tune.json search space %v, best %v; best.json %v", c.name, sp, rep.Best["necks"], best["necks"])
		}
	}
}

// The faint search's level: with --classes 2 and a dark background and
// no --faint, tune tries off and tuning.DefaultFaintLevel (a faint column
// in tune.csv holding both, beside the baseline's 0); --faint 0,6 tries
// those two; one value fixes it (no column, best.json holds it). Without
// --background the level is not searched (it needs objects), nor on a
// pixel graph (it scores superpixels).
func TestTuneFaint(t *testing.T) {
	dir := t.TempDir()
	writeNuclei(t, dir, 13151, 1, 112)
	fixed := []string{"--superpixels", "300", "--sigma-i", "0.02", "--sigma-x", "8", "--max-ncut", "0.15", "--budget", "0", "--folds", "0"}
	dark := []string{"--classes", "2", "--background", "dark"}
	def := strconv.Itoa(tuning.DefaultFaintLevel)
	for _, c := range []struct {
		name  string
		flags []string
		grid  []string // the faint column's values after the baseline; nil: no column
		best  []string // the values best.json may hold
	}{
		{"default", dark, []string{"0", def}, []string{"0", def}},
		{"listed", append(slices.Clone(dark), "--faint", "0,6"), []string{"0", "6"}, []string{"0", "6"}},
		{"fixed", append(slices.Clone(dark), "--faint", "5"), nil, []string{"5"}},
		{"no background", nil, nil, []string{"0"}},
		{"pixel graph", append(slices.Clone(dark), "--superpixels", "0"), nil, []string{"0"}},
	} {
		out := filepath.Join(dir, "tuned-"+strings.ReplaceAll(c.name, " ", "-"))
		runOK(t, append(append([]string{"tune", "--images", dir, "--truth", dir, "--out", out}, fixed...), c.flags...)...)
		rows := readCSV(t, filepath.Join(out, "tune.csv"))
		col := slices.Index(rows[0], "faint")
		if (col >= 0) != (c.grid != nil) {
			t.Errorf("%s: tune.csv header %v", c.name, rows[0])
		}
		raw, err := os.ReadFile(filepath.Join(out, "best.json"))
		if err != nil {
			t.Fatal(err)
		}
		var best map[string]any
		if err := json.Unmarshal(raw, &best); err != nil {
			t.Fatal(err)
		}
		if !slices.Contains(c.best, fmt.Sprint(best["faint"])) {
			t.Errorf("%s: best.json faint %v, want one of %v", c.name, best["faint"], c.best)
		}
		if col < 0 {
			continue
		}
		var seen []string
		for _, r := range rows[2:] { // after the baseline row
			seen = append(seen, r[col])
		}
		slices.Sort(seen)
		if got := slices.Compact(seen); !slices.Equal(got, c.grid) || rows[1][col] != "0" {
			t.Errorf("%s: faint column baseline %q then %v, want 0 then %v", c.name, rows[1][col], got, c.grid)
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
		var rep tuning.Report
		raw, _ := os.ReadFile(filepath.Join(out, "tune.json"))
		if err := json.Unmarshal(raw, &rep); err != nil {
			t.Fatal(err)
		}
		if math.Abs(c.sign*rep.Score-extreme) > 1e-9+tune.TieRelative*math.Abs(extreme) || rep.Metric.String() != c.metric || rep.MetricChoice != "--metric" {
			t.Errorf("--metric %s: tune.json metric %q (%s), score %v, best row of tune.csv %v", c.metric, rep.Metric, rep.MetricChoice, rep.Score, c.sign*extreme)
		}
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
		if err != nil || got.String() != c.want || !strings.HasPrefix(why, c.why) {
			t.Errorf("--metric %q --background %q: %q (%s) %v; want %q (%s...)", c.given, c.background, got, why, err, c.want, c.why)
		}
	}
}
