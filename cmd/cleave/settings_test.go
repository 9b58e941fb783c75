package main

import (
	"bytes"
	"context"
	"errors"
	"image"
	"image/color"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
)

func TestParamsFile(t *testing.T) {
	cases := []struct {
		name, json string
		args       []string
		wantErr    string
		check      func(t *testing.T, s *settings)
	}{
		{name: "values", json: `{"radius": 7, "sigma-i": 0.08, "method": "kway", "classes": 2, "background": "dark"}`,
			check: func(t *testing.T, s *settings) {
				if s.Radius != 7 || s.SigmaI != "0.08" || s.Method != "kway" || s.Classes != 2 || s.Background != "dark" {
					t.Errorf("got %+v", s)
				}
			}},
		{name: "command line wins", json: `{"radius": 7, "max-ncut": 0.3}`, args: []string{"--radius", "3"},
			check: func(t *testing.T, s *settings) {
				if s.Radius != 3 || s.MaxNcut != 0.3 {
					t.Errorf("radius %d max-ncut %v, want 3 and 0.3", s.Radius, s.MaxNcut)
				}
			}},
		{name: "auto", json: `{"sigma-x": "auto", "superpixels": 300}`,
			check: func(t *testing.T, s *settings) {
				if s.SigmaX != "auto" || s.Superpixels != "300" {
					t.Errorf("got %+v", s)
				}
			}},
		{name: "unknown key", json: `{"radius": 5, "sigma": 0.1}`, wantErr: `unknown parameter "sigma"`},
		{name: "wrong type number", json: `{"radius": "five"}`, wantErr: "radius must be a number"},
		{name: "wrong type string", json: `{"method": 2}`, wantErr: "method must be a string"},
		{name: "fraction for int", json: `{"radius": 2.5}`, wantErr: "radius"},
		{name: "bool", json: `{"classes": true}`, wantErr: "wrong type"},
		{name: "not an object", json: `[1, 2]`, wantErr: "not a JSON object"},
		{name: "trailing", json: `{"radius": 5} {}`, wantErr: "unexpected data"},
		{name: "out is not a parameter", json: `{"out": "x"}`, wantErr: `unknown parameter "out"`},
		{name: "duplicate key", json: `{"radius": 3, "sigma-i": 0.1, "radius": 7}`, wantErr: `parameter "radius" is given twice`},
		{name: "byte-order mark", json: "\ufeff{\"radius\": 4, \"classes\": 3}",
			check: func(t *testing.T, s *settings) {
				if s.Radius != 4 || s.Classes != 3 {
					t.Errorf("radius %d classes %d, want 4 and 3", s.Radius, s.Classes)
				}
			}},
		{name: "mark inside", json: "{\"radius\": 4}\ufeff", wantErr: "unexpected data"},
		{name: "null", json: `null`, wantErr: "not a JSON object"},
		{name: "unterminated", json: `{"radius": 4`, wantErr: "not a JSON object"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			path := filepath.Join(t.TempDir(), "p.json")
			if err := os.WriteFile(path, []byte(c.json), 0o644); err != nil {
				t.Fatal(err)
			}
			_, s, _, err := parseSegment(append([]string{"--params", path}, append(c.args, "x.png")...), nil)
			if c.wantErr != "" {
				if err == nil || !strings.Contains(err.Error(), c.wantErr) || !strings.Contains(err.Error(), path) {
					t.Fatalf("error %v, want one naming %s and containing %q", err, path, c.wantErr)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			c.check(t, s)
		})
	}
}

func TestResolveErrors(t *testing.T) {
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--sigma-i", "0"}, "sigma-i"},
		{[]string{"--sigma-i", "-0.1"}, "sigma-i"},
		{[]string{"--sigma-i", "NaN"}, "sigma-i"},
		{[]string{"--sigma-x", "wide"}, "sigma-x"},
		{[]string{"--radius", "0"}, "radius"},
		{[]string{"--superpixels", "-3"}, "superpixels"},
		{[]string{"--superpixels", "2.5"}, "superpixels"},
		{[]string{"--max-memory", "lots"}, "max-memory"},
		{[]string{"--normalize", "zscore"}, "normalize"},
		{[]string{"--background", "dark"}, "background"},
		{[]string{"--classes", "1"}, "classes"},
		{[]string{"--pixel-size", "-1"}, "pixel-size"},
		{[]string{"--grain", "yes"}, "grain"},
		// Ranges (see segment.MaxRadius and the rest).
		{[]string{"--sigma-i", "1e-300"}, "--sigma-i"},
		{[]string{"--sigma-i", "1e308"}, "--sigma-i"},
		{[]string{"--sigma-x", "1e9"}, "--sigma-x"},
		{[]string{"--radius", "65"}, "--radius"},
		{[]string{"--radius", "2147483647"}, "--radius"},
		{[]string{"--superpixels", "1000001"}, "--superpixels"},
		{[]string{"--compactness", "1e5"}, "--compactness"},
		{[]string{"--max-ncut", "2.5"}, "--max-ncut"},
		{[]string{"--classes", "65"}, "--classes"},
		{[]string{"--classes", "2147483648"}, "--classes"},
		{[]string{"--method", "kway", "--segments", "65"}, "--segments"},
		{[]string{"--method", "kway", "--segments", "200"}, "--segments"},
		{[]string{"--segments", "1000001"}, "--segments"},
		{[]string{"--segments", "-1"}, "--segments"},
		{[]string{"--method", "kway", "--max-segments", "100"}, "--max-segments"},
		{[]string{"--max-segments", "-2"}, "--max-segments"},
		{[]string{"--min-area", "3000000000"}, "--min-area"},
		{[]string{"--min-area", "-1"}, "--min-area"},
		{[]string{"--max-megapixels", "0"}, "--max-megapixels"},
		{[]string{"--max-megapixels", "1e-7"}, "--max-megapixels"},
		{[]string{"--max-megapixels", "2001"}, "--max-megapixels"},
		{[]string{"--flatten", "1e308"}, "--flatten"},
		{[]string{"--flatten", "1e9"}, "--flatten"},
		{[]string{"--flatten", "-1"}, "flatten"},
		{[]string{"--flatten", "NaN"}, "flatten"},
		{[]string{"--flatten-radii", "-1"}, "--flatten-radii"},
		{[]string{"--flatten-radii", "NaN"}, "--flatten-radii"},
		{[]string{"--flatten-radii", "101"}, "--flatten-radii"},
		{[]string{"--flatten-radii", "3", "--flatten", "30"}, "--flatten-radii"},
		{[]string{"--max-memory", "0.5"}, "--max-memory"},
		{[]string{"--max-memory", "1000"}, "--max-memory"},
		{[]string{"--pixel-size", "1e-12"}, "--pixel-size"},
		{[]string{"--pixel-size", "1e300"}, "--pixel-size"},
		{[]string{"--workers", "100000"}, "--workers"},
	} {
		_, s, c2, err := parseSegment(append(c.args, "x.png"), nil)
		if err == nil {
			_, err = resolve(*s, c2.workers)
		}
		var u *usageError
		if err == nil || !errors.As(err, &u) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%v: error %v, want a usage error naming %s", c.args, err, c.want)
		}
	}
}

