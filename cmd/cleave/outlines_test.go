package main

import (
	"encoding/csv"
	"encoding/json"
	"fmt"
	"image"
	"image/color"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"testing"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/imageio/scenes"
)

// geoFeature is a GeoJSON Feature as encoding/json reads it.
type geoFeature struct {
	Type       string         `json:"type"`
	ID         *int           `json:"id"`
	Properties map[string]int `json:"properties"`
	Geometry   struct {
		Type        string          `json:"type"`
		Coordinates json.RawMessage `json:"coordinates"`
	} `json:"geometry"`
}

// polygons returns the feature's polygons (rings of [x, y] positions).
func (f geoFeature) polygons(t *testing.T) [][][][2]float64 {
	t.Helper()
	var out [][][][2]float64
	var err error
	switch f.Geometry.Type {
	case "Polygon":
		var p [][][2]float64
		err = json.Unmarshal(f.Geometry.Coordinates, &p)
		out = append(out, p)
	case "MultiPolygon":
		err = json.Unmarshal(f.Geometry.Coordinates, &out)
	default:
		t.Fatalf("geometry type %q", f.Geometry.Type)
	}
	if err != nil {
		t.Fatal(err)
	}
	return out
}

// readGeoJSON loads STEM.outlines.geojson with encoding/json.
func readGeoJSON(t *testing.T, p string) []geoFeature {
	t.Helper()
	data, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	var fc struct {
		Type     string       `json:"type"`
		Features []geoFeature `json:"features"`
	}
	if err := json.Unmarshal(data, &fc); err != nil {
		t.Fatal(err)
	}
	if fc.Type != "FeatureCollection" {
		t.Fatalf("type %q, want FeatureCollection", fc.Type)
	}
	return fc.Features
}

// checkGeoJSON checks the outlines file against the label map (and the
// class map when there is one): RFC 7946 structure (closed rings of at
// least four positions, the right-hand rule read with ordinary x, y
// axes: exterior rings of positive shoelace area, holes negative), one
// feature per label with its label and class, and each feature
// rasterized back (even-odd rule at pixel centres) equal to its label's
// pixels (IoU 1).
func checkGeoJSON(t *testing.T, geo string, labels, classes []int32, w, h int) {
	t.Helper()
	feats := readGeoJSON(t, geo)
	want := map[int32]int{}
	for _, l := range labels {
		if l > 0 {
			want[l]++
		}
	}
	if len(feats) != len(want) {
		t.Errorf("%d features for %d labels", len(feats), len(want))
	}
	for _, f := range feats {
		l := int32(f.Properties["label"])
		if f.Type != "Feature" || f.ID == nil || int32(*f.ID) != l || want[l] == 0 {
			t.Errorf("feature %+v: want type Feature, id = label, a label of the map", f)
			continue
		}
		cover := make([]int, w*h)
		for _, poly := range f.polygons(t) {
			for k, ring := range poly {
				if len(ring) < 4 || ring[0] != ring[len(ring)-1] {
					t.Errorf("label %d: ring %d not closed or too short: %v", l, k, ring)
					continue
				}
				var a float64
				for i := 0; i+1 < len(ring); i++ {
					a += ring[i][0]*ring[i+1][1] - ring[i+1][0]*ring[i][1]
				}
				if (k == 0) != (a > 0) {
					t.Errorf("label %d: ring %d has signed area %g (exterior rings positive, holes negative)", l, k, a/2)
				}
			}
			// Even-odd rule over the polygon's rings, row by row.
			for y := 0; y < h; y++ {
				cy := float64(y) + 0.5
				var xs []float64
				for _, ring := range poly {
					for i := 0; i+1 < len(ring); i++ {
						a, b := ring[i], ring[i+1]
						if (a[1] <= cy) != (b[1] <= cy) {
							xs = append(xs, a[0]+(cy-a[1])*(b[0]-a[0])/(b[1]-a[1]))
						}
					}
				}
				slices.Sort(xs)
				for k := 0; k+1 < len(xs); k += 2 {
					for x := int(math.Ceil(xs[k] - 0.5)); float64(x)+0.5 < xs[k+1]; x++ {
						cover[y*w+x]++
					}
				}
			}
		}
		var inter, union int
		for i, c := range cover {
			in := labels[i] == l
			if c > 1 {
				t.Errorf("label %d: pixel %d covered %d times", l, i, c)
			}
			if in && c > 0 {
				inter++
			}
			if in || c > 0 {
				union++
			}
		}
		if inter != union {
			t.Errorf("label %d: rasterized outline IoU %d/%d, want 1", l, inter, union)
		}
		if classes != nil {
			counts := map[int32]int{}
			for i, v := range labels {
				if v == l {
					counts[classes[i]]++
				}
			}
			c, ok := f.Properties["class"]
			if !ok || counts[int32(c)]*2 <= want[l] {
				t.Errorf("label %d: class %d (present %v), class counts %v", l, c, ok, counts)
			}
		} else if _, ok := f.Properties["class"]; ok {
			t.Errorf("label %d: a class without a class map", l)
		}
	}
}

