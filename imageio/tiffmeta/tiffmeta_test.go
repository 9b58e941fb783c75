package tiffmeta

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/imageio/tiffread"
)

// omeZSeries is written in the form of the OME consortium's published
// OME-TIFF sample "multi-channel-z-series.ome.tif" (the OME-TIFF sample
// data set, schema 2016-06): one TiffData element per plane, naming its
// IFD and its FirstC/FirstZ/FirstT. The attribute values (439 x 167
// pixels, SizeC 3, SizeZ 5, SizeT 1, DimensionOrder XYZCT,
// PhysicalSizeX/Y 1.0 with the schema's default unit) are written from
// memory of that sample, not copied from the file; the checks below
// follow from the schema's rules for whatever values are written.
func omeZSeries() string {
	var b strings.Builder
	b.WriteString(`<?xml version="1.0" encoding="UTF-8"?>
<OME xmlns="http://www.openmicroscopy.org/Schemas/OME/2016-06" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance" UUID="urn:uuid:3e5c2ba4-4e0c-4b0a-9d1e-6a3b5e0d1f21" xsi:schemaLocation="http://www.openmicroscopy.org/Schemas/OME/2016-06 http://www.openmicroscopy.org/Schemas/OME/2016-06/ome.xsd">
  <Image ID="Image:0" Name="multi-channel-z-series">
    <Pixels DimensionOrder="XYZCT" ID="Pixels:0" PhysicalSizeX="1.0" PhysicalSizeY="1.0" PhysicalSizeZ="1.0" SizeC="3" SizeT="1" SizeX="439" SizeY="167" SizeZ="5" Type="int8">
      <Channel ID="Channel:0:0" SamplesPerPixel="1"><LightPath/></Channel>
      <Channel ID="Channel:0:1" SamplesPerPixel="1"><LightPath/></Channel>
      <Channel ID="Channel:0:2" SamplesPerPixel="1"><LightPath/></Channel>
`)
	ifd := 0
	for c := 0; c < 3; c++ {
		for z := 0; z < 5; z++ {
			fmt.Fprintf(&b, `      <TiffData FirstC="%d" FirstT="0" FirstZ="%d" IFD="%d" PlaneCount="1"/>`+"\n", c, z, ifd)
			ifd++
		}
	}
	b.WriteString("    </Pixels>\n  </Image>\n</OME>\n")
	return b.String()
}

// The z-series document: dimension order and sizes as stated, the
// pixel size in micrometres (the schema's default PhysicalSizeXUnit),
// no channel names (none given), and each TiffData's IFD where
// DimensionOrder XYZCT puts its plane (Z fastest: index z + 5 c).
func TestOMEZSeries(t *testing.T) {
	l, err := ParseOME(omeZSeries())
	if err != nil {
		t.Fatal(err)
	}
	if l.Order != "XYZCT" || l.SizeC != 3 || l.SizeZ != 5 || l.SizeT != 1 || l.ChannelNames != nil {
		t.Fatalf("layout %+v", l)
	}
	if c := l.Calibration; c.X != 1 || c.Y != 1 || c.Unit != "µm" || c.Source != "ome-xml" {
		t.Fatalf("calibration %+v", c)
	}
	for c := 0; c < 3; c++ {
		for z := 0; z < 5; z++ {
			if got := l.IFD[l.PlaneIndex(c, z, 0, 3)]; got != z+5*c {
				t.Fatalf("c %d z %d: IFD %d, the document says %d", c, z, got, z+5*c)
			}
		}
	}
}

// A document in the form of the schema's 2016-06 examples with named
// channels and explicit units (PhysicalSizeXUnit "nm"), an XYCZT order
// and a bare TiffData (every plane from IFD 0): the channel names, the
// unit and the interleaved order are read as written (values invented
// for the test).
func TestOMENamedChannelsUnits(t *testing.T) {
	doc := `<?xml version="1.0" encoding="UTF-8"?>
<OME xmlns="http://www.openmicroscopy.org/Schemas/OME/2016-06">
  <Image ID="Image:0">
    <Pixels ID="Pixels:0" DimensionOrder="XYCZT" Type="uint16" SizeX="64" SizeY="48" SizeC="2" SizeZ="4" SizeT="3"
            PhysicalSizeX="108.3" PhysicalSizeXUnit="nm" PhysicalSizeY="108.3" PhysicalSizeYUnit="nm">
      <Channel ID="Channel:0:0" Name="Hoechst" SamplesPerPixel="1"/>
      <Channel ID="Channel:0:1" Name="mCherry" SamplesPerPixel="1"/>
      <TiffData/>
    </Pixels>
  </Image>
</OME>`
	l, err := ParseOME(doc)
	if err != nil {
		t.Fatal(err)
	}
	if len(l.ChannelNames) != 2 || l.ChannelNames[1] != "mCherry" || l.Calibration.X != 108.3 || l.Calibration.Unit != "nm" {
		t.Fatalf("layout %+v", l)
	}
	// XYCZT: C fastest, then Z, then T: (c 1, z 2, t 1) is 1 + 2 (2 + 4 * 1) = 13.
	if k := l.PlaneIndex(1, 2, 1, 2); k != 13 || l.IFD[k] != 13 || len(l.IFD) != 24 {
		t.Fatalf("plane index %d, IFD %d, %d planes mapped", k, l.IFD[k], len(l.IFD))
	}
}