func TestUsageExitCodes(t *testing.T) {
	for _, c := range []struct {
		args []string
		code int
		want string
	}{
		{[]string{}, exitUsage, "Usage"},
		{[]string{"frobnicate"}, exitUsage, "unknown command"},
		{[]string{"segment"}, exitUsage, "no image"},
		{[]string{"segment", "--sigma", "3", "a.png"}, exitUsage, "unknown flag"},
		{[]string{"segment", "--radius", "x", "a.png"}, exitUsage, "radius"},
		{[]string{"segment", "a.png", "b/a.png"}, exitUsage, "same outputs"},
		{[]string{"segment", "--out", t.TempDir(), "missing-file.png"}, exitFail, "missing-file.png"},
	} {
		var out, errb bytes.Buffer
		code := run(context.Background(), c.args, &out, &errb)
		if code != c.code || !strings.Contains(out.String()+errb.String(), c.want) {
			t.Errorf("%v: exit %d, stderr %q; want exit %d mentioning %q", c.args, code, errb.String(), c.code, c.want)
		}
	}
}

func TestHelpHasExampleAndCaution(t *testing.T) {
	for _, args := range [][]string{{"help", "segment"}, {"segment", "--help"}} {
		var out, errb bytes.Buffer
		if code := run(context.Background(), args, &out, &errb); code != exitOK {
			t.Fatalf("%v: exit %d", args, code)
		}
		for _, want := range []string{"Example", "cleave segment --classes 2", "--sigma-i", "not validated for clinical"} {
			if !strings.Contains(out.String(), want) {
				t.Errorf("%v: help lacks %q", args, want)
			}
		}
	}
}

// FuzzParamsFile: any bytes as a params file give a result or an error,
// never a panic, from parsing through segmenting an image.
func FuzzParamsFile(f *testing.F) {
	for _, s := range []string{`{"radius": 5}`, `{"sigma-i": "auto", "superpixels": 0}`, `{"seed": 18446744073709551615}`, `{"max-ncut": 1e400}`, `{}`, `null`, `{"classes": -1}`,
		// The values that once panicked or ran without bound.
		`{"flatten": 1e308}`, `{"flatten": 1e9}`, `{"classes": 2147483648}`, `{"method": "kway", "segments": 200}`, `{"max-memory": "0.5"}`,
		`{"radius": 9223372036854775807}`, `{"superpixels": "1e300"}`, `{"sigma-i": 1e-320, "sigma-x": "1e308"}`, `{"min-area": 1e18}`,
		`{"max-megapixels": 1e308}`, `{"pixel-size": 1e-320}`, `{"max-segments": 100000, "method": "kway"}`, `{"compactness": 1e300}`,
		`{"unit": "=1+1", "pixel-size": 1}`, `{"channel": 9223372036854775807}`, "\ufeff{\"radius\": 3}", `{"radius": 3, "radius": 4}`,
		`{"labels-format": "tiff", "pixel-size": 0.5, "unit": "µm"}`, `{"labels-format": "gif"}`, `{"labels-format": 16}`} {
		f.Add([]byte(s))
	}
	// Every accepted setting segments a small image (24 x 20, a ramp
	// with a bright disc) without a panic, and its refusals are errors:
	// the ranges hold for whatever value passes resolve.
	dir := f.TempDir()
	img := filepath.Join(dir, "fuzz.png")
	writeTestPNG(f, img, 24, 20)
	f.Fuzz(func(t *testing.T, data []byte) {
		fs, s, c := segmentFlags()
		if err := applyParams(fs, "fuzz.json", data); err != nil {
			return
		}
		r, err := resolve(*s, min(c.workers, 2))
		if err != nil {
			return
		}
		// Keep each run small: the fuzzed values, not the image, are
		// under test.
		r.Params.MaxMemory = min(r.Params.MaxMemory, 64<<20)
		in, err := pipeline.Load(context.Background(), img, r)
		if err != nil {
			return
		}
		_, _ = pipeline.Segment(context.Background(), in, r.Params)
	})
}

