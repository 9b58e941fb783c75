// Package tiffmeta reads the stack layout and the pixel size that TIFF
// files carry as text or tags: OME-XML in the first ImageDescription (the
// OME data model, schema 2016-06, element Pixels and its Channel and
// TiffData children), the key=value description that array and imaging
// software writes for hyperstacks (images=, channels=, slices=, frames=,
// spacing=, unit=), and the resolution tags of TIFF 6.0 section 8
// (XResolution, YResolution, ResolutionUnit).
package tiffmeta

import (
	"encoding/json"
	"encoding/xml"
	"fmt"
	"math"
	"strconv"
	"strings"
)

// Layout is how the pages of a file hold channels (C), planes (Z) and
// time points (T).
type Layout struct {
	// Source names where the layout came from: "ome-xml",
	// "hyperstack description", "shape description" or "" when none
	// was found.
	Source string
	// SizeC, SizeZ, SizeT count channels, planes and time points as the
	// metadata states them. For OME, SizeC counts samples: an RGB image
	// has SizeC 3 in one page.
	SizeC, SizeZ, SizeT int
	// Order is the OME DimensionOrder (XYZCT, XYZTC, XYCTZ, XYCZT,
	// XYTCZ, XYTZC): the dimension after XY varies fastest among the
	// pages. The hyperstack description always has XYCZT.
	Order string
	// ChannelNames, when the metadata names them, one per channel.
	ChannelNames []string
	// IFD maps a plane index (c, z, t in Order, see PlaneIndex) to the
	// page that holds it; nil means plane k is page k.
	IFD map[int]int
	// Calibration is the pixel size the metadata states, if any.
	Calibration Calibration
	// Linear says that plane k is sample k mod n of page k div n, for
	// pages of n samples (ParseShaped), rather than page k.
	Linear bool
}

// Calibration is a physical pixel size.
type Calibration struct {
	X, Y   float64 // size of one pixel across and down, in Unit; 0 = unknown
	Unit   string
	Source string // "ome-xml", "hyperstack description" or "resolution tags"
}

// PlaneIndex is the position of plane (c, z, t) in the page sequence of
// a layout with pc channels in pages, by Order: the letter after XY
// varies fastest (OME schema, Pixels/DimensionOrder).
func (l *Layout) PlaneIndex(c, z, t, pc int) int {
	size := map[byte]int{'C': pc, 'Z': l.SizeZ, 'T': l.SizeT}
	at := map[byte]int{'C': c, 'Z': z, 'T': t}
	order := l.Order
	if len(order) != 5 {
		order = "XYCZT"
	}
	idx, stride := 0, 1
	for i := 2; i < 5; i++ {
		d := order[i]
		idx += at[d] * stride
		stride *= max(size[d], 1)
	}
	return idx
}

// omeDoc is the part of an OME-XML document read here (OME schema
// 2016-06: OME/Image/Pixels with its attributes, Channel and TiffData
// elements). Namespaces are ignored: files of older schema versions use
// the same names.
type omeDoc struct {
	Images []struct {
		Pixels struct {
			DimensionOrder    string  `xml:"DimensionOrder,attr"`
			SizeC             int     `xml:"SizeC,attr"`
			SizeZ             int     `xml:"SizeZ,attr"`
			SizeT             int     `xml:"SizeT,attr"`
			PhysicalSizeX     float64 `xml:"PhysicalSizeX,attr"`
			PhysicalSizeXUnit string  `xml:"PhysicalSizeXUnit,attr"`
			PhysicalSizeY     float64 `xml:"PhysicalSizeY,attr"`
			PhysicalSizeYUnit string  `xml:"PhysicalSizeYUnit,attr"`
			Channels          []struct {
				Name            string `xml:"Name,attr"`
				SamplesPerPixel int    `xml:"SamplesPerPixel,attr"`
			} `xml:"Channel"`
			TiffData []struct {
				IFD        *int `xml:"IFD,attr"`
				FirstC     int  `xml:"FirstC,attr"`
				FirstZ     int  `xml:"FirstZ,attr"`
				FirstT     int  `xml:"FirstT,attr"`
				PlaneCount *int `xml:"PlaneCount,attr"`
				UUID       *struct {
					FileName string `xml:"FileName,attr"`
				} `xml:"UUID"`
			} `xml:"TiffData"`
		} `xml:"Pixels"`
	} `xml:"Image"`
}