// The outlines of 'cleave segment' on generated nuclei and touching
// clusters (objects with shared borders), and of the region map without
// --classes, rasterize back to the label map the same run wrote.
func TestSegmentOutlinesGeoJSON(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	dir := t.TempDir()
	nuc := filepath.Join(dir, "nuc.png")
	clu := filepath.Join(dir, "clu.png")
	if err := scenes.WritePNG(nuc, scenes.Nuclei(scenes.NucleiOptions{Width: 160, Height: 128, Seed: 14021}).Image()); err != nil {
		t.Fatal(err)
	}
	if err := scenes.WritePNG(clu, scenes.Clusters(scenes.ClustersOptions{Width: 160, Height: 128, Seed: 14022}).Image()); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		out     string
		classes bool
		args    []string
	}{
		{"classes", true, []string{"--classes", "2", "--background", "dark"}},
		{"regions", false, nil},
	} {
		out := filepath.Join(dir, c.out)
		args := append(append([]string{"segment", "--out", out}, c.args...), nuc, clu)
		if code, _, stderr := runCleave(args...); code != exitOK {
			t.Fatalf("exit %d: %s", code, stderr)
		}
		for _, stem := range []string{"nuc", "clu"} {
			lm, err := imageio.ReadLabels(filepath.Join(out, stem+".labels.png"))
			if err != nil {
				t.Fatal(err)
			}
			labels, w, h := lm.Pix, lm.Width, lm.Height
			var classes []int32
			if c.classes {
				cm, err := imageio.ReadLabels(filepath.Join(out, stem+".classes.png"))
				if err != nil {
					t.Fatal(err)
				}
				classes = cm.Pix
			}
			t.Run(c.out+"/"+stem, func(t *testing.T) {
				checkGeoJSON(t, filepath.Join(out, stem+".outlines.geojson"), labels, classes, w, h)
			})
			rec, err := pipeline.ReadRecord(filepath.Join(out, stem+".json"))
			if err != nil {
				t.Fatal(err)
			}
			if !slices.Contains(rec.Outputs, stem+".outlines.geojson") {
				t.Errorf("record outputs %v lack the outlines", rec.Outputs)
			}
		}
	}
	// The same check by an outside rasterizer: scikit-image's
	// draw.polygon (pixel centres on integer coordinates, so the corners
	// move by -1/2), rings combined by exclusive or, on the label map as
	// PIL reads it.
	var mismatches map[string]int
	pythonJSON(t, "python3-skimage", rasterizeGeoJSON, &mismatches,
		filepath.Join(dir, "classes", "clu.labels.png"), filepath.Join(dir, "classes", "clu.outlines.geojson"))
	if len(mismatches) == 0 {
		t.Fatal("no labels compared")
	}
	for l, n := range mismatches {
		if n != 0 {
			t.Errorf("skimage: label %s: %d pixels differ", l, n)
		}
	}
}

