package pipeline

import (
	"encoding/json"
	"fmt"
	"reflect"
	"slices"
	"strconv"
	"strings"

	"github.com/cleave-seg/cleave/imageio"
)

// Request is the parameters of one segmentation as the user gave them,
// under the names the records, params files and batch indexes use (the
// json tags); "auto" values stay unresolved. The pipeline does not read
// it: it works from Options, and keeps the Request in each record
// ("settings") so that a later run can tell whether a result is current.
type Request struct {
	MaxMegapixels float64 `json:"max-megapixels"`
	Normalize     string  `json:"normalize"`
	Flatten       float64 `json:"flatten"`
	FlattenRadii  float64 `json:"flatten-radii"`
	FlattenMode   string  `json:"flatten-mode"`
	Features      string  `json:"features"`
	Channel       Channel `json:"channel"`
	Plane         int     `json:"plane"`
	Frame         int     `json:"frame"`
	Planes        string  `json:"planes"`
	Superpixels   string  `json:"superpixels"`
	Compactness   float64 `json:"compactness"`
	Radius        int     `json:"radius"`
	SigmaI        string  `json:"sigma-i"`
	SigmaX        string  `json:"sigma-x"`
	Smooth        string  `json:"smooth"`
	Contour       string  `json:"contour"`
	Grain         string  `json:"grain"`
	Method        string  `json:"method"`
	Segments      int     `json:"segments"`
	MaxSegments   int     `json:"max-segments"`
	MaxNcut       float64 `json:"max-ncut"`
	MinArea       int     `json:"min-area"`
	Classes       int     `json:"classes"`
	Background    string  `json:"background"`
	Necks         string  `json:"necks"`
	Faint         int     `json:"faint"`
	PixelSize     float64 `json:"pixel-size"`
	Unit          string  `json:"unit"`
	MaxMemory     string  `json:"max-memory"`
	Seed          uint64  `json:"seed"`
	LabelsFormat  string  `json:"labels-format"`
}

// Values of Request.Planes.
const (
	PlanesOne       = "one"       // the plane Request.Plane
	PlanesAll       = "all"       // every plane on its own
	PlanesBrightest = "brightest" // each pixel's largest value through the planes
)

// LabelsFormatAsked is the label map format asked for: png unless tiff
// was given ("" in records and indexes of earlier versions, which wrote
// PNG).
func (r Request) LabelsFormatAsked() string {
	if r.LabelsFormat == "" {
		return imageio.LabelsPNG
	}
	return r.LabelsFormat
}

// SameRequest reports whether two requests segment and write alike: equal
// but for an unset labels-format, which means png, and an unset necks,
// which means on (records of earlier versions lack the keys), and an
// unset channel, which means all ("-1", as a record reads back).
func SameRequest(a, b Request) bool {
	a.LabelsFormat, b.LabelsFormat = a.LabelsFormatAsked(), b.LabelsFormatAsked()
	a.Necks, b.Necks = a.NecksAsked(), b.NecksAsked()
	a.Channel, b.Channel = Channel(a.Channel.String()), Channel(b.Channel.String())
	return a == b
}

// NecksAsked is whether objects are cut at necks: on unless off was given
// ("" in records and indexes of earlier versions, which always cut at
// necks).
func (r Request) NecksAsked() string {
	if r.Necks == "" {
		return "on"
	}
	return r.Necks
}

// RequestNames lists the names of the parameters of a Request (its json
// tags), sorted.
func RequestNames() []string {
	t := reflect.TypeFor[Request]()
	names := make([]string, t.NumField())
	for i := range names {
		names[i] = jsonName(t.Field(i))
	}
	slices.Sort(names)
	return names
}

// jsonName is the key of a Request field (its json tag).
func jsonName(f reflect.StructField) string {
	name, _, _ := strings.Cut(f.Tag.Get("json"), ",")
	return name
}

// Map is every parameter under its name (the json tag), the values as
// they are (encoding/json writes them as it writes the struct).
func (r Request) Map() map[string]any {
	v := reflect.ValueOf(r)
	m := make(map[string]any, v.NumField())
	for i := range v.NumField() {
		m[jsonName(v.Type().Field(i))] = v.Field(i).Interface()
	}
	return m
}

// ValueText is a parameter's value as a person reads it: text as it is,
// a channel as its index or name, a number as JSON writes it (so that it
// agrees with the params files).
func ValueText(v any) string {
	switch v := v.(type) {
	case string:
		return v
	case Channel:
		if n, ok := v.Index(); ok {
			return strconv.Itoa(n)
		}
		return string(v)
	}
	b, _ := json.Marshal(v)
	return string(b)
}

// Channel is the channel asked for: "-1" for all channels (the default:
// the colours of a colour image, else the first channel), a channel
// index from 0, or a channel name that the file gives (OME-XML). In a
// params file or record it is a number, or a string for a name. Set,
// String and Type let a command parse it as it parses text.
type Channel string

// Set reads a channel: "-1", "all" or "" for all, an index from 0, or a
// name.
func (c *Channel) Set(v string) error {
	v = strings.TrimSpace(v)
	switch v {
	case "", "all", "-1":
		*c = "-1"
		return nil
	}
	if n, err := strconv.Atoi(v); err == nil && n < 0 {
		return fmt.Errorf("a channel is -1 (all), an index from 0 or a channel name, got %d", n)
	}
	*c = Channel(v)
	return nil
}

func (c *Channel) String() string {
	if *c == "" {
		return "-1"
	}
	return string(*c)
}

// Type names the value's kind in a command's help.
func (c *Channel) Type() string { return "channel" }

// Index returns the channel index, -1 for all; ok is false for a name.
func (c Channel) Index() (int, bool) {
	if c == "" {
		return -1, true
	}
	n, err := strconv.Atoi(string(c))
	return n, err == nil
}

// Selection is the channel as imageio.Selection takes it.
func (c Channel) Selection() string {
	if n, ok := c.Index(); ok && n < 0 {
		return ""
	}
	return string(c)
}

func (c Channel) MarshalJSON() ([]byte, error) {
	if n, ok := c.Index(); ok {
		return json.Marshal(n)
	}
	return json.Marshal(string(c))
}

func (c *Channel) UnmarshalJSON(b []byte) error {
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
