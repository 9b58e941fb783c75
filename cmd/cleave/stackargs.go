package main

import (
	"encoding/json"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"github.com/cleave-seg/cleave/imageio"
)

// channelArg is --channel: "-1" for all channels (the default: the
// colours of a colour image, else the first channel), a channel index
// from 0, or a channel name that the file gives (OME-XML). In a params
// file or record it is a number, or a string for a name.
type channelArg string

func (c *channelArg) Set(v string) error {
	v = strings.TrimSpace(v)
	switch v {
	case "", "all", "-1":
		*c = "-1"
		return nil
	}
	if n, err := strconv.Atoi(v); err == nil && n < 0 {
		return fmt.Errorf("a channel is -1 (all), an index from 0 or a channel name, got %d", n)
	}
	*c = channelArg(v)
	return nil
}

func (c *channelArg) String() string {
	if *c == "" {
		return "-1"
	}
	return string(*c)
}

func (c *channelArg) Type() string { return "channel" }

// index returns the channel index, -1 for all; ok is false for a name.
func (c channelArg) index() (int, bool) {
	if c == "" {
		return -1, true
	}
	n, err := strconv.Atoi(string(c))
	return n, err == nil
}

// selection is the channel as imageio.Selection takes it.
func (c channelArg) selection() string {
	if n, ok := c.index(); ok && n < 0 {
		return ""
	}
	return string(c)
}

func (c channelArg) MarshalJSON() ([]byte, error) {
	if n, ok := c.index(); ok {
		return json.Marshal(n)
	}
	return json.Marshal(string(c))
}

func (c *channelArg) UnmarshalJSON(b []byte) error {
	var n int
	if err := json.Unmarshal(b, &n); err == nil {
		return c.Set(strconv.Itoa(n))
	}
	var s string
	if err := json.Unmarshal(b, &s); err != nil {
		return fmt.Errorf("channel must be a number or a channel name")
	}
	return c.Set(s)
}

// Values of --planes.
const (
	planesOne       = "one"
	planesAll       = "all"
	planesBrightest = "brightest"
)

// selectionOf turns the stack flags into an imageio.Selection.
func selectionOf(s settings) (imageio.Selection, error) {
	sel := imageio.Selection{Channel: s.Channel.selection(), Plane: s.Plane, Frame: s.Frame}
	if s.Plane < 0 {
		return sel, usagef("--plane must be a plane index from 0, got %d", s.Plane)
	}
	if s.Frame < 0 {
		return sel, usagef("--frame must be a time point index from 0, got %d", s.Frame)
	}
	switch s.Planes {
	case "", planesOne, planesAll:
	case planesBrightest:
		sel.Brightest = true
	default:
		return sel, usagef("--planes must be one, all or brightest, got %q", s.Planes)
	}
	return sel, nil
}

