package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/examples/loudskip"
)

// A result the user should check is flagged on stderr, in the summary line
// and in the record, with the command's flags in the advice; a clean
// result has an empty warnings list. A generated nuclei scene has bright
// nuclei on a dark field: with --min-area above the image nothing can be
// split, and with --background bright the dark field is taken for one
// object over the image.
func TestSegmentWarnings(t *testing.T) {
	dir := t.TempDir()
	sc := writeNuclei(t, dir, 31, 1, 128)[0]
	img := filepath.Join(dir, sc.Name+".png")
	for _, c := range []struct {
		name string
		args []string
		code string // "" = no warning
		flag string // a flag the advice must name
	}{
		{"clean", []string{"--classes", "2", "--background", "dark"}, "", ""},
		{"min-area", []string{"--min-area", "100000"}, "no-split", "--min-area"},
		{"polarity", []string{"--classes", "2", "--background", "bright"}, "one-object", "--background"},
	} {
		t.Run(c.name, func(t *testing.T) {
			out := filepath.Join(dir, c.name)
			code, stdout, stderr := runCleave(append([]string{"segment", "--out", out}, append(c.args, img)...)...)
			if code != 0 {
				t.Fatalf("exit %d: %s", code, stderr)
			}
			data, err := os.ReadFile(filepath.Join(out, sc.Name+".json"))
			if err != nil {
				t.Fatal(err)
			}
			var rec struct {
				Warnings []pipeline.WarningInfo `json:"warnings"`
			}
			if err := json.Unmarshal(data, &rec); err != nil {
				t.Fatal(err)
			}
			if !strings.Contains(string(data), `"warnings": [`) {
				t.Errorf("record has no warnings list:\n%s", data)
			}
			if c.code == "" {
				if len(rec.Warnings) != 0 || strings.Contains(stderr, "warning") || strings.Contains(stdout, "warning") {
					t.Fatalf("clean result warned: %+v\n%s", rec.Warnings, stderr)
				}
				return
			}
			if len(rec.Warnings) == 0 || rec.Warnings[0].Code != c.code {
				t.Fatalf("warnings %+v, want code %s", rec.Warnings, c.code)
			}
			msg := rec.Warnings[0].Message
			if !strings.Contains(msg, c.flag) || strings.Contains(msg, "`") {
				t.Errorf("advice should name %s as a flag: %s", c.flag, msg)
			}
			if !strings.Contains(stderr, img+": warning: "+msg) {
				t.Errorf("stderr lacks the warning:\n%s", stderr)
			}
			if !strings.Contains(stdout, "warning") {
				t.Errorf("summary line does not mention the warning: %s", stdout)
			}
		})
	}
}

// flagQuoted turns backquoted parameter names into flags and leaves other
// text alone.
func TestFlagQuoted(t *testing.T) {
	for in, want := range map[string]string{
		"raise `max-ncut` above 0.3":          "raise --max-ncut above 0.3",
		"the dark class, taken as background": "the dark class, taken as background",
		"try `flatten` or `classes` 3":        "try --flatten or --classes 3",
	} {
		if got := flagQuoted(in); got != want {
			t.Errorf("flagQuoted(%q) = %q, want %q", in, got, want)
		}
	}
}

// A multi-page TIFF (scikit-image's _blobs_3d_fiji_skeleton.tif, a stack
// of 30 pages by python3-tifffile's count) is segmented from its first
// page, and the record and stderr say so.
func TestSegmentWarnsUnusedPages(t *testing.T) {
	const img = "/usr/lib/python3/dist-packages/skimage/data/_blobs_3d_fiji_skeleton.tif"
	if _, err := os.Stat(img); err != nil {
		loudskip.Skip(t, "scikit-image data not installed (apt-get install -y python3-skimage); the unused-pages warning was not checked: %v", err)
	}
	out := t.TempDir()
	code, _, stderr := runCleave("segment", "--out", out, img)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	data, err := os.ReadFile(filepath.Join(out, "_blobs_3d_fiji_skeleton.json"))
	if err != nil {
		t.Fatal(err)
	}
	var rec pipeline.Record
	if err := json.Unmarshal(data, &rec); err != nil {
		t.Fatal(err)
	}
	if rec.Input.Pages != 30 || len(rec.Warnings) == 0 || rec.Warnings[0].Code != "unused-pages" || !strings.Contains(rec.Warnings[0].Message, "30 images") {
		t.Fatalf("pages %d, warnings %+v", rec.Input.Pages, rec.Warnings)
	}
	if !strings.Contains(stderr, "only plane 0 was segmented") || !strings.Contains(stderr, "--planes all") {
		t.Errorf("stderr: %s", stderr)
	}
}

// In a batch, a result with warnings is ok and says so: its manifest row
// carries the messages, the report lists them and marks the row, and the
// summary counts it. A blank image (all zero) can only come out as one
// region; a generated nuclei scene segments cleanly.
func TestBatchWarnings(t *testing.T) {
	in := t.TempDir()
	sc := writeNuclei(t, in, 41, 1, 96)[0]
	if err := os.Remove(filepath.Join(in, sc.Name+".truth.png")); err != nil {
		t.Fatal(err)
	}
	writeGrayPNG(t, filepath.Join(in, "blank.png"), 40, 30, false)
	out := filepath.Join(t.TempDir(), "out")
	code, _, stderr := runCleave("batch", in, "--out", out, "--classes", "2", "--background", "dark")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	if !strings.Contains(stderr, "1 with warnings to check") {
		t.Errorf("summary does not count the warned image: %s", stderr)
	}
	rows := readManifest(t, out)
	blank, clean := rows["blank.png"], rows[sc.Name+".png"]
	if blank == nil || clean == nil {
		t.Fatalf("manifest rows %v", rows)
	}
	if blank[1] != "ok" || !strings.Contains(blank[6], "one region") {
		t.Errorf("blank row %q: want ok with the no-split message", blank)
	}
	if clean[1] != "ok" || clean[6] != "" {
		t.Errorf("clean row %q: want ok without warnings", clean)
	}
	html, err := os.ReadFile(filepath.Join(out, "report.html"))
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{`id="warnings"`, "(1 with warnings to check)", `<tr class="warned"><td>blank.png</td><td>ok, 1 warning</td>`} {
		if !strings.Contains(string(html), want) {
			t.Errorf("report lacks %q", want)
		}
	}
}