// maxDim bounds SizeC, SizeZ, SizeT and their product.
const maxDim = 1 << 20

// ParseOME reads the first Image of an OME-XML document. PhysicalSizeX
// and Y are in PhysicalSizeXUnit and YUnit, micrometres when absent (the
// schema's default). Only TiffData blocks of this file (no UUID naming
// another file) map planes to pages.
func ParseOME(doc string) (*Layout, error) {
	var d omeDoc
	if err := xml.Unmarshal([]byte(doc), &d); err != nil {
		return nil, fmt.Errorf("OME-XML description: %w", err)
	}
	if len(d.Images) == 0 {
		return nil, fmt.Errorf("OME-XML description has no Image")
	}
	px := d.Images[0].Pixels
	l := &Layout{Source: "ome-xml", SizeC: max(px.SizeC, 1), SizeZ: max(px.SizeZ, 1), SizeT: max(px.SizeT, 1), Order: px.DimensionOrder}
	if l.SizeC > maxDim || l.SizeZ > maxDim || l.SizeT > maxDim || l.SizeC*l.SizeZ*l.SizeT > maxDim {
		return nil, fmt.Errorf("OME-XML description: %d x %d x %d planes", l.SizeC, l.SizeZ, l.SizeT)
	}
	switch l.Order {
	case "XYZCT", "XYZTC", "XYCTZ", "XYCZT", "XYTCZ", "XYTZC":
	default:
		return nil, fmt.Errorf("OME-XML description: DimensionOrder %q is none of the six the schema allows", l.Order)
	}
	names := false
	for _, c := range px.Channels {
		l.ChannelNames = append(l.ChannelNames, c.Name)
		names = names || c.Name != ""
	}
	if !names {
		l.ChannelNames = nil
	}
	if px.PhysicalSizeX > 0 && !math.IsInf(px.PhysicalSizeX, 0) {
		ux, uy := omeUnit(px.PhysicalSizeXUnit), omeUnit(px.PhysicalSizeYUnit)
		y := px.PhysicalSizeY
		if !(y > 0) || math.IsInf(y, 0) {
			y, uy = px.PhysicalSizeX, ux
		}
		if ux == uy {
			l.Calibration = Calibration{X: px.PhysicalSizeX, Y: y, Unit: ux, Source: "ome-xml"}
		}
	}
	if len(px.TiffData) > 0 {
		l.IFD = map[int]int{}
		pc := l.SizeC // planes are counted per channel here; samples per pixel are handled by the caller
		for _, td := range px.TiffData {
			if td.UUID != nil && td.UUID.FileName != "" {
				continue // a plane in another file
			}
			ifd := 0
			if td.IFD != nil {
				ifd = *td.IFD
			}
			n := 1
			if td.PlaneCount != nil {
				n = *td.PlaneCount
			} else if td.IFD == nil && td.FirstC == 0 && td.FirstZ == 0 && td.FirstT == 0 {
				n = l.SizeC * l.SizeZ * l.SizeT // a bare TiffData: every plane, from page 0
			}
			start := l.PlaneIndex(td.FirstC, td.FirstZ, td.FirstT, pc)
			if n < 0 || n > maxDim || ifd < 0 || ifd > maxDim {
				return nil, fmt.Errorf("OME-XML description: TiffData with IFD %d and PlaneCount %d", ifd, n)
			}
			for k := 0; k < n; k++ {
				l.IFD[start+k] = ifd + k
			}
		}
		if len(l.IFD) == 0 {
			l.IFD = nil
		}
	}
	return l, nil
}

// omeUnit is the schema's UnitsLength symbol, µm when absent.
func omeUnit(u string) string {
	if u == "" {
		return "µm"
	}
	return u
}

// ParseHyperstack reads the key=value lines that array and imaging
// software write as the ImageDescription of a hyperstack (images=N,
// channels=C, slices=Z, frames=T, spacing=, unit=); planes are stored
// with the channel varying fastest, then the slice, then the frame.
// It returns nil when the text is not such a description.
func ParseHyperstack(desc string) *Layout {
	if !strings.Contains(desc, "images=") && !strings.Contains(desc, "channels=") && !strings.Contains(desc, "slices=") && !strings.Contains(desc, "frames=") {
		return nil
	}
	kv := map[string]string{}
	for _, line := range strings.Split(desc, "\n") {
		k, v, ok := strings.Cut(strings.TrimSpace(line), "=")
		if ok {
			kv[k] = v
		}
	}
	if _, ok := kv["images"]; !ok {
		return nil
	}
	n := func(k string) int {
		v, err := strconv.Atoi(kv[k])
		if err != nil || v < 1 || v > maxDim {
			return 1
		}
		return v
	}
	l := &Layout{Source: "hyperstack description", SizeC: n("channels"), SizeZ: n("slices"), SizeT: n("frames"), Order: "XYCZT"}
	if l.SizeC*l.SizeZ*l.SizeT > maxDim {
		return nil
	}
	if u := kv["unit"]; u != "" {
		l.Calibration.Unit = HyperstackUnit(u)
	}
	return l
}

