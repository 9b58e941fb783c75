package pipeline

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"

	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/segment"
)

// StackInfo is what the record says of a file's stack and of the part
// that was segmented.
type StackInfo struct {
	Channels     int      `json:"channels"`
	Planes       int      `json:"planes"`
	Frames       int      `json:"frames"`
	ChannelNames []string `json:"channel_names,omitempty"`
	Layout       string   `json:"layout,omitempty"` // ome-xml, hyperstack description, pages
	// Channel segmented: -1 for the colours of a colour image.
	Channel     int    `json:"channel"`
	ChannelName string `json:"channel_name,omitempty"`
	// Plane segmented: -1 for the brightest value through the planes.
	Plane int `json:"plane"`
	Frame int `json:"frame"`
}

// PixelSizeInfo is the pixel size the region table used and where it
// came from: "flag" (the pixel size asked for: Options.PixelSize), or what the file
// states ("ome-xml", "hyperstack description", "resolution tags").
type PixelSizeInfo struct {
	Size   float64 `json:"size"`
	SizeY  float64 `json:"size_y,omitempty"`
	Unit   string  `json:"unit"`
	Source string  `json:"source"`
}

func stackInfoOf(u *imageio.Used) *StackInfo {
	if u == nil {
		return nil
	}
	st := u.Stack
	return &StackInfo{Channels: st.Channels, Planes: st.Planes, Frames: st.Frames, ChannelNames: st.ChannelNames, Layout: st.Layout,
		Channel: u.Channel, ChannelName: u.ChannelName, Plane: u.Plane, Frame: u.Frame}
}

// stackWarnings says which images of the file were not segmented: other
// channels ("unused-channels"), other planes or time points
// ("unused-pages"), in the words of v. With everyPlane (each plane
// segmented on its own) every plane is used, across the records of the
// stack.
func stackWarnings(info InputInfo, everyPlane bool, v Voice) []WarningInfo {
	var out []WarningInfo
	st := info.Stack
	if st == nil {
		if info.Pages > 1 {
			out = append(out, WarningInfo{Code: "unused-pages", Message: fmt.Sprintf(
				"the file holds %d images (pages); only the first was segmented", info.Pages)})
		}
		return out
	}
	if st.Channels > 1 && st.Channel >= 0 {
		name := ""
		if st.ChannelName != "" {
			name = fmt.Sprintf(" (%s)", st.ChannelName)
		}
		names := ""
		if len(st.ChannelNames) > 0 {
			names = ": " + strings.Join(st.ChannelNames, ", ")
		}
		out = append(out, WarningInfo{Code: "unused-channels", Message: v.Msg(fmt.Sprintf(
			"the file holds %d channels%s; channel %d%s was segmented; choose another with `channel` (an index or a name)", st.Channels, names, st.Channel, name))})
	}
	var parts, used []string
	if st.Planes > 1 && !everyPlane && st.Plane >= 0 {
		parts = append(parts, Plural(st.Planes, "plane"))
		used = append(used, fmt.Sprintf("plane %d", st.Plane))
	}
	if st.Frames > 1 {
		parts = append(parts, Plural(st.Frames, "time point"))
		used = append(used, fmt.Sprintf("time point %d", st.Frame))
	}
	if len(parts) > 0 {
		out = append(out, WarningInfo{Code: "unused-pages", Message: v.Msg(fmt.Sprintf(
			"the file holds %d images (%s); only %s was segmented; choose with `plane` and `frame`, segment every plane with `planes` all, or their brightest values with `planes` brightest",
			st.Channels*st.Planes*st.Frames, strings.Join(parts, ", "), strings.Join(used, " at ")))})
	}
	return out
}

// pixelSizeFor resolves the pixel size of the region table: size (in
// unit) when given, else the file's, in unit when that was given and
// both units are metric lengths, else in the file's unit.
func pixelSizeFor(size float64, unit string, cal imageio.Calibration) *PixelSizeInfo {
	if size > 0 {
		u := unit
		if u == "" {
			u = DefaultUnit
		}
		return &PixelSizeInfo{Size: size, Unit: u, Source: "flag"}
	}
	if !(cal.PixelSize > 0) {
		return nil
	}
	p := &PixelSizeInfo{Size: cal.PixelSize, Unit: cal.Unit, Source: cal.Source}
	if cal.PixelSizeY != cal.PixelSize {
		p.SizeY = cal.PixelSizeY
	}
	if unit != "" && unit != cal.Unit {
		from, ok1 := metres[cal.Unit]
		to, ok2 := metres[unit]
		if ok1 && ok2 {
			f := from / to
			p.Size, p.SizeY, p.Unit = p.Size*f, p.SizeY*f, unit
		}
	}
	if CheckUnit(p.Unit) != nil || !(p.Size >= MinPixelSize && p.Size <= MaxPixelSize) || math.IsInf(p.Size, 0) {
		return nil
	}
	return p
}

// DefaultUnit is the unit of a pixel size given without a unit.
const DefaultUnit = "um"

// metres is the length of the metric units in metres (OME's
// UnitsLength symbols and their ASCII spellings).
var metres = map[string]float64{
	"m": 1, "dm": 1e-1, "cm": 1e-2, "mm": 1e-3, "µm": 1e-6, "um": 1e-6, "μm": 1e-6, "nm": 1e-9, "pm": 1e-12,
}

// ExpandPlanes makes one job per plane of the image of j (every plane
// segmented on its own):
// plane z is written as STEM.zNNN.* (three digits at least, more when
// the stack needs them, so that names sort in plane order).
func ExpandPlanes(j Job) ([]Job, error) {
	src, err := imageio.Open(j.Path, j.Options.Load)
	if err != nil {
		return nil, err
	}
	n := src.Stack().Planes
	src.Close()
	out := make([]Job, n)
	for z := range out {
		o := *j.Options
		o.Selection.Plane = z
		q := j
		q.Options = &o
		q.Out.Stem = PlaneStem(j.Out.Stem, z, n)
		out[z] = q
	}
	return out, nil
}