// TiffData that names another file of a multi-file set (a UUID with a
// FileName, as the schema's multi-file samples do) maps no plane of this
// file; a DimensionOrder outside the schema's six is refused.
func TestOMEOtherFilesAndBadOrder(t *testing.T) {
	doc := `<OME xmlns="http://www.openmicroscopy.org/Schemas/OME/2016-06"><Image ID="Image:0">
<Pixels ID="Pixels:0" DimensionOrder="XYZCT" Type="uint8" SizeX="8" SizeY="8" SizeC="2" SizeZ="1" SizeT="1">
<TiffData FirstC="0" IFD="0" PlaneCount="1"><UUID FileName="set_C0.ome.tif">urn:uuid:1</UUID></TiffData>
<TiffData FirstC="1" IFD="0" PlaneCount="1"/>
</Pixels></Image></OME>`
	l, err := ParseOME(doc)
	if err != nil {
		t.Fatal(err)
	}
	if len(l.IFD) != 1 || l.IFD[1] != 0 {
		t.Fatalf("IFD map %v, want only channel 1 in page 0", l.IFD)
	}
	if _, err := ParseOME(strings.Replace(doc, "XYZCT", "XYZQT", 1)); err == nil {
		t.Fatal("DimensionOrder XYZQT accepted")
	}
}

// The hyperstack description python3-tifffile writes for
// testdata/tiff/hyperstack.tif is read with the fields tifffile itself
// reports for it (testdata/tiff/manifest.json).
func TestHyperstackAsTifffileReports(t *testing.T) {
	const dir = "../../testdata/tiff/"
	b, err := os.ReadFile(dir + "manifest.json")
	if err != nil {
		t.Fatal(err)
	}
	var m struct {
		Files map[string]struct {
			Hyperstack struct {
				Images, Channels, Slices, Frames int
				Spacing                          float64
				Unit                             string
			}
		}
	}
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	want := m.Files["hyperstack.tif"].Hyperstack
	fh, err := os.Open(dir + "hyperstack.tif")
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	st, _ := fh.Stat()
	f, err := tiffread.Open(fh, st.Size())
	if err != nil {
		t.Fatal(err)
	}
	if err := f.Pages[0].ReadDescription(); err != nil {
		t.Fatal(err)
	}
	l := ParseHyperstack(f.Pages[0].Description)
	if l == nil || l.SizeC != want.Channels || l.SizeZ != want.Slices || l.SizeT != want.Frames || l.SizeC*l.SizeZ*l.SizeT != want.Images {
		t.Fatalf("layout %+v, tifffile reports %+v", l, want)
	}
	if l.Calibration.Unit != HyperstackUnit(want.Unit) || l.Calibration.Unit != "µm" {
		t.Fatalf("unit %q, tifffile reports %q", l.Calibration.Unit, want.Unit)
	}
	if ParseHyperstack(`{"shape": [29, 37]}`) != nil {
		t.Fatal("a JSON description read as a hyperstack")
	}
}

// The JSON description with axes: TZCYX of 4 x 3 x 2 puts C fastest,
// then Z, then T (row-major order), so (c 1, z 2, t 3) is plane
// 1 + 2 (2 + 3 * 3) = 23; a generic sequence axis stands for Z; an
// unknown axis or a description without axes gives nothing.
func TestParseShaped(t *testing.T) {
	l := ParseShaped(`{"shape": [4, 3, 2, 29, 37], "axes": "TZCYX"}`)
	if l == nil || l.SizeT != 4 || l.SizeZ != 3 || l.SizeC != 2 || l.Order != "XYCZT" || !l.Linear {
		t.Fatalf("layout %+v", l)
	}
	if k := l.PlaneIndex(1, 2, 3, 2); k != 23 {
		t.Fatalf("plane index %d, want 23", k)
	}
	if l := ParseShaped(`{"shape": [5, 8, 9, 3], "axes": "QYXS"}`); l == nil || l.SizeZ != 5 {
		t.Fatalf("QYXS: %+v", l)
	}
	for _, d := range []string{`{"shape": [2, 8, 9]}`, `{"shape": [2, 8, 9], "axes": "AYX"}`, `{"shape": [2, 8], "axes": "YX9"}`, `not json`} {
		if ParseShaped(d) != nil {
			t.Fatalf("%s read as a layout", d)
		}
	}
}

// Resolution tags: 2540 pixels per inch is 10 µm (25400 µm to the
// inch), 1000 per centimetre is 10 µm; the screen defaults 72 and 96
// per inch and unitless values give nothing (TIFF 6.0 section 8).
func TestFromResolution(t *testing.T) {
	if c := FromResolution(2540, 2540, 2); math.Abs(c.X-10) > 1e-12 || c.Unit != "µm" {
		t.Fatalf("2540 per inch: %+v", c)
	}
	if c := FromResolution(1000, 500, 3); math.Abs(c.X-10) > 1e-12 || math.Abs(c.Y-20) > 1e-12 {
		t.Fatalf("per centimetre: %+v", c)
	}
	for _, c := range []Calibration{FromResolution(72, 72, 2), FromResolution(96, 96, 2), FromResolution(300, 300, 1), FromResolution(0, 0, 3)} {
		if c.Source != "" {
			t.Fatalf("placeholder resolution read as a calibration: %+v", c)
		}
	}
}
