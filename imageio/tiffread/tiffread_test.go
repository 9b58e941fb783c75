package tiffread

import (
	"context"
	"encoding/binary"
	"encoding/json"
	"errors"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"
)

const testdata = "../../testdata/tiff"

// variant is one file of testdata/tiff/manifest.json, written by
// testdata/tiff/make.py with python3-tifffile and libtiff's tiffcp; Ref
// holds the values tifffile (or, for JPEG, Pillow) read back.
type variant struct {
	Pages, Samples int
	Width, Height  int
	Ref            string
	Reference      string
	Tolerance      float64
	Error          string
	Fallback       bool
	// Compare "luma601": compare BT.601 luma of the three samples, not
	// each sample (JPEG with subsampled chroma; see make.py).
	Compare string
}

func manifest(t testing.TB) map[string]variant {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(testdata, "manifest.json"))
	if err != nil {
		t.Fatal(err)
	}
	var m struct{ Files map[string]variant }
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	return m.Files
}

// refPlanes reads a reference file: float64 little-endian planes, page
// major, sample minor.
func refPlanes(t *testing.T, v variant) [][]float64 {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(testdata, v.Ref))
	if err != nil {
		t.Fatal(err)
	}
	n := v.Width * v.Height
	if len(b) != 8*n*v.Pages*v.Samples {
		t.Fatalf("%s: %d bytes for %d planes of %d", v.Ref, len(b), v.Pages*v.Samples, n)
	}
	out := make([][]float64, v.Pages*v.Samples)
	for k := range out {
		out[k] = make([]float64, n)
		for i := range out[k] {
			out[k][i] = math.Float64frombits(binary.LittleEndian.Uint64(b[8*(k*n+i):]))
		}
	}
	return out
}

func openFile(t *testing.T, name string) (*File, func()) {
	t.Helper()
	fh, err := os.Open(filepath.Join(testdata, name))
	if err != nil {
		t.Fatal(err)
	}
	st, _ := fh.Stat()
	f, err := Open(fh, st.Size())
	if err != nil {
		fh.Close()
		t.Fatalf("%s: %v", name, err)
	}
	return f, func() { fh.Close() }
}

// TestVariantsMatchTifffile reads every variant made by make.py and
// compares every sample of every page with the value tifffile reports
// (float32 of it: the precision ReadSample keeps; JPEG within the
// tolerance make.py records, the difference allowed between two JPEG
// decoders' inverse transforms and colour conversions).
func TestVariantsMatchTifffile(t *testing.T) {
	checkVariants(t)
}

// TestVariantsRowBlocks is TestVariantsMatchTifffile with the rows of a
// page with fewer strips or tiles than workers converted in blocks of 3
// rows on the workers (rowBlock; 64 otherwise, more than these files'
// 29 rows): the same values as tifffile's.
func TestVariantsRowBlocks(t *testing.T) {
	defer func(b int) { rowBlock = b }(rowBlock)
	rowBlock = 3
	checkVariants(t)
}

func checkVariants(t *testing.T) {
	files := manifest(t)
	names := make([]string, 0, len(files))
	for n := range files {
		names = append(names, n)
	}
	sort.Strings(names)
	if len(names) < 40 {
		t.Fatalf("manifest lists %d files; make.py writes more than 40", len(names))
	}
	for _, name := range names {
		v := files[name]
		t.Run(name, func(t *testing.T) {
			f, done := openFile(t, name)
			defer done()
			if v.Error != "" || v.Fallback {
				err := f.Pages[0].Unsupported()
				var ue UnsupportedError
				if !errors.As(err, &ue) {
					t.Fatalf("want an UnsupportedError, got %v", err)
				}
				if v.Error != "" && !strings.Contains(err.Error(), v.Error) {
					t.Fatalf("error %q does not name %q", err, v.Error)
				}
				return
			}
			if len(f.Pages) != v.Pages {
				t.Fatalf("%d pages, tifffile reports %d", len(f.Pages), v.Pages)
			}
			refs := refPlanes(t, v)
			if v.Compare == "luma601" {
				compareLuma(t, f.Pages[0], refs, v.Tolerance)
				return
			}
			for pi, p := range f.Pages {
				if p.Width != v.Width || p.Height != v.Height || p.SamplesPerPixel != v.Samples {
					t.Fatalf("page %d: %dx%d with %d samples, tifffile reports %dx%d with %d", pi, p.Width, p.Height, p.SamplesPerPixel, v.Width, v.Height, v.Samples)
				}
				for s := 0; s < p.SamplesPerPixel; s++ {
					got := make([]float32, p.Width*p.Height)
					if err := ReadSample(context.Background(), p, s, got); err != nil {
						t.Fatalf("page %d sample %d: %v", pi, s, err)
					}
					want := refs[pi*v.Samples+s]
					for i, g := range got {
						w := float32(want[i])
						if g == w || math.IsNaN(float64(g)) && math.IsNaN(float64(w)) {
							continue
						}
						if math.Abs(float64(g)-float64(w)) <= v.Tolerance {
							continue
						}
						t.Fatalf("page %d sample %d pixel (%d, %d): %v, %s reports %v", pi, s, i%p.Width, i/p.Width, g, v.Reference, want[i])
					}
				}
			}
		})
	}
}

