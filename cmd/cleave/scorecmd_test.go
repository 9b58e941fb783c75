package main

import (
	"bytes"
	"context"
	"encoding/json"
	"image"
	"image/color"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/scoring"
	"github.com/cleave-seg/cleave/segment/score"
)

type cliReference struct {
	Name string  `json:"name"`
	ARI  float64 `json:"ari"`
	Rand float64 `json:"rand"`
	VI   float64 `json:"vi"`
}

// loadCLIReference reads testdata/score/cli/reference.json, written by
// testdata/score/make_cli_reference.py with Debian's python3-sklearn 1.2.1
// from the label images it committed beside it.
func loadCLIReference(t *testing.T) (dir string, cases []cliReference) {
	t.Helper()
	dir = filepath.Join("..", "..", "testdata", "score", "cli")
	raw, err := os.ReadFile(filepath.Join(dir, "reference.json"))
	if err != nil {
		t.Fatal(err)
	}
	var doc struct {
		Cases []cliReference `json:"cases"`
	}
	if err := json.Unmarshal(raw, &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.Cases) != 3 {
		t.Fatalf("reference.json holds %d cases, want 3", len(doc.Cases))
	}
	return dir, doc.Cases
}

func runOK(t *testing.T, args ...string) string {
	t.Helper()
	var out, errb bytes.Buffer
	if code := run(context.Background(), args, &out, &errb); code != exitOK {
		t.Fatalf("%v: exit %d: %s", args, code, errb.String())
	}
	return out.String()
}

// Reference: sklearn.metrics.adjusted_rand_score and rand_score, and VI =
// H(a) + H(b) - 2 I(a;b) (Meila 2007) from sklearn's entropy and
// mutual_info_score, on the same committed label images (reference.json).
func TestScoreAgainstScikitLearn(t *testing.T) {
	dir, cases := loadCLIReference(t)
	const tol = 1e-9
	var meanARI float64
	for _, c := range cases {
		out := runOK(t, "score", "--json", filepath.Join(dir, "pred", c.Name+".png"), filepath.Join(dir, "truth", c.Name+"_mask.png"))
		var all map[string]json.RawMessage
		if err := json.Unmarshal([]byte(out), &all); err != nil {
			t.Fatalf("%s: %v in %s", c.Name, err, out)
		}
		// blocks' truth is a 0/255 checkerboard mask: read as a binary
		// mask, its 8-connected components are one object (every square
		// touches the next at a corner), so the reference, computed on the
		// mask as 0/1, applies unchanged, and the output says how it was
		// read.
		if c.Name == "blocks" {
			var tm scoring.Reading
			if err := json.Unmarshal(all["truth_map"], &tm); err != nil || tm.Kind != scoring.KindMaskComponents || tm.Objects != 1 {
				t.Errorf("blocks: truth_map %s; want mask-components, 1 object", all["truth_map"])
			}
			delete(all, "truth_map")
		}
		got := map[string]float64{}
		for k, v := range all {
			var x float64
			if err := json.Unmarshal(v, &x); err != nil {
				t.Fatalf("%s: key %s: %v", c.Name, k, err)
			}
			got[k] = x
		}
		if len(got) != len(score.Metrics()) {
			t.Errorf("%s: %d keys, want %d (%v)", c.Name, len(got), len(score.Metrics()), score.Metrics())
		}
		if math.Abs(got["ari"]-c.ARI) > tol || math.Abs(got["rand"]-c.Rand) > tol || math.Abs(got["vi"]-c.VI) > tol {
			t.Errorf("%s: ari %.17g rand %.17g vi %.17g; sklearn %.17g %.17g %.17g", c.Name, got["ari"], got["rand"], got["vi"], c.ARI, c.Rand, c.VI)
		}
		meanARI += c.ARI / float64(len(cases))
	}
	// The folder form pairs pred/NAME.png with truth/NAME_mask.png; its mean
	// is the mean of the same sklearn values.
	out := runOK(t, "score", "--json", filepath.Join(dir, "pred"), filepath.Join(dir, "truth"))
	var doc struct {
		Pairs []map[string]any   `json:"pairs"`
		Mean  map[string]float64 `json:"mean"`
	}
	if err := json.Unmarshal([]byte(out), &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.Pairs) != 3 || math.Abs(doc.Mean["ari"]-meanARI) > tol {
		t.Errorf("folders: %d pairs, mean ari %.17g; want 3, %.17g", len(doc.Pairs), doc.Mean["ari"], meanARI)
	}
}

