package pipeline

import (
	"bytes"
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// Files segments each image into the folder with one summary line per
// image; a broken image is counted and named on the log while the others
// go on; what was asked wrongly (two images of one stem, save-graph with
// two images, a bad parameter) is a RequestError before anything is
// written.
func TestFiles(t *testing.T) {
	dir := t.TempDir()
	disc, broken := filepath.Join(dir, "disc.png"), filepath.Join(dir, "broken.png")
	writeDisc(t, disc, 64, 48)
	if err := os.WriteFile(broken, []byte("not a PNG"), 0o644); err != nil {
		t.Fatal(err)
	}
	r := DefaultRequest()
	r.Classes, r.Background = 2, "dark"
	out := filepath.Join(dir, "out")
	var stdout, log bytes.Buffer
	f := &Files{Images: []string{disc, broken}, Request: r, Workers: 1, Out: out, Voice: testVoice, Stdout: &stdout, Log: &log}
	failed, err := f.Run(context.Background())
	if err != nil || failed != 1 {
		t.Fatalf("failed %d, %v; log %s", failed, err, log.String())
	}
	if want := disc + ": 64x48, "; !strings.HasPrefix(stdout.String(), want) || !strings.Contains(stdout.String(), "-> "+filepath.Join(out, "disc")+".*") || strings.Count(stdout.String(), "\n") != 1 {
		t.Errorf("stdout %q", stdout.String())
	}
	if !strings.HasPrefix(log.String(), "cleave segment: ") || !strings.Contains(log.String(), broken) {
		t.Errorf("log %q", log.String())
	}
	if _, err := os.Stat(filepath.Join(out, "disc.labels.png")); err != nil {
		t.Error(err)
	}
	for name, set := range map[string]func(*Files){
		"same outputs":  func(f *Files) { f.Images = []string{disc, filepath.Join(dir, "disc.tif")} },
		"`save-graph`":  func(f *Files) { f.SaveGraph = filepath.Join(dir, "w.mtx") },
		"`superpixels`": func(f *Files) { f.Request.Superpixels = "many" },
	} {
		f := &Files{Images: []string{disc, broken}, Request: r, Workers: 1, Out: filepath.Join(dir, "never"), Voice: testVoice, Stdout: &stdout, Log: &log}
		set(f)
		var re *RequestError
		if _, err := f.Run(context.Background()); !errors.As(err, &re) || !strings.Contains(err.Error(), name) {
			t.Errorf("%s: %v", name, err)
		}
		if _, err := os.Stat(filepath.Join(dir, "never")); err == nil {
			t.Errorf("%s: the output folder was made", name)
		}
	}
}