// compareLuma compares 0.299 R + 0.587 G + 0.114 B (ITU-R BT.601, the
// luma of JPEG's YCbCr) of the page with that of the reference.
func compareLuma(t *testing.T, p *Page, refs [][]float64, tol float64) {
	n := p.Width * p.Height
	got := make([][]float32, 3)
	for s := range got {
		got[s] = make([]float32, n)
		if err := ReadSample(context.Background(), p, s, got[s]); err != nil {
			t.Fatal(err)
		}
	}
	for i := 0; i < n; i++ {
		g := 0.299*float64(got[0][i]) + 0.587*float64(got[1][i]) + 0.114*float64(got[2][i])
		w := 0.299*refs[0][i] + 0.587*refs[1][i] + 0.114*refs[2][i]
		if math.Abs(g-w) > tol {
			t.Fatalf("pixel (%d, %d): luma %.1f, Pillow's %.1f", i%p.Width, i/p.Width, g, w)
		}
	}
}

// TestInt32Exact reads integer variants as labels: every value must come
// back exactly (int32 values above 2^24 do not survive float32), and
// non-integer or too large values are refused.
func TestInt32Exact(t *testing.T) {
	files := manifest(t)
	for _, name := range []string{"uint8.tif", "uint16.tif", "int16.tif", "int32.tif", "lzw-pred2-uint16.tif", "zstd-uint16.tif"} {
		v := files[name]
		f, done := openFile(t, name)
		got := make([]int32, v.Width*v.Height)
		if err := ReadSample(context.Background(), f.Pages[0], 0, got); err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		want := refPlanes(t, v)[0]
		for i := range got {
			if float64(got[i]) != want[i] {
				t.Fatalf("%s pixel %d: %d, tifffile reports %v", name, i, got[i], want[i])
			}
		}
		done()
	}
	for _, name := range []string{"float32-nan.tif", "uint32.tif"} {
		// float32-nan.tif holds NaN; uint32.tif values above 2^31.
		f, done := openFile(t, name)
		got := make([]int32, f.Pages[0].Width*f.Pages[0].Height)
		if err := ReadSample(context.Background(), f.Pages[0], 0, got); err == nil || !strings.Contains(err.Error(), "not a 32-bit integer") {
			t.Errorf("%s read as int32 labels: %v", name, err)
		}
		done()
	}
}

// TestMetadataTags checks the description and resolution tags against
// what tifffile reports for them (manifest.json).
func TestMetadataTags(t *testing.T) {
	f, done := openFile(t, "resolution-cm.tif")
	defer done()
	p := f.Pages[0]
	// make.py wrote 10000/0.65 pixels per centimetre (0.65 um pixels);
	// tifffile reports the rational it stored.
	var m struct {
		Files map[string]struct {
			Resolution     []float64
			ResolutionUnit int `json:"resolution_unit"`
		}
	}
	b, _ := os.ReadFile(filepath.Join(testdata, "manifest.json"))
	json.Unmarshal(b, &m)
	want := m.Files["resolution-cm.tif"]
	if len(want.Resolution) != 2 || math.Abs(p.XResolution-want.Resolution[0]) > 1e-6*want.Resolution[0] ||
		math.Abs(p.YResolution-want.Resolution[1]) > 1e-6*want.Resolution[1] || p.ResolutionUnit != want.ResolutionUnit {
		t.Fatalf("resolution %v x %v unit %d, tifffile reports %v unit %d", p.XResolution, p.YResolution, p.ResolutionUnit, want.Resolution, want.ResolutionUnit)
	}
	g, done2 := openFile(t, "ome-cz.ome.tif")
	defer done2()
	if err := g.Pages[0].ReadDescription(); err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(g.Pages[0].Description, "<?xml") || !strings.Contains(g.Pages[0].Description, "<OME") {
		t.Fatalf("OME description not read: %.80q", g.Pages[0].Description)
	}
}