// Identities (Hubert and Arabie 1985; Meila 2007; Arbelaez et al. 2011; the
// boundary F definition): a map against itself scores ARI 1, VI 0,
// covering 1, boundary F 1, Dice 1 and object F1 1.
func TestScoreIdentityAndCSV(t *testing.T) {
	dir, _ := loadCLIReference(t)
	p := filepath.Join(dir, "pred", "discs.png")
	out := runOK(t, "score", "--json", p, p)
	var got map[string]float64
	if err := json.Unmarshal([]byte(out), &got); err != nil {
		t.Fatal(err)
	}
	for k, want := range map[string]float64{"ari": 1, "vi": 0, "covering": 1, "bf": 1, "dice": 1, "f1": 1, "map": 1, "rand": 1} {
		if math.Abs(got[k]-want) > 1e-12 {
			t.Errorf("%s = %v, want %v", k, got[k], want)
		}
	}
	csvPath := filepath.Join(t.TempDir(), "s.csv")
	table := runOK(t, "score", "--csv", csvPath, filepath.Join(dir, "pred"), filepath.Join(dir, "truth"))
	if !strings.Contains(table, "mean of 3") || !strings.Contains(table, "discs") {
		t.Errorf("table lacks rows:\n%s", table)
	}
	rows := readCSV(t, csvPath)
	if len(rows) != 5 || rows[0][3] != "ari" || rows[4][0] != "mean" {
		t.Errorf("csv rows %v", rows)
	}
}

// writeLabelPNG writes an 8-bit gray label image whose rows are given as
// strings of digits (label per pixel).
func writeLabelPNG(t *testing.T, path string, rows ...string) {
	t.Helper()
	img := image.NewGray(image.Rect(0, 0, len(rows[0]), len(rows)))
	for y, r := range rows {
		for x, c := range r {
			img.SetGray(x, y, color.Gray{uint8(c - '0')})
		}
	}
	var buf bytes.Buffer
	if err := png.Encode(&buf, img); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}

// mAP(0.5:0.95) worked by hand on a 10 x 3 pair (Caicedo et al. 2019:
// AP(t) = TP/(TP+FP+FN), a match needing IoU > t). Truth: object 1 is
// row 0, x 0-7 (8 px); object 2 is row 1, x 0-3. Prediction: object 1
// shifted one pixel right (x 1-8: intersection 7, union 9, IoU 0.778),
// object 2 exact (IoU 1), and a false object in row 2. At t = 0.50 ...
// 0.75 (6 levels) TP 2, FP 1, FN 0: AP 2/3; at t = 0.80 ... 0.95 (4
// levels) TP 1, FP 2, FN 1: AP 1/4; mAP = (6 x 2/3 + 4 x 1/4)/10 = 0.5.
// Object F1 at IoU > 0.5: precision 2/3, recall 1, F1 0.8. A folder of
// this pair and an exact one (mAP 1) has mean mAP 0.75.
func TestScoreMeanAPHandWorked(t *testing.T) {
	dir := t.TempDir()
	preds, truths := filepath.Join(dir, "pred"), filepath.Join(dir, "truth")
	for _, d := range []string{preds, truths} {
		if err := os.Mkdir(d, 0o755); err != nil {
			t.Fatal(err)
		}
	}
	writeLabelPNG(t, filepath.Join(truths, "a.png"), "1111111100", "2222000000", "0000000000")
	writeLabelPNG(t, filepath.Join(preds, "a.labels.png"), "0111111110", "2222000000", "0000003333")
	writeLabelPNG(t, filepath.Join(truths, "b.png"), "0011000000", "0011000220", "0000000220")
	writeLabelPNG(t, filepath.Join(preds, "b.labels.png"), "0055000000", "0055000770", "0000000770")
	pa, ta := filepath.Join(preds, "a.labels.png"), filepath.Join(truths, "a.png")

	var got map[string]float64
	if err := json.Unmarshal([]byte(runOK(t, "score", "--json", pa, ta)), &got); err != nil {
		t.Fatal(err)
	}
	if math.Abs(got["map"]-0.5) > 1e-12 || math.Abs(got["f1"]-0.8) > 1e-12 {
		t.Errorf("map %v, f1 %v; worked by hand 0.5 and 0.8", got["map"], got["f1"])
	}
	// The readable output lists map beside f1.
	text := runOK(t, "score", pa, ta)
	if !regexp.MustCompile(`(?m)^\s*map\s+0\.5000\s*$`).MatchString(text) {
		t.Errorf("text output lacks the map line:\n%s", text)
	}

	var doc struct {
		Pairs []map[string]any   `json:"pairs"`
		Mean  map[string]float64 `json:"mean"`
	}
	if err := json.Unmarshal([]byte(runOK(t, "score", "--json", preds, truths)), &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.Pairs) != 2 || doc.Pairs[0]["map"] != 0.5 || doc.Pairs[1]["map"] != 1.0 || math.Abs(doc.Mean["map"]-0.75) > 1e-12 {
		t.Errorf("folders: pairs %v, mean map %v; want 0.5, 1 and mean 0.75", doc.Pairs, doc.Mean["map"])
	}
	csvPath := filepath.Join(dir, "s.csv")
	table := runOK(t, "score", "--csv", csvPath, preds, truths)
	lines := strings.Split(table, "\n")
	head, mean := strings.Fields(lines[0]), strings.Fields(lines[3])
	col := slices.Index(head, "map")
	if col < 0 || slices.Index(head, "f1") < 0 || len(mean) != len(head)+2 || mean[col+2] != "0.7500" {
		t.Errorf("folder table lacks the map column or its mean 0.7500:\n%s", table)
	}
	rows := readCSV(t, csvPath)
	mc := slices.Index(rows[0], "map")
	if mc < 0 || len(rows) != 4 || rows[1][mc] != "0.5" || rows[3][0] != "mean" || rows[3][mc] != "0.75" {
		t.Errorf("csv rows %v", rows)
	}
}

