package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"testing"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/imageio/scenes"
)

// The record carries the object scale when one was estimated: for the
// automatic smoothing on every image, used for the automatic superpixel
// count above 192000 pixels; with neither (a fixed smoothing, a small
// frame) no object_scale; the record's other fields stay. Expected
// radius: the generator draws nuclei of mean radius 8-20 pixels
// (scenes.NucleiOptions defaults).
func TestRecordObjectScale(t *testing.T) {
	if testing.Short() {
		t.Skip("segments three generated scenes")
	}
	dir := t.TempDir()
	for _, c := range []struct {
		size           int
		smooth         string
		estimate, used bool
	}{{512, "auto", true, true}, {256, "auto", true, false}, {256, "0", false, false}} {
		sc := scenes.Nuclei(scenes.NucleiOptions{Width: c.size, Height: c.size, Seed: 9590})
		img := filepath.Join(dir, fmt.Sprintf("%s-%d.png", sc.Name, c.size))
		if err := scenes.WritePNG(img, sc.Image()); err != nil {
			t.Fatal(err)
		}
		out := filepath.Join(dir, "out")
		var stdout, stderr bytes.Buffer
		if code := run(context.Background(), []string{"segment", "--force", "--smooth", c.smooth, "--classes", "2", "--background", "dark", "--out", out, img}, &stdout, &stderr); code != exitOK {
			t.Fatalf("%d²: exit %d: %s", c.size, code, stderr.String())
		}
		data, err := os.ReadFile(filepath.Join(out, fmt.Sprintf("%s-%d.json", sc.Name, c.size)))
		if err != nil {
			t.Fatal(err)
		}
		var raw map[string]json.RawMessage
		if err := json.Unmarshal(data, &raw); err != nil {
			t.Fatal(err)
		}
		for _, key := range []string{"tool", "version", "status", "input", "settings", "params", "graph", "eigenvalues", "split_ncuts", "regions", "objects", "seconds", "outputs"} {
			if _, ok := raw[key]; !ok {
				t.Errorf("%d²: record lacks %q", c.size, key)
			}
		}
		var rec pipeline.Record
		if err := json.Unmarshal(data, &rec); err != nil {
			t.Fatal(err)
		}
		if !c.estimate {
			if _, ok := raw["object_scale"]; ok || rec.ObjectScale != nil {
				t.Errorf("%d², smooth %s: object_scale %s in the record, want none below 192000 pixels without the automatic smoothing", c.size, c.smooth, raw["object_scale"])
			}
			continue
		}
		e := rec.ObjectScale
		if e == nil {
			t.Fatalf("%d²: no object_scale in the record:\n%s", c.size, data)
		}
		if !e.Found || e.Used != c.used || e.Radius < 8 || e.Radius > 20 || e.Strength < 10 || e.Blobs < 1 || e.Noise <= 0 {
			t.Errorf("%d²: object_scale %+v, want found, used %v, radius within the generator's 8-20", c.size, *e, c.used)
		}
		if _, ok := rec.Seconds["scale"]; !ok {
			t.Errorf("%d²: no seconds for the scale stage: %v", c.size, rec.Seconds)
		}
		if !c.used {
			continue
		}
		// 4·512²/(π r²) < 4000 for r >= 11.6, else the rule's count
		if sp, ok := rec.Params["superpixels"].(float64); !ok || sp < 4000 || sp > 512*512/16 {
			t.Errorf("%d²: params superpixels %v, want at least today's 4000", c.size, rec.Params["superpixels"])
		}
	}
}
