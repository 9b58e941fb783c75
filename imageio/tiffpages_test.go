package imageio

import (
	"bytes"
	"os"
	"testing"

	"github.com/cleave-seg/cleave/examples/loudskip"
)

// Page counts of TIFF files written by other software: scikit-image's
// bundled test files, against the counts Debian's python3-tifffile gives
// for them (len(tifffile.TiffFile(path).pages), run on this machine:
// 2, 2, 1, 1 and 30).
// Skipped when Debian's python3-skimage is not installed.
func TestTIFFPagesSkimage(t *testing.T) {
	const dir = "/usr/lib/python3/dist-packages/skimage/data/"
	for name, want := range map[string]int{
		"multipage.tif":               2,
		"multipage_rgb.tif":           2,
		"chessboard_GRAY_U16.tif":     1,
		"chessboard_GRAY_U16B.tif":    1,
		"_blobs_3d_fiji_skeleton.tif": 30,
	} {
		data, err := os.ReadFile(dir + name)
		if err != nil {
			loudskip.Skip(t, "scikit-image data not installed (apt-get install -y python3-skimage); its TIFF page counts were not checked: %v", err)
		}
		if got := tiffPagesOf(data); got != want {
			t.Errorf("%s: %d pages, want %d", name, got, want)
		}
	}
}

// Hand-built chains: a loop of directories without entries (not images:
// TIFF 6.0 section 2 requires at least one entry, and an image needs
// ImageWidth), an offset past the end and a short header all end the
// count at 1 without panic or hang.
func TestTIFFPagesHostile(t *testing.T) {
	// Header II*\0 with first IFD at 8; IFD at 8: 0 entries, next = 14;
	// IFD at 14: 0 entries, next = 8 (a loop).
	loop := []byte{'I', 'I', 42, 0, 8, 0, 0, 0, 0, 0, 14, 0, 0, 0, 0, 0, 8, 0, 0, 0}
	if got := tiffPagesOf(loop); got != 1 {
		t.Errorf("loop: %d pages, want 1", got)
	}
	past := []byte{'M', 'M', 0, 42, 0, 0, 0, 8, 0, 0, 0xff, 0xff, 0xff, 0xff}
	if got := tiffPagesOf(past); got != 1 {
		t.Errorf("offset past the end: %d pages, want 1", got)
	}
	if got := tiffPagesOf([]byte{'I', 'I', 42, 0}); got != 1 {
		t.Errorf("short header: %d pages, want 1", got)
	}
}

// tiffPagesOf is tiffPagesAt on data in memory.
func tiffPagesOf(data []byte) int { return tiffPagesAt(bytes.NewReader(data), int64(len(data))) }
