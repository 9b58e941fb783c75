package imageio

import (
	"bytes"
	"encoding/base64"
	"encoding/binary"
	"encoding/json"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"testing"

	"github.com/cleave-seg/cleave/examples/loudskip"
)

// tiffdata holds the variants testdata/tiff/make.py writes with
// python3-tifffile and libtiff's tiffcp, and manifest.json with what
// tifffile reports of them (values in refs/*.bin: float64 planes, page
// major, sample minor).
const tiffdata = "../testdata/tiff"

type tiffVariant struct {
	Pages, Samples, Width, Height int
	Ref                           string
	Resolution                    []float64
	ARI                           float64 `json:"ari_against_labels_uint32"`
}

func tiffVariants(t testing.TB) map[string]tiffVariant {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(tiffdata, "manifest.json"))
	if err != nil {
		t.Fatal(err)
	}
	var m struct{ Files map[string]tiffVariant }
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	return m.Files
}

// refPlane returns plane k (page * samples + sample) of a variant's
// reference values.
func refPlane(t *testing.T, v tiffVariant, k int) []float64 {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(tiffdata, v.Ref))
	if err != nil {
		t.Fatal(err)
	}
	n := v.Width * v.Height
	out := make([]float64, n)
	for i := range out {
		out[i] = math.Float64frombits(binary.LittleEndian.Uint64(b[8*(k*n+i):]))
	}
	return out
}

