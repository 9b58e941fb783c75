package main

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/examples/loudskip"
)

// photographs are scikit-image's bundled photographs (Debian's
// python3-skimage) on which the object stages took the largest share of
// the time before their work per object was capped (segment/refine.go,
// refineWork and the constants beside it), with the background each was
// segmented against; the last two were among the largest shares after
// it (the speed issue's list of 3 December 2026), motorcycle_left among
// the largest on 4 December 2026 (branch obj7), and bw_text (bright), the
// largest share of all at main 6a3663d (branch photo3).
var photographs = []struct{ background, file string }{
	{"bright", "brick.png"},
	{"dark", "chessboard_GRAY.png"},
	{"bright", "page.png"},
	{"bright", "motorcycle_right.png"},
	{"bright", "green_palette.png"},
	{"dark", "chelsea.png"},
	{"bright", "astronaut.png"},
	{"bright", "logo.png"},
	{"bright", "camera.png"},
	{"dark", "chessboard_RGB.png"},
	{"dark", "microaneurysms.png"},
	{"bright", "motorcycle_left.png"},
	{"bright", "bw_text.png"},
}

// BenchmarkObjectsPhotographs is the whole command, `segment --classes 2
// --background dark|bright`, on each of photographs, the photograph case
// of the speed issue (no image's object stages above a third of its
// time). Besides the wall time it reports objects-s/op, the seconds of
// the record's "objects" stage, objects-share, that stage's share of the
// record's total, and cpu-s/op, the process's CPU time (user + system)
// per run. One sub-benchmark per photograph.
func BenchmarkObjectsPhotographs(b *testing.B) {
	const dir = "/usr/lib/python3/dist-packages/skimage/data/"
	for _, ph := range photographs {
		b.Run(ph.background+"/"+strings.TrimSuffix(ph.file, filepath.Ext(ph.file)), func(b *testing.B) {
			img := filepath.Join(dir, ph.file)
			if _, err := os.Stat(img); err != nil {
				loudskip.Skip(b, "scikit-image data not installed (apt-get install -y python3-skimage): %v", err)
			}
			out := filepath.Join(b.TempDir(), "out")
			args := []string{"segment", "--force", "--classes", "2", "--background", ph.background, "--out", out, img}
			var objects, total float64
			b.ResetTimer()
			c0 := cpuSeconds()
			for i := 0; i < b.N; i++ {
				var stdout, stderr bytes.Buffer
				if code := run(context.Background(), args, &stdout, &stderr); code != exitOK {
					b.Fatalf("exit %d: %s", code, stderr.String())
				}
				b.StopTimer()
				var rec struct {
					Seconds map[string]float64 `json:"seconds"`
				}
				data, err := os.ReadFile(filepath.Join(out, strings.TrimSuffix(ph.file, filepath.Ext(ph.file))+".json"))
				if err == nil {
					err = json.Unmarshal(data, &rec)
				}
				if err != nil {
					b.Fatal(err)
				}
				objects += rec.Seconds["objects"]
				total += rec.Seconds["total"]
				b.StartTimer()
			}
			b.ReportMetric((cpuSeconds()-c0)/float64(b.N), "cpu-s/op")
			b.ReportMetric(objects/float64(b.N), "objects-s/op")
			b.ReportMetric(objects/total, "objects-share")
		})
	}
}