// rasterizeGeoJSON rasterizes each feature with skimage.draw.polygon and
// prints, per label, the pixels that differ from the label map.
const rasterizeGeoJSON = `
import json, sys
import numpy as np
from PIL import Image
from skimage.draw import polygon
lab = np.array(Image.open(sys.argv[1])).astype(np.int64)
fc = json.load(open(sys.argv[2]))
out = {}
for f in fc["features"]:
    g = f["geometry"]
    polys = [g["coordinates"]] if g["type"] == "Polygon" else g["coordinates"]
    m = np.zeros(lab.shape, bool)
    for p in polys:
        pm = np.zeros(lab.shape, bool)
        for ring in p:
            xy = np.array(ring, float)
            rr, cc = polygon(xy[:, 1] - 0.5, xy[:, 0] - 0.5, lab.shape)
            r = np.zeros(lab.shape, bool)
            r[rr, cc] = True
            pm ^= r
        m |= pm
    out[str(f["properties"]["label"])] = int(np.sum(m != (lab == f["properties"]["label"])))
json.dump(out, sys.stdout)
`

// regions.csv of a colour image has the luma's statistics and each
// channel's (_red, _green, _blue), in the image's own units: checked
// against the means, extremes and sums computed here from the PNG as
// Go's image/png decodes it and the label map the run wrote.
func TestRegionTableColour(t *testing.T) {
	dir := t.TempDir()
	w, h := 48, 40
	img := image.NewNRGBA(image.Rect(0, 0, w, h))
	for y := range h {
		for x := range w {
			c := color.NRGBA{uint8(20 + x), uint8(30 + y), uint8(7 * (x + y) % 50), 255}
			if (x-14)*(x-14)+(y-20)*(y-20) < 64 {
				c = color.NRGBA{200, uint8(150 + x%7), 90, 255}
			}
			if (x-34)*(x-34)+(y-18)*(y-18) < 49 {
				c = color.NRGBA{60, 220, uint8(180 + y%5), 255}
			}
			img.SetNRGBA(x, y, c)
		}
	}
	labels := segmentRGB(t, dir, img)
	cf, err := os.Open(filepath.Join(dir, "rgb.regions.csv"))
	if err != nil {
		t.Fatal(err)
	}
	defer cf.Close()
	recs, err := csv.NewReader(cf).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(recs) < 2 {
		t.Fatalf("%d rows", len(recs))
	}
	col := map[string]int{}
	for k, name := range recs[0] {
		col[name] = k
	}
	for _, row := range recs[1:] {
		l, _ := strconv.Atoi(row[col["label"]])
		for c, name := range pipeline.ChannelNames() {
			var sum, mn, mx float64 = 0, math.Inf(1), math.Inf(-1)
			n := 0
			for i, v := range labels {
				if v != int32(l) {
					continue
				}
				px := img.Pix[i*4+c]
				sum += float64(px)
				mn, mx = math.Min(mn, float64(px)), math.Max(mx, float64(px))
				n++
			}
			for what, want := range map[string]float64{"mean_": sum / float64(n), "min_": mn, "max_": mx, "integrated_": sum} {
				k, ok := col[what+name]
				if !ok {
					t.Fatalf("no column %s%s in %v", what, name, recs[0])
				}
				got, err := strconv.ParseFloat(row[k], 64)
				if err != nil || math.Abs(got-want) > 0.0005 {
					t.Errorf("label %d: %s%s %s, want %.3f", l, what, name, row[k], want)
				}
			}
		}
		if fmt.Sprint(row[col["touches_border"]]) != "0" && fmt.Sprint(row[col["touches_border"]]) != "1" {
			t.Errorf("touches_border %q", row[col["touches_border"]])
		}
	}
}