func loadChosen(t *testing.T, name string, sel Selection) *Image {
	t.Helper()
	src, err := Open(filepath.Join(tiffdata, name), LoadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	if err := src.Choose(sel); err != nil {
		t.Fatal(err)
	}
	im, err := src.Decode()
	if err != nil {
		t.Fatal(err)
	}
	return im
}

func samePlane(t *testing.T, what string, got []float32, want []float64) {
	t.Helper()
	for i := range want {
		if float64(got[i]) != want[i] {
			t.Fatalf("%s: pixel %d is %v, tifffile reports %v", what, i, got[i], want[i])
		}
	}
}

// Channel, plane and frame choices read the page that the file's
// metadata places them in: OME DimensionOrder XYZCT (tifffile's, for
// CZYX data: page = z + SizeZ * c) and the hyperstack order (channel
// fastest, then slice, then frame: page = c + C * (z + Z * t)); the
// brightest-value projection is the pixelwise maximum of the planes as
// tifffile reads them.
func TestChooseChannelPlaneFrame(t *testing.T) {
	vs := tiffVariants(t)
	ome := vs["ome-cz.ome.tif"]
	im := loadChosen(t, "ome-cz.ome.tif", Selection{Channel: "GFP", Plane: 2})
	if im.Used == nil || im.Used.Channel != 1 || im.Used.ChannelName != "GFP" {
		t.Fatalf("used %+v", im.Used)
	}
	samePlane(t, "OME channel GFP plane 2", im.Planes[0], refPlane(t, ome, 2+3*1))
	hs := vs["hyperstack.tif"]
	im = loadChosen(t, "hyperstack.tif", Selection{Channel: "1", Plane: 2, Frame: 1})
	samePlane(t, "hyperstack c1 z2 t1", im.Planes[0], refPlane(t, hs, 1+2*(2+3*1)))
	st := vs["stack.tif"]
	im = loadChosen(t, "stack.tif", Selection{Brightest: true})
	want := refPlane(t, st, 0)
	for z := 1; z < 4; z++ {
		for i, v := range refPlane(t, st, z) {
			want[i] = math.Max(want[i], v)
		}
	}
	samePlane(t, "brightest of 4 planes", im.Planes[0], want)
	if im.Used.Plane != -1 {
		t.Fatalf("used plane %d for the projection, want -1", im.Used.Plane)
	}
	// tifffile's JSON description with axes CZYX (2 x 3, stored as 2
	// pages of 3 samples): channel 1, plane 2 is array plane 1 * 3 + 2,
	// the 5th in tifffile's page-and-sample order.
	ax := vs["axes-czyx.tif"]
	src, err := Open(filepath.Join(tiffdata, "axes-czyx.tif"), LoadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if st := src.Stack(); st.Channels != 2 || st.Planes != 3 || st.Layout != "shape description" {
		t.Fatalf("axes-czyx.tif: stack %+v, tifffile's series is CZYX 2 x 3", st)
	}
	src.Close()
	im = loadChosen(t, "axes-czyx.tif", Selection{Channel: "1", Plane: 2})
	samePlane(t, "CZYX channel 1 plane 2", im.Planes[0], refPlane(t, ax, 1*3+2))
	// Samples as channels: the five-channel planar file, channel 4.
	five := vs["five-channel-planar.tif"]
	im = loadChosen(t, "five-channel-planar.tif", Selection{Channel: "4"})
	samePlane(t, "five channels, channel 4", im.Planes[0], refPlane(t, five, 4))
}

// The resolution tags of resolution-cm.tif (pixels per centimetre, as
// tifffile reports the stored rational) give a pixel size of 10^4 /
// XResolution micrometres (TIFF 6.0 section 8: ResolutionUnit 3).
func TestCalibrationFromResolution(t *testing.T) {
	v := tiffVariants(t)["resolution-cm.tif"]
	src, err := Open(filepath.Join(tiffdata, "resolution-cm.tif"), LoadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	c := src.Stack().Calibration
	want := 1e4 / v.Resolution[0]
	if math.Abs(c.PixelSize-want) > 1e-12*want || c.Unit != "µm" || c.Source != "resolution tags" {
		t.Fatalf("calibration %+v, want %v µm from the resolution tags", c, want)
	}
}

// 32-bit integer label TIFFs (labels from 70000, beyond 16 bits; one
// zlib-compressed with the horizontal predictor) read back exactly the
// values tifffile reports.
func TestReadLabels32BitTIFF(t *testing.T) {
	vs := tiffVariants(t)
	for _, name := range []string{"labels-uint32.tif", "labels-int32-zlib.tif"} {
		lm, err := ReadLabels(filepath.Join(tiffdata, name))
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		labels, w, h := lm.Pix, lm.Width, lm.Height
		v := vs[name]
		if w != v.Width || h != v.Height {
			t.Fatalf("%s: %dx%d", name, w, h)
		}
		want := refPlane(t, v, 0)
		for i := range want {
			if float64(labels[i]) != want[i] {
				t.Fatalf("%s pixel %d: label %d, tifffile reports %v", name, i, labels[i], want[i])
			}
		}
	}
	// A float TIFF with fractions or NaN is not a label map.
	if _, err := ReadLabels(filepath.Join(tiffdata, "float32-nan.tif")); err == nil {
		t.Fatal("float32-nan.tif read as labels")
	}
}

// scikit-image's bundled TIFFs load with the values Debian's
// python3-tifffile reports for them (to float32, the precision of an
// Image), every page (the test asks tifffile
// at run time; skipped loudly when it or the files are missing).
func TestSkimageTIFFsMatchTifffile(t *testing.T) {
	const dir = "/usr/lib/python3/dist-packages/skimage/data/"
	const script = `
import base64, json, sys
import numpy, tifffile
out = []
with tifffile.TiffFile(sys.argv[1]) as tf:
    for p in tf.pages:
        a = p.asarray()
        if p.samplesperpixel == 1:
            a = a[numpy.newaxis]
        elif p.planarconfig == 1:
            a = numpy.moveaxis(a, -1, 0)
        out.append({"shape": list(a.shape), "data": base64.b64encode(a.astype("<f8").tobytes()).decode()})
json.dump(out, sys.stdout)
`
	for _, name := range []string{"multipage.tif", "multipage_rgb.tif", "chessboard_GRAY_U16.tif", "chessboard_GRAY_U16B.tif"} {
		if _, err := os.Stat(dir + name); err != nil {
			loudskip.Skip(t, "scikit-image data not installed (apt-get install python3-skimage): %v", err)
		}
		cmd := exec.Command("/usr/bin/python3", "-c", script, dir+name)
		var stderr bytes.Buffer
		cmd.Stderr = &stderr
		outb, err := cmd.Output()
		if err != nil {
			loudskip.Skip(t, "Debian python3-tifffile not usable (apt-get install python3-tifffile): %v %s", err, stderr.String())
		}
		var pages []struct {
			Shape []int
			Data  string
		}
		if err := json.Unmarshal(outb, &pages); err != nil {
			t.Fatal(err)
		}
		src, err := Open(dir+name, LoadOptions{})
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		st := src.Stack()
		if st.Planes != len(pages) {
			t.Fatalf("%s: %d planes, tifffile reports %d pages", name, st.Planes, len(pages))
		}
		for z, pg := range pages {
			raw, _ := base64.StdEncoding.DecodeString(pg.Data)
			ns, h, w := pg.Shape[0], pg.Shape[1], pg.Shape[2]
			if err := src.Choose(Selection{Plane: z}); err != nil {
				t.Fatal(err)
			}
			im, err := src.Decode()
			if err != nil {
				t.Fatalf("%s page %d: %v", name, z, err)
			}
			if im.Width != w || im.Height != h || im.Channels != ns && !(ns > 3 && im.Channels == 3) {
				t.Fatalf("%s page %d: %dx%d with %d channels, tifffile reports %v", name, z, im.Width, im.Height, im.Channels, pg.Shape)
			}
			for c := 0; c < im.Channels; c++ {
				for i := 0; i < w*h; i++ {
					want := math.Float64frombits(binary.LittleEndian.Uint64(raw[8*(c*w*h+i):]))
					if im.Planes[c][i] != float32(want) { // planes are float32 (multipage_rgb.tif holds float64)
						t.Fatalf("%s page %d channel %d pixel %d: %v, tifffile reports %v", name, z, c, i, im.Planes[c][i], want)
					}
				}
			}
		}
		src.Close()
	}
}