// stackInfo is what the record says of a file's stack and of the part
// that was segmented.
type stackInfo struct {
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

// pixelSizeInfo is the pixel size the region table used and where it
// came from: "flag" (--pixel-size, or a params file), or what the file
// states ("ome-xml", "hyperstack description", "resolution tags").
type pixelSizeInfo struct {
	Size   float64 `json:"size"`
	SizeY  float64 `json:"size_y,omitempty"`
	Unit   string  `json:"unit"`
	Source string  `json:"source"`
}

func stackInfoOf(u *imageio.Used) *stackInfo {
	if u == nil {
		return nil
	}
	st := u.Stack
	return &stackInfo{Channels: st.Channels, Planes: st.Planes, Frames: st.Frames, ChannelNames: st.ChannelNames, Layout: st.Layout,
		Channel: u.Channel, ChannelName: u.ChannelName, Plane: u.Plane, Frame: u.Frame}
}

// stackWarnings says which images of the file were not segmented: other
// channels ("unused-channels"), other planes or time points
// ("unused-pages"). Every plane of --planes all is used, across the
// records of the stack.
func stackWarnings(info inputInfo, s settings) []warningInfo {
	var out []warningInfo
	st := info.Stack
	if st == nil {
		if info.Pages > 1 {
			out = append(out, warningInfo{Code: "unused-pages", Message: fmt.Sprintf(
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
		out = append(out, warningInfo{Code: "unused-channels", Message: fmt.Sprintf(
			"the file holds %d channels%s; channel %d%s was segmented; choose another with --channel (an index or a name)", st.Channels, names, st.Channel, name)})
	}
	var parts, used []string
	if st.Planes > 1 && s.Planes != planesAll && st.Plane >= 0 {
		parts = append(parts, plural(st.Planes, "plane"))
		used = append(used, fmt.Sprintf("plane %d", st.Plane))
	}
	if st.Frames > 1 {
		parts = append(parts, plural(st.Frames, "time point"))
		used = append(used, fmt.Sprintf("time point %d", st.Frame))
	}
	if len(parts) > 0 {
		out = append(out, warningInfo{Code: "unused-pages", Message: fmt.Sprintf(
			"the file holds %d images (%s); only %s was segmented; choose with --plane and --frame, segment every plane with --planes all, or their brightest values with --planes brightest",
			st.Channels*st.Planes*st.Frames, strings.Join(parts, ", "), strings.Join(used, " at "))})
	}
	return out
}

// pixelSizeFor resolves the pixel size of the region table: the flag
// when given, else the file's, in --unit when that was given and both
// units are metric lengths, else in the file's unit.
func pixelSizeFor(s settings, cal imageio.Calibration) *pixelSizeInfo {
	if s.PixelSize > 0 {
		u := s.Unit
		if u == "" {
			u = defaultUnit
		}
		return &pixelSizeInfo{Size: s.PixelSize, Unit: u, Source: "flag"}
	}
	if !(cal.PixelSize > 0) {
		return nil
	}
	p := &pixelSizeInfo{Size: cal.PixelSize, Unit: cal.Unit, Source: cal.Source}
	if cal.PixelSizeY != cal.PixelSize {
		p.SizeY = cal.PixelSizeY
	}
	if s.Unit != "" && s.Unit != cal.Unit {
		from, ok1 := metres[cal.Unit]
		to, ok2 := metres[s.Unit]
		if ok1 && ok2 {
			f := from / to
			p.Size, p.SizeY, p.Unit = p.Size*f, p.SizeY*f, s.Unit
		}
	}
	if checkUnit(p.Unit) != nil || !(p.Size >= minPixelSize && p.Size <= maxPixelSize) || math.IsInf(p.Size, 0) {
		return nil
	}
	return p
}

// defaultUnit is the unit of a --pixel-size given without --unit.
const defaultUnit = "um"

// metres is the length of the metric units in metres (OME's
// UnitsLength symbols and their ASCII spellings).
var metres = map[string]float64{
	"m": 1, "dm": 1e-1, "cm": 1e-2, "mm": 1e-3, "µm": 1e-6, "um": 1e-6, "μm": 1e-6, "nm": 1e-9, "pm": 1e-12,
}

// expandPlanes makes one job per plane of the image of j (--planes all):
// plane z is written as STEM.zNNN.* (three digits at least, more when
// the stack needs them, so that names sort in plane order).
func expandPlanes(j job) ([]job, error) {
	src, err := imageio.Open(j.path, j.resolved.load)
	if err != nil {
		return nil, err
	}
	n := src.Stack().Planes
	src.Close()
	out := make([]job, n)
	for z := range out {
		r := *j.resolved
		r.selection.Plane = z
		q := j
		q.resolved = &r
		q.out.stem = planeStem(j.out.stem, z, n)
		out[z] = q
	}
	return out, nil
}

// planeStem is the output stem of plane z of a stack of n planes:
// STEM.zNNN, three digits at least, more when the stack needs them, so
// that names sort in plane order.
func planeStem(stem string, z, n int) string {
	return fmt.Sprintf("%s.z%0*d", stem, max(3, len(strconv.Itoa(n-1))), z)
}

// stackSummary is STEM.stack.json, written after every plane of a stack
// was segmented on its own (--planes all).
type stackSummary struct {
	Tool    string       `json:"tool"`
	Version string       `json:"version"`
	Input   string       `json:"input"`
	Planes  int          `json:"planes"`
	Failed  int          `json:"failed"`
	Results []planeEntry `json:"results"`
}

// planeEntry is one plane's outcome in the stack summary.
type planeEntry struct {
	Plane    int     `json:"plane"`
	Status   string  `json:"status"`
	Record   string  `json:"record"`
	Regions  int     `json:"regions"`
	Objects  int     `json:"objects"`
	Warnings int     `json:"warnings"`
	Seconds  float64 `json:"seconds"`
	Error    string  `json:"error,omitempty"`
}

func stackSummaryOf(path string, jobs []job, recs []*record, idx []int) *stackSummary {
	s := &stackSummary{Tool: "cleave", Version: version, Input: path, Planes: len(idx), Results: []planeEntry{}}
	for _, k := range idx {
		e := planeEntry{Plane: jobs[k].resolved.selection.Plane, Status: "failed", Record: jobs[k].out.stem + ".json"}
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

func writeStackSummary(path string, s *stackSummary, force bool) error {
	return imageio.WriteAtomicAs(path, force, "", func(w io.Writer) error {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(s)
	})
}