// HyperstackUnit turns the unit of a hyperstack description into a
// symbol: "micron" and the escaped "\u00B5m" become µm.
func HyperstackUnit(u string) string {
	u = strings.TrimSpace(u)
	switch strings.ToLower(u) {
	case "micron", "microns", "um", `\u00b5m`, "µm", "μm":
		return "µm"
	case "pixel", "pixels":
		return ""
	}
	return u
}

// FromResolution turns XResolution and YResolution (pixels per unit)
// with ResolutionUnit (1 none, 2 inch, 3 centimetre; TIFF 6.0 section 8)
// into a pixel size in micrometres. A missing or unitless resolution, or
// 72 or 96 pixels per inch (the screen defaults many writers store
// whatever the image), gives no calibration.
func FromResolution(xres, yres float64, unit int) Calibration {
	if !(xres > 0) || math.IsInf(xres, 0) {
		return Calibration{}
	}
	if !(yres > 0) || math.IsInf(yres, 0) {
		yres = xres
	}
	var um float64
	switch unit {
	case 2:
		if xres == 72 || xres == 96 {
			return Calibration{}
		}
		um = 25400
	case 3:
		um = 10000
	default:
		return Calibration{}
	}
	return Calibration{X: um / xres, Y: um / yres, Unit: "µm", Source: "resolution tags"}
}

// ParseShaped reads the JSON description that python's tifffile writes
// for arrays it saves without other metadata: {"shape": [...], "axes":
// "..."}, the array's shape and one letter per dimension, stored in
// row-major order (the last dimension before the image's rows varies
// fastest). It returns nil without axes, or when the axes hold anything
// but channel (C), plane (Z), time (T) and one generic sequence axis
// (I or Q, read as planes when there is no Z) before Y, X and an
// optional sample axis S. Without S the layout's planes count the
// samples of a pixel as well as pages (Linear): tifffile stores a short
// leading dimension as the samples of each page (even tagging three of
// them RGB); with S every page is a plane.
func ParseShaped(desc string) *Layout {
	var d struct {
		Shape []int  `json:"shape"`
		Axes  string `json:"axes"`
	}
	if err := json.Unmarshal([]byte(desc), &d); err != nil || d.Axes == "" || len(d.Axes) != len(d.Shape) {
		return nil
	}
	axes := strings.ToUpper(d.Axes)
	shape := d.Shape
	samples := strings.HasSuffix(axes, "S")
	if samples {
		axes, shape = axes[:len(axes)-1], shape[:len(shape)-1]
	}
	if !strings.HasSuffix(axes, "YX") {
		return nil
	}
	axes, shape = axes[:len(axes)-2], shape[:len(shape)-2]
	if !strings.ContainsRune(axes, 'Z') {
		if i := strings.IndexAny(axes, "IQ"); i >= 0 {
			axes = axes[:i] + "Z" + axes[i+1:]
		}
	}
	l := &Layout{Source: "shape description", SizeC: 1, SizeZ: 1, SizeT: 1, Linear: true}
	seen := map[rune]bool{}
	order := ""
	for i := len(axes) - 1; i >= 0; i-- {
		a := rune(axes[i])
		n := shape[i]
		if seen[a] || n < 1 || n > maxDim {
			return nil
		}
		seen[a] = true
		switch a {
		case 'C':
			l.SizeC = n
		case 'Z':
			l.SizeZ = n
		case 'T':
			l.SizeT = n
		default:
			return nil
		}
		order += string(a)
	}
	for _, a := range "CZT" {
		if !seen[a] {
			order += string(a)
		}
	}
	if l.SizeC*l.SizeZ*l.SizeT > maxDim {
		return nil
	}
	l.Order = "XY" + order
	l.Linear = !samples
	return l
}