// PlaneStem is the output stem of plane z of a stack of n planes:
// STEM.zNNN, three digits at least, more when the stack needs them, so
// that names sort in plane order.
func PlaneStem(stem string, z, n int) string {
	return fmt.Sprintf("%s.z%0*d", stem, max(3, len(strconv.Itoa(n-1))), z)
}

// StackSummary is STEM.stack.json, written after every plane of a stack
// was segmented on its own.
type StackSummary struct {
	Tool    string       `json:"tool"`
	Version string       `json:"version"`
	Input   string       `json:"input"`
	Planes  int          `json:"planes"`
	Failed  int          `json:"failed"`
	Results []PlaneEntry `json:"results"`
}

// PlaneEntry is one plane's outcome in the stack summary.
type PlaneEntry struct {
	Plane    int     `json:"plane"`
	Status   string  `json:"status"`
	Record   string  `json:"record"`
	Regions  int     `json:"regions"`
	Objects  int     `json:"objects"`
	Warnings int     `json:"warnings"`
	Seconds  float64 `json:"seconds"`
	Error    string  `json:"error,omitempty"`
}

// StackSummaryOf summarizes the jobs idx of jobs, the planes of the
// image at path, from their records recs (nil where none was made).
func StackSummaryOf(path string, jobs []Job, recs []*Record, idx []int) *StackSummary {
	s := &StackSummary{Tool: "cleave", Version: jobs[idx[0]].Voice.Version, Input: path, Planes: len(idx), Results: []PlaneEntry{}}
	for _, k := range idx {
		e := PlaneEntry{Plane: jobs[k].Options.Selection.Plane, Status: "failed", Record: jobs[k].Out.Stem + ".json"}
		if r := recs[k]; r != nil {
			e.Status, e.Regions, e.Objects, e.Warnings, e.Seconds, e.Error = r.Status, r.Regions, r.Objects, len(r.Warnings), r.Seconds["total"], r.Error
		}
		if e.Status != "ok" {
			s.Failed++
		}
		s.Results = append(s.Results, e)
	}
	return s
}

// WriteStackSummary writes the summary atomically.
func WriteStackSummary(path string, s *StackSummary, force bool) error {
	return imageio.WriteAtomicAs(path, force, "", func(w io.Writer) error {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(s)
	})
}

// Ranges of the region table's pixel size: areas in unit^2 stay finite
// and above zero in float64.
const MinPixelSize, MaxPixelSize = 1e-9, 1e9

// MaxUnitLen is the longest unit name, in characters.
const MaxUnitLen = 16

// Errors of CheckUnit.
var (
	ErrUnitChars  = errors.New("unit must be a short unit name (letters, digits, µ, /, ^ or _)")
	ErrUnitLength = fmt.Errorf("unit must be a unit name of 1 to %d characters", MaxUnitLen)
)

// CheckUnit accepts a short unit name for the region table's column
// names: 1 to MaxUnitLen letters (µ included), digits, '/', '^' or '_'.
// No such name needs CSV quoting or can start a spreadsheet formula.
func CheckUnit(unit string) error {
	n := 0
	for _, r := range unit {
		n++
		if !unicode.IsLetter(r) && !unicode.IsDigit(r) && !strings.ContainsRune("µ/^_", r) {
			return ErrUnitChars
		}
	}
	if n == 0 || n > MaxUnitLen || !utf8.ValidString(unit) {
		return ErrUnitLength
	}
	return nil
}

// ChannelNames returns the names of the colour channels of a
// three-channel image in the region table's columns; the slice is the
// caller's.
func ChannelNames() []string { return []string{"red", "green", "blue"} }

// intensityPlanes are the planes measured in the region table, in the
// image's own units: the intensity plane (the luma, or the channel
// chosen) and, for a colour image, each of its channels; names are the
// column suffixes ("" for the intensity plane).
func intensityPlanes(raw []float32, channels [][]float32) (planes [][]float32, names []string) {
	planes, names = [][]float32{raw}, []string{""}
	if rgb := ChannelNames(); len(channels) == len(rgb) {
		for c, p := range channels {
			planes, names = append(planes, p), append(names, "_"+rgb[c])
		}
	}
	return planes, names
}

// usedParams is the parameter set as used on one image, automatic values
// resolved, under the parameters' names: the "params" of the JSON record,
// and a valid params file that reproduces the run.
func usedParams(r Request, p segment.Params) map[string]any {
	m := r.Map()
	m["sigma-i"] = p.SigmaI
	m["sigma-x"] = p.SigmaX
	m["smooth"] = p.Smooth
	m["superpixels"] = p.Superpixels
	if p.Grain {
		m["grain-angle"] = p.GrainModel.Angle * 180 / math.Pi
		m["grain-share"] = p.GrainModel.Share
		m["grain-length"] = p.GrainModel.Length
	}
	return m
}

func nonNil(v []float64) []float64 {
	if v == nil {
		return []float64{}
	}
	return v
}

// DescribeErr is the system's message of a file error without the path
// (the caller names the file).
func DescribeErr(err error) string {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return pe.Err.Error()
	}
	return err.Error()
}

// Plural formats a count with its noun: "1 region", "3 regions".
func Plural(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	return fmt.Sprintf("%d %ss", n, noun)
}

// IsImageName reports whether a file name has the extension of an image
// imageio reads (imageio.Extensions), in any case.
func IsImageName(name string) bool {
	return slices.Contains(imageio.Extensions(), strings.ToLower(filepath.Ext(name)))
}