func writeGrayPNG(t *testing.T, path string, w, h int, colour bool) {
	t.Helper()
	var img image.Image
	if colour {
		m := image.NewNRGBA(image.Rect(0, 0, w, h))
		m.Set(1, 1, color.NRGBA{200, 10, 10, 255})
		img = m
	} else {
		img = image.NewGray(image.Rect(0, 0, w, h))
	}
	var buf bytes.Buffer
	if err := png.Encode(&buf, img); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}

// Bad input: clear errors with exit 1 for bad files, 2 for wrong usage.
func TestScoreErrors(t *testing.T) {
	dir := t.TempDir()
	a := filepath.Join(dir, "a.png")
	b := filepath.Join(dir, "b.png")
	col := filepath.Join(dir, "c.png")
	writeGrayPNG(t, a, 8, 6, false)
	writeGrayPNG(t, b, 6, 8, false)
	writeGrayPNG(t, col, 8, 6, true)
	empty := filepath.Join(dir, "empty")
	preds := filepath.Join(dir, "preds")
	truths := filepath.Join(dir, "truths")
	for _, d := range []string{empty, preds, truths} {
		if err := os.Mkdir(d, 0o755); err != nil {
			t.Fatal(err)
		}
	}
	writeGrayPNG(t, filepath.Join(preds, "x.labels.png"), 8, 6, false)
	writeGrayPNG(t, filepath.Join(preds, "x.overlay.png"), 8, 6, true)
	writeGrayPNG(t, filepath.Join(preds, "y.labels.png"), 8, 6, false)
	writeGrayPNG(t, filepath.Join(truths, "x_truth.png"), 8, 6, false)
	for _, c := range []struct {
		name string
		args []string
		code int
		want string
	}{
		{"size", []string{"score", a, b}, exitFail, "same size"},
		{"colour", []string{"score", col, a}, exitFail, "colour"},
		{"missing", []string{"score", filepath.Join(dir, "nope.png"), a}, exitFail, "nope.png"},
		{"empty_folder", []string{"score", empty, truths}, exitFail, "no image files"},
		{"unpaired", []string{"score", preds, truths}, exitFail, "y.labels.png"},
		{"unpaired_names_flag", []string{"score", preds, truths}, exitFail, "--paired-only"},
		{"one_arg", []string{"score", a}, exitUsage, "PRED and TRUTH"},
		{"file_and_folder", []string{"score", a, truths}, exitUsage, "two files or two folders"},
		{"tolerance", []string{"score", "--tolerance", "-1", a, a}, exitUsage, "--tolerance"},
	} {
		var out, errb bytes.Buffer
		code := run(context.Background(), c.args, &out, &errb)
		if code != c.code || !strings.Contains(errb.String(), c.want) {
			t.Errorf("%s: exit %d, stderr %q; want exit %d mentioning %q", c.name, code, errb.String(), c.code, c.want)
		}
	}
}