// --save-graph writes the solved W in Matrix Market form that reads back to
// a graph with one node per pixel (a 40x30 image under the pixel graph).
func TestSaveGraph(t *testing.T) {
	dir := t.TempDir()
	img := filepath.Join(dir, "ramp.png")
	writeTestPNG(t, img, 40, 30)
	mtx := filepath.Join(dir, "w.mtx")
	var out, errb bytes.Buffer
	if code := run(context.Background(), []string{"segment", "--out", dir, "--save-graph", mtx, img}, &out, &errb); code != exitOK {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	f, err := os.Open(mtx)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	g, err := affinity.ReadMatrixMarket(f)
	if err != nil {
		t.Fatal(err)
	}
	if g.N != 40*30 || g.NNZ() == 0 {
		t.Errorf("graph of %d nodes, %d entries; want 1200 nodes", g.N, g.NNZ())
	}
}

// An output folder that cannot be written: exit 1, an error naming it, no
// panic.
func TestUnwritableOut(t *testing.T) {
	dir := t.TempDir()
	img := filepath.Join(dir, "ramp.png")
	writeTestPNG(t, img, 20, 20)
	blocker := filepath.Join(dir, "file")
	if err := os.WriteFile(blocker, []byte("x"), 0o644); err != nil {
		t.Fatal(err)
	}
	var out, errb bytes.Buffer
	code := run(context.Background(), []string{"segment", "--out", filepath.Join(blocker, "sub"), img}, &out, &errb)
	if code != exitFail || !strings.Contains(errb.String(), "output folder") {
		t.Errorf("exit %d, stderr %q", code, errb.String())
	}
	// An existing output is not overwritten without --force.
	if code := run(context.Background(), []string{"segment", "--out", dir, img}, &out, &errb); code != exitOK {
		t.Fatalf("first run: exit %d: %s", code, errb.String())
	}
	errb.Reset()
	if code := run(context.Background(), []string{"segment", "--out", dir, img}, &out, &errb); code != exitFail || !strings.Contains(errb.String(), "--force") {
		t.Errorf("second run without --force: exit %d, stderr %q", code, errb.String())
	}
}

// Broken inputs: each gets exit 1 and a message naming the file.
func TestBadImages(t *testing.T) {
	dir := t.TempDir()
	good := filepath.Join(dir, "good.png")
	writeTestPNG(t, good, 16, 16)
	data, _ := os.ReadFile(good)
	files := map[string][]byte{
		"empty.png":     {},
		"truncated.png": data[:len(data)/2],
		"text.tif":      []byte("this is not an image\n"),
	}
	for name, content := range files {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, content, 0o644); err != nil {
			t.Fatal(err)
		}
		var out, errb bytes.Buffer
		code := run(context.Background(), []string{"segment", "--out", filepath.Join(dir, "out"), p}, &out, &errb)
		if code != exitFail || !strings.Contains(errb.String(), p) {
			t.Errorf("%s: exit %d, stderr %q", name, code, errb.String())
		}
		if _, err := os.Stat(filepath.Join(dir, "out", pipeline.Stem(p)+".labels.png")); err == nil {
			t.Errorf("%s: a label map was written for a broken file", name)
		}
	}
}

func writeTestPNG(t testing.TB, path string, w, h int) {
	t.Helper()
	img := image.NewGray16(image.Rect(0, 0, w, h))
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			v := uint16(1000 + 40*x)
			if (x-w/2)*(x-w/2)+(y-h/2)*(y-h/2) < w*h/16 {
				v = 50000
			}
			img.SetGray16(x, y, color.Gray16{Y: v})
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

// Every parameter flag defaults to pipeline.DefaultRequest, so a command
// line that sets nothing asks for the default request.
func TestFlagDefaultsAreTheDefaultRequest(t *testing.T) {
	fs, s, _ := segmentFlags()
	if err := fs.Parse(nil); err != nil {
		t.Fatal(err)
	}
	if want := pipeline.DefaultRequest(); *s != want {
		t.Errorf("flags give %+v, want %+v", *s, want)
	}
}
