package pipeline

import (
	"errors"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/segment"
)

// Sizes: decimal units are powers of 1000, binary ones powers of 1024 (IEC
// 80000-13); expected values worked by hand.
func TestParseBytes(t *testing.T) {
	for _, n := range []int64{8 << 30, 512 << 20, 1000, 3 << 29} {
		if got, err := ParseBytes("max-memory", FormatBytes(n)); err != nil || got != n {
			t.Errorf("%d written as %q reads back as %d, %v", n, FormatBytes(n), got, err)
		}
	}
	if FormatBytes(8<<30) != "8GiB" || FormatBytes(1536<<20) != "1536MiB" {
		t.Errorf("FormatBytes: %q, %q", FormatBytes(8<<30), FormatBytes(1536<<20))
	}
	for in, want := range map[string]int64{"8GiB": 8 << 30, "400MB": 400e6, "512mib": 512 << 20, "1000": 1000, "1.5 GiB": 3 << 29} {
		if got, err := ParseBytes("max-memory", in); err != nil || got != want {
			t.Errorf("%q: %d, %v; want %d", in, got, err, want)
		}
	}
	for _, in := range []string{"", "0", "-1GiB", "GiB", "1e30GB", "0.5", "0.4B", "1e-20KiB"} {
		if _, err := ParseBytes("max-memory", in); err == nil || !strings.Contains(err.Error(), "`max-memory`") {
			t.Errorf("%q: %v, want an error naming `max-memory`", in, err)
		}
	}
}

// Options maps the request to typed options, and each bad value to an
// error naming its parameter: in backquotes for the checks of the
// request, by the library's error type for theirs.
func TestOptions(t *testing.T) {
	o, err := DefaultRequest().Options(3)
	if err != nil {
		t.Fatal(err)
	}
	p := o.Params
	if !p.AutoSigmaI || !p.AutoSigmaX || p.Superpixels != -1 || !p.Contour || p.Grain || p.SeamsOnly || p.Workers != 3 || p.MaxMemory != 8<<30 || o.LabelsFormat != imageio.LabelsPNG {
		t.Errorf("defaults: %+v", o)
	}
	r := DefaultRequest()
	r.SigmaI, r.Superpixels, r.Necks, r.Planes, r.Grain = "0.1", "500", "off", PlanesBrightest, "on"
	if o, err = r.Options(1); err != nil || o.Params.SigmaI != 0.1 || o.Params.AutoSigmaI || o.Params.Superpixels != 500 || !o.Params.SeamsOnly || !o.Selection.Brightest || !o.Params.Grain {
		t.Errorf("given: %+v, %v", o, err)
	}
	for _, c := range []struct {
		name string
		set  func(*Request)
	}{
		{"`max-megapixels`", func(r *Request) { r.MaxMegapixels = 0 }},
		{"`flatten`", func(r *Request) { r.MaxMegapixels, r.Flatten = 1e-6, 2 }},
		{"`contour`", func(r *Request) { r.Contour = "yes" }},
		{"`grain`", func(r *Request) { r.Grain = "1" }},
		{"`necks`", func(r *Request) { r.Necks = "maybe" }},
		{"`sigma-i`", func(r *Request) { r.SigmaI = "wide" }},
		{"`superpixels`", func(r *Request) { r.Superpixels = "1.5" }},
		{"`max-memory`", func(r *Request) { r.MaxMemory = "1KiB" }},
		{"`pixel-size`", func(r *Request) { r.PixelSize = -1 }},
		{"`labels-format`", func(r *Request) { r.LabelsFormat = "jpeg" }},
		{"`unit`", func(r *Request) { r.Unit = "a,b" }},
		{"`plane`", func(r *Request) { r.Plane = -1 }},
		{"`planes`", func(r *Request) { r.Planes = "some" }},
		{"normalize", func(r *Request) { r.Normalize = "zscore" }},
		{"radius", func(r *Request) { r.Radius = 0 }},
	} {
		r := DefaultRequest()
		c.set(&r)
		_, err := r.Options(1)
		var oe *imageio.OptionError
		var pe *segment.ParamError
		switch {
		case err == nil:
			t.Errorf("%s: accepted", c.name)
		case strings.HasPrefix(c.name, "`"):
			if !strings.Contains(err.Error(), c.name) {
				t.Errorf("%s: %v", c.name, err)
			}
		case errors.As(err, &oe):
			if oe.Name != c.name {
				t.Errorf("%s: option error names %s", c.name, oe.Name)
			}
		case errors.As(err, &pe):
			if pe.Name != c.name {
				t.Errorf("%s: param error names %s", c.name, pe.Name)
			}
		default:
			t.Errorf("%s: %v", c.name, err)
		}
	}
}