// --paired-only scores the pairs of two folders and names each unpaired
// file (on either side) on stderr; with no pair at all it still fails.
func TestScorePairedOnly(t *testing.T) {
	dir := t.TempDir()
	preds, truths := filepath.Join(dir, "preds"), filepath.Join(dir, "truths")
	for _, d := range []string{preds, truths} {
		if err := os.Mkdir(d, 0o755); err != nil {
			t.Fatal(err)
		}
	}
	writeGrayPNG(t, filepath.Join(preds, "x.labels.png"), 8, 6, false)
	writeGrayPNG(t, filepath.Join(preds, "y.labels.png"), 8, 6, false)
	writeGrayPNG(t, filepath.Join(truths, "x_truth.png"), 8, 6, false)
	writeGrayPNG(t, filepath.Join(truths, "z.truth.png"), 8, 6, false)

	code, stdout, stderr := runCleave("score", "--paired-only", "--json", preds, truths)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	var got struct {
		Pairs []struct {
			Name string `json:"name"`
		} `json:"pairs"`
	}
	if err := json.Unmarshal([]byte(stdout), &got); err != nil {
		t.Fatalf("%v: %s", err, stdout)
	}
	if len(got.Pairs) != 1 || got.Pairs[0].Name != "x" {
		t.Errorf("pairs %+v; want x alone", got.Pairs)
	}
	for _, f := range []string{filepath.Join(preds, "y.labels.png"), filepath.Join(truths, "z.truth.png")} {
		if !strings.Contains(stderr, "not scored: "+f) {
			t.Errorf("stderr does not name %s:\n%s", f, stderr)
		}
	}
	if strings.Contains(stderr, "x.labels.png") || strings.Contains(stderr, "x_truth.png") {
		t.Errorf("stderr names a paired file:\n%s", stderr)
	}

	if err := os.Remove(filepath.Join(truths, "x_truth.png")); err != nil {
		t.Fatal(err)
	}
	if code, _, stderr := runCleave("score", "--paired-only", preds, truths); code != exitFail || !strings.Contains(stderr, "pairs with a truth") {
		t.Errorf("no pair: exit %d, %s", code, stderr)
	}
}

// --tolerance is at most the diagonal of the label maps: 20 x 20 has
// diagonal 28.3, so 28 is scored (and, as no two pixel centres lie more
// than 26.9 apart, every boundary pixel is matched: bp = br = bf = 1),
// while 29 and 1e308 are usage errors naming the file (exit 2).
func TestScoreToleranceBounds(t *testing.T) {
	dir := t.TempDir()
	pred, truth := filepath.Join(dir, "p.png"), filepath.Join(dir, "t.png")
	rows := make([]string, 20)
	for y := range rows {
		rows[y] = strings.Repeat("1", 20)
	}
	rows[0] = "2" + rows[0][1:]
	writeLabelPNG(t, pred, rows...)
	rows[0] = rows[0][:19] + "3"
	rows[19] = "4" + rows[19][1:]
	writeLabelPNG(t, truth, rows...)
	var m score.Report
	if err := json.Unmarshal([]byte(runOK(t, "score", "--json", "--tolerance", "28", pred, truth)), &m); err != nil {
		t.Fatal(err)
	}
	if m.BP != 1 || m.BR != 1 || m.BF != 1 {
		t.Errorf("tolerance 28: bp %v br %v bf %v, want 1, 1, 1", m.BP, m.BR, m.BF)
	}
	for _, tol := range []string{"29", "1e5", "1e308"} {
		code, _, stderr := runCleave("score", "--tolerance", tol, pred, truth)
		if code != exitUsage || !strings.Contains(stderr, "--tolerance") || !strings.Contains(stderr, pred) || !strings.Contains(stderr, "diagonal") {
			t.Errorf("--tolerance %s: exit %d, stderr %q; want exit 2 naming --tolerance, %s and the diagonal", tol, code, stderr, pred)
		}
	}
}

// The Metrics section of score's help describes every metric of
// segment/score by name, so that a metric added there is documented here.
func TestScoreHelpNamesEveryMetric(t *testing.T) {
	out := runOK(t, "score", "--help")
	start := strings.Index(out, "Metrics (natural log for VI):")
	end := strings.Index(out, "Example (")
	if start < 0 || end < start {
		t.Fatalf("score help has no Metrics section before the example:\n%s", out)
	}
	// The names are the first column: lines indented by at most 4 spaces,
	// up to the first gap of two spaces.
	named := map[string]bool{}
	for _, line := range strings.Split(out[start:end], "\n")[1:] {
		body := strings.TrimLeft(line, " ")
		if body == "" || len(line)-len(body) > 4 {
			continue
		}
		col, _, _ := strings.Cut(body, "  ")
		for _, n := range strings.Split(col, ",") {
			if n = strings.TrimSpace(n); n != "" {
				named[n] = true
			}
		}
	}
	for _, m := range score.Metrics() {
		if !named[m.String()] {
			t.Errorf("score help's Metrics section does not name %q (names there: %v)", m, named)
		}
	}
}
