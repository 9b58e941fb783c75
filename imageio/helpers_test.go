package imageio

import (
	"encoding/json"
	"os"
	"path/filepath"
	"testing"
)

// testdata is the folder of reference files written by testdata/imageio/make.py.
var testdata = filepath.Join("..", "testdata", "imageio")

// readJSON decodes a reference file from testdata.
func readJSON(t testing.TB, name string, v any) {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(testdata, name))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, v); err != nil {
		t.Fatalf("%s: %v", name, err)
	}
}

// refImage is one entry of expected.json: pixels as read back by the
// reference decoder (Pillow, tifffile or ImageMagick).
type refImage struct {
	Width, Height, Channels int
	Bitdepth                int
	Alpha                   bool
	Planes                  [][]int64
}

func expectedImages(t testing.TB) map[string]refImage {
	m := map[string]refImage{}
	readJSON(t, "expected.json", &m)
	return m
}
