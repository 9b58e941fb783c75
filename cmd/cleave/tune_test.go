package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/examples/scenes"
	"github.com/cleave-seg/cleave/imageio"
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
// on a tuning image gives the label map whose ARI (Hubert and Arabie 1985,
// score.ARI, itself checked against scikit-learn) tune recorded for the
// best setting, exactly. And the search does not depend on --workers:
// best.json and tune.csv (but for the seconds column) are the same bytes.
func TestTuneReproducesAndIsDeterministic(t *testing.T) {
	dir := t.TempDir()
	sc := writeNuclei(t, dir, 7100, 2, 112)
	outs := map[string]string{}
	for _, w := range []string{"1", "2"} {
		out := filepath.Join(dir, "tuned"+w)
		stdout := runOK(t, append([]string{"tune", "--images", dir, "--truth", dir, "--out", out, "--workers", w}, smallTune...)...)
		if !strings.Contains(stdout, "cross-validated:     held-out ari") || !strings.Contains(stdout, "best.json") {
			t.Errorf("summary:\n%s", stdout)
		}
		outs[w] = out
	}
	b1, _ := os.ReadFile(filepath.Join(outs["1"], "best.json"))
	b2, _ := os.ReadFile(filepath.Join(outs["2"], "best.json"))
	if !bytes.Equal(b1, b2) || len(b1) == 0 {
		t.Errorf("best.json differs with --workers 1 and 2:\n%s\n%s", b1, b2)
	}
	r1, r2 := readCSV(t, filepath.Join(outs["1"], "tune.csv")), readCSV(t, filepath.Join(outs["2"], "tune.csv"))
	secCol := len(r1[0]) - 2
	if r1[0][secCol] != "seconds" || len(r1) != len(r2) {
		t.Fatalf("csv header %v, %d vs %d rows", r1[0], len(r1), len(r2))
	}
	for i := range r1 {
		r1[i][secCol], r2[i][secCol] = "", ""
		if strings.Join(r1[i], ",") != strings.Join(r2[i], ",") {
			t.Errorf("tune.csv row %d differs: %v vs %v", i, r1[i], r2[i])
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
	// Find the best row in tune.csv: its per-image ARI.
	var want float64 = math.NaN()
	for _, r := range r1[1:] {
		if r[0] != "baseline" && r[1] == rep.Best["sigma-i"] && r[2] == rep.Best["sigma-x"] && r[3] == rep.Best["max-ncut"] {
			want, _ = strconv.ParseFloat(r[7], 64) // ari of the first image
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
	if got := score.ARI(labels, sc[0].Truth); math.Abs(got-want) > 1e-9 {
		t.Errorf("segment --params best.json: ARI %.12g, tune recorded %.12g", got, want)
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
		d, err := parseSpec("x", c.spec, c.integer, true, false)
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
	for _, bad := range []string{"1:2", "0:1:3", "-1", "a,b", "1:2:0", "1:2:x", "2.5"} {
		if _, err := parseSpec("radius", bad, true, false, false); err == nil || !strings.Contains(err.Error(), "--radius") {
			t.Errorf("%q: error %v", bad, err)
		}
	}
}

// The chosen setting is the best row of tune.csv for the metric: the
// largest mean ARI, or the smallest mean VI (--metric vi is minimized).
func TestTuneChoosesBestRow(t *testing.T) {
	dir := t.TempDir()
	writeNuclei(t, dir, 7300, 2, 112)
	for _, c := range []struct {
		metric string
		col    string
		sign   float64
	}{{"ari", "mean_ari", 1}, {"vi", "mean_vi", -1}} {
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
		if math.Abs(c.sign*rep.Score-extreme) > 1e-9 {
			t.Errorf("--metric %s: score %v, best row of tune.csv %v", c.metric, rep.Score, c.sign*extreme)
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
		{"metric", []string{"tune", "--images", dir, "--truth", dir, "--out", out, "--metric", "speed"}, exitUsage, "--metric"},
		{"spec", []string{"tune", "--images", dir, "--truth", dir, "--out", out, "--sigma-x", "1:2"}, exitUsage, "--sigma-x"},
		{"fixed_param", []string{"tune", "--images", dir, "--truth", dir, "--out", out, "--background", "grey", "--classes", "2"}, exitUsage, "background"},
		{"no_pairs", []string{"tune", "--images", lone, "--truth", lone, "--out", out}, exitFail, "no image"},
		{"size", []string{"tune", "--images", mism, "--truth", mism, "--out", out}, exitFail, "a_mask.png is 30x40"},
		{"exists", []string{"tune", "--images", dir, "--truth", dir, "--out", done}, exitFail, "already exists"},
		{"missing_folder", []string{"tune", "--images", filepath.Join(dir, "nope"), "--truth", dir, "--out", out}, exitFail, "nope"},
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
