package pipeline

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"maps"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"sync"
	"time"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/imageio/render"
	"github.com/cleave-seg/cleave/segment"
	"github.com/cleave-seg/cleave/segment/labelmap"
	"github.com/cleave-seg/cleave/segment/measure"
	"github.com/cleave-seg/cleave/segment/parallel"
)

// InputInfo describes the input file in the record.
type InputInfo struct {
	Path     string `json:"path"`
	SHA256   string `json:"sha256"`
	Format   string `json:"format"`
	Width    int    `json:"width"`
	Height   int    `json:"height"`
	Channels int    `json:"channels"`
	BitDepth int    `json:"bit_depth"`
	HasAlpha bool   `json:"has_alpha"`
	Pages    int    `json:"pages"` // images (pages) in the file
	// SampleType is "int" or "float" for signed or floating-point TIFF
	// samples; empty for unsigned integers.
	SampleType string `json:"sample_type,omitempty"`
	// Stack describes the channels, planes and time points of a TIFF
	// and which were segmented.
	Stack *StackInfo `json:"stack,omitempty"`
	// PixelSize is the pixel size of the region table and its source.
	PixelSize *PixelSizeInfo `json:"pixel_size,omitempty"`
	// InvalidPixels counts floating-point pixels that are NaN or
	// infinite: they join no region (label 0).
	InvalidPixels int `json:"invalid_pixels,omitempty"`
	// Flatten is the shading-correction scale in pixels that
	// flatten-radii chose for this image (its object radius times
	// flatten-radii), 0 when it was not flattened; FlattenRadius is the
	// object radius it was taken from. Absent without flatten-radii.
	Flatten       float64 `json:"flatten,omitempty"`
	FlattenRadius float64 `json:"flatten_radius,omitempty"`
}

// Record is STEM.json: what was read, what was done, what came out.
type Record struct {
	Tool        string             `json:"tool"`
	Version     string             `json:"version"`
	Status      string             `json:"status"`
	Error       string             `json:"error,omitempty"`
	Input       InputInfo          `json:"input"`
	Settings    *Request           `json:"settings,omitempty"` // parameters as requested ("auto" unresolved)
	Params      map[string]any     `json:"params,omitempty"`   // parameters as used, automatic values resolved
	Graph       *GraphInfo         `json:"graph,omitempty"`
	ObjectScale *ObjectScaleInfo   `json:"object_scale,omitempty"`
	Eigenvalues []float64          `json:"eigenvalues"`
	SplitNcuts  []float64          `json:"split_ncuts"`
	Regions     int                `json:"regions"`
	Objects     int                `json:"objects"`
	Warnings    []WarningInfo      `json:"warnings"`
	Seconds     map[string]float64 `json:"seconds"`
	Outputs     []string           `json:"outputs,omitempty"`
	LabelMaps   []LabelMapInfo     `json:"label_maps,omitempty"`
}

// LabelMapInfo describes one label or class map written: its file, format
// and sample width, and the resolution its TIFF tags carry (or why they
// carry none).
type LabelMapInfo struct {
	File     string `json:"file"`
	Content  string `json:"content"` // "labels" or "classes"
	Format   string `json:"format"`  // "png" or "tiff"
	Bits     int    `json:"bits"`    // bits per sample: 16, or 32 for TIFF above 65535
	MaxLabel int32  `json:"max_label"`
	// PixelsPerUnit and ResolutionUnit are the TIFF XResolution (=
	// YResolution) and ResolutionUnit written, from pixel-size and unit.
	PixelsPerUnit  float64 `json:"pixels_per_unit,omitempty"`
	ResolutionUnit string  `json:"resolution_unit,omitempty"` // "centimetre" or "inch"
	// ResolutionNote says why a TIFF with a pixel size has no resolution.
	ResolutionNote string `json:"resolution_note,omitempty"`
}

// Output suffixes: STEM + suffix is each file one image's run writes. The
// label and class maps have one per format (LabelsSuffix, ClassesSuffix).

// LabelFormats are the label map formats (imageio.LabelsPNG, LabelsTIFF).
func LabelFormats() []string { return []string{imageio.LabelsPNG, imageio.LabelsTIFF} }

// LabelsSuffix is the suffix of the label map in format (LabelFormats).
func LabelsSuffix(format string) string { return mapSuffix(".labels", format) }

// ClassesSuffix is the suffix of the class map in format (LabelFormats).
func ClassesSuffix(format string) string { return mapSuffix(".classes", format) }

func mapSuffix(kind, format string) string {
	if format == imageio.LabelsTIFF {
		return kind + ".tif"
	}
	return kind + ".png"
}

const (
	SuffixOverlay  = ".overlay.png"
	SuffixPreview  = ".preview.png"
	SuffixRegions  = ".regions.csv"
	SuffixOutlines = ".outlines.geojson"
	SuffixRecord   = ".json"
)

// OutputSuffixes returns the suffixes of the files Process may write for
// one stem, in any format; the slice is the caller's.
func OutputSuffixes() []string {
	return []string{LabelsSuffix(imageio.LabelsPNG), LabelsSuffix(imageio.LabelsTIFF), SuffixOverlay, SuffixPreview,
		ClassesSuffix(imageio.LabelsPNG), ClassesSuffix(imageio.LabelsTIFF), SuffixRegions, SuffixOutlines, SuffixRecord}
}

// LabelsFormatFor is the format the label and class maps of one result are
// written in: the one asked for, except that labels above 65535, which a
// 16-bit PNG cannot hold, are written as a TIFF (32-bit) rather than
// wrapped around or refused after the work is done. switched reports that
// case.
func LabelsFormatFor(asked string, maxLabel int32) (format string, switched bool) {
	if asked == imageio.LabelsPNG && maxLabel > imageio.MaxPNGLabel {
		return imageio.LabelsTIFF, true
	}
	return asked, false
}

// WarnNotFlattened marks the warning that flatten-radii found no object
// scale and left the image unflattened.
const WarnNotFlattened = "not-flattened"

// LabelWarningCode marks the warning that the label map was written as a
// TIFF because PNG could not hold its labels.
const LabelWarningCode = "labels-tiff"

// encodeLabelMap returns the encoder of one label or class map in format,
// and fills info (file, format, bits, resolution) for the record.
func encodeLabelMap(format string, labels labelmap.Map, pixelSize float64, unit string, workers int, info *LabelMapInfo) func(io.Writer) error {
	info.Format, info.MaxLabel = format, labels.Max()
	if format == imageio.LabelsPNG {
		info.Bits = 16
		return func(wr io.Writer) error { return imageio.EncodeLabels(wr, labels, workers) }
	}
	info.Bits = imageio.LabelBits(labels)
	res, why := imageio.ResolutionFor(pixelSize, unit)
	if res.Set() {
		info.PixelsPerUnit = res.PerUnit()
		info.ResolutionUnit = map[int]string{imageio.ResolutionCM: "centimetre", imageio.ResolutionInch: "inch"}[res.Unit]
	} else if why != "" {
		info.ResolutionNote = "no resolution tags: " + why
	}
	return func(wr io.Writer) error {
		_, err := imageio.EncodeLabelsTIFF(wr, labels, res)
		return err
	}
}

// WarningInfo is one finding about the result that the user should check
// (segment.Warning), its message in the command's words (Voice.Message).
type WarningInfo struct {
	Code    string `json:"code"`
	Message string `json:"message"`
}

// warningsOf converts the library's warnings, their messages in the
// command's words.
func warningsOf(ws []segment.Warning, v Voice) []WarningInfo {
	out := make([]WarningInfo, 0, len(ws))
	for _, w := range ws {
		out = append(out, WarningInfo{Code: w.Code, Message: v.Msg(w.Message)})
	}
	return out
}

// colourHint extends a no-objects warning on a colour image that was
// segmented by its luminance alone with the suggestion to segment by
// colour: objects that differ from their surroundings in hue more than in
// brightness (a brown stain beside a blue one) are lost in the luminance.
func colourHint(ws []segment.Warning, channels int, f imageio.FeatureOptions) []segment.Warning {
	if channels < 3 || f.Channel >= 0 || f.Space == imageio.SpaceLab {
		return ws
	}
	out := append([]segment.Warning(nil), ws...)
	for i, w := range out {
		if w.Code == segment.WarnNoObjects {
			out[i].Message += "; the image has colour and was segmented by its brightness alone: if the objects differ by colour, try \x60features\x60 lab"
		}
	}
	return out
}

// GraphInfo describes the graph that was solved.
type GraphInfo struct {
	Kind  string `json:"kind"` // "pixels" or "superpixels"
	Nodes int    `json:"nodes"`
	Edges int    `json:"edges"`
}

// ObjectScaleInfo is the object scale estimated for the automatic
// superpixel count (segment.Result.ObjectScale): present only when one was
// estimated; Used tells whether the count followed it.
type ObjectScaleInfo struct {
	Radius   float64 `json:"radius"`
	Sigma    float64 `json:"sigma"`
	Strength float64 `json:"strength"`
	Blobs    int     `json:"blobs"`
	Noise    float64 `json:"noise"`
	Found    bool    `json:"found"`
	Used     bool    `json:"used"`
}

// OutputSet names the files written for one image: Dir/Stem + suffix.
type OutputSet struct {
	Dir, Stem string
}

// Path is the file of one output suffix.
func (o OutputSet) Path(suffix string) string { return filepath.Join(o.Dir, o.Stem+suffix) }

// Replace says which existing files Process may replace.
type Replace int

const (
	// ReplaceNone: every output must be new (segment).
	ReplaceNone Replace = iota
	// ReplaceAny: existing output files are replaced (segment, forced).
	ReplaceAny
	// ReplaceOwn: only files that the image's record lists as outputs
	// cleave wrote are replaced; any other file in the way fails the
	// image (batch).
	ReplaceOwn
)

// StatusWriting is the status of the record written just before the
// outputs: it lists every output of the earlier run and of this one, so
// that a run killed while writing leaves cleave's files known as
// cleave's. The final record replaces it.
const StatusWriting = "writing"

// Job is one image to segment.
type Job struct {
	Path    string    // the input image
	Out     OutputSet // where its outputs go
	Request Request   // the parameters as asked for, kept in the record
	Options *Options  // the parameters as the stages take them
	Replace Replace
	// Owner is the owner tag of temporary files (imageio.WriteAtomicAs),
	// "" for the process.
	Owner string
	// SaveGraph is a Matrix Market path for the top-level W, or "".
	SaveGraph string
	Voice     Voice
}

// Process is the one pipeline every command shares: decode, features,
// segment, write the label map, overlay, class map, region table and
// finally the record. It returns the record (also on failure, with the
// error in it) and the error.
//
// What is on disk always matches the record STEM.json: before the outputs
// are written a record with status "writing" lists them; outputs of an
// earlier run that this one does not write (a class map after classes
// was dropped) are removed before the final record; and when the image
// fails, unless every output had to be new (ReplaceNone) or the run was
// cancelled, the earlier outputs are removed and STEM.json records the
// failure. Which files are cleave's comes from the earlier record.
func Process(ctx context.Context, j Job) (*Record, error) {
	start := time.Now()
	set := j.Request
	rec := &Record{Tool: "cleave", Version: j.Voice.Version, Status: "failed", Input: InputInfo{Path: j.Path}, Settings: &set, Warnings: []WarningInfo{}, Seconds: map[string]float64{}}
	recordPath := j.Out.Path(".json")
	// own: base names of files in j.Out.Dir that an earlier record (or this
	// run) lists as cleave's outputs for this stem; mayRecord: whether a
	// failure may be written into STEM.json.
	own := map[string]bool{}
	mayRecord := false
	fail := func(err error) (*Record, error) {
		err = j.Voice.Err(fmt.Errorf("%s: %w", j.Path, err))
		rec.Status, rec.Error = "failed", err.Error()
		rec.Seconds["total"] = time.Since(start).Seconds()
		if !mayRecord || ctx.Err() != nil {
			return rec, err
		}
		// The outputs of an earlier run (or the part of this one that was
		// written) no longer match the input: removed, so that nothing
		// pairs them with it later. Any that cannot be removed stay listed.
		rec.Outputs = nil
		for _, name := range slices.Sorted(maps.Keys(own)) {
			if name == filepath.Base(recordPath) {
				continue
			}
			if rerr := os.Remove(filepath.Join(j.Out.Dir, name)); rerr != nil && !errors.Is(rerr, fs.ErrNotExist) {
				rec.Outputs = append(rec.Outputs, name)
				err = fmt.Errorf("%w (and the earlier output %s could not be removed: %v)", err, name, DescribeErr(rerr))
			}
		}
		rec.Eigenvalues, rec.SplitNcuts = nonNil(rec.Eigenvalues), nonNil(rec.SplitNcuts)
		if werr := WriteRecord(recordPath, rec, true, j.Owner); werr != nil {
			err = fmt.Errorf("%w (and the record could not be written: %v)", err, werr)
		}
		return rec, err
	}
	var tick time.Time
	lap := func(name string) {
		now := time.Now()
		rec.Seconds[name] += now.Sub(tick).Seconds()
		tick = now
	}
	// checkPaths refuses outputs that may not be written: any existing
	// one when every output must be new, a folder, and (batch) a file
	// that the earlier record does not list.
	checkPaths := func(paths []string) error {
		for _, p := range paths {
			st, err := os.Lstat(p)
			switch {
			case err != nil:
			case st.IsDir():
				return fmt.Errorf("%s: %w", p, imageio.ErrIsFolder)
			case j.Replace == ReplaceNone:
				return fmt.Errorf("output %s already exists (use `force` to overwrite)", p)
			case j.Replace == ReplaceOwn && !own[filepath.Base(p)] && p != recordPath:
				return fmt.Errorf("%s exists and was not written by cleave (its record %s does not list it); cleave does not replace it: move it away or choose another `out`", p, recordPath)
			}
		}
		return nil
	}
	if j.Replace != ReplaceNone {
		prior, err := priorOutputs(j.Out)
		if err != nil && (j.Replace == ReplaceOwn || errors.Is(err, imageio.ErrIsFolder)) {
			return fail(err) // the record's path is not cleave's to write
		}
		own, mayRecord = prior, true
	}
	if err := checkPaths(j.Outputs()); err != nil {
		return fail(err)
	}
	src, err := openInput(j.Path, j.Options)
	if err != nil {
		return fail(err)
	}
	defer src.Close()
	// Images processed at once (batch jobs) share the memory limit.
	budget := budgetFor(j.Options.Params.MaxMemory)
	held, err := budget.acquire(ctx, peakOf(estimateImage(src.Header(), j.Options)))
	if err != nil {
		return fail(err)
	}
	defer budget.release(held)
	hdr := src.Header()
	defer frameCollector(hdr.Width * hdr.Height)()
	in, err := loadSourceKeep(ctx, src, j.Options, true)
	if err != nil {
		return fail(err)
	}
	in.Info.Path = j.Path
	rec.Input = in.Info
	rec.Seconds["decode"], rec.Seconds["features"] = in.decodeSeconds, in.featureSeconds
	feat := in.Features
	// The raw plane is read only by the region table, after segmenting:
	// it is held packed meanwhile (16-bit samples when they hold it
	// exactly), half a plane less through the class stage.
	raw := packPlane(feat.Raw, j.Options.Params.Workers)
	feat.Raw = nil
	res, err := Segment(ctx, in, j.Options.Params)
	if err != nil {
		return fail(err)
	}
	collectAfterSegment(feat.Width * feat.Height)
	feat.Raw = raw.plane(j.Options.Params.Workers)
	for _, st := range res.Stages {
		rec.Seconds[st.Name] += st.Seconds
	}
	tick = time.Now()
	rec.Params = usedParams(j.Request, res.Params)
	kind := "pixels"
	if res.Params.Superpixels > 0 {
		kind = "superpixels"
	}
	rec.Graph = &GraphInfo{Kind: kind, Nodes: res.Graph.Nodes(), Edges: res.Graph.NNZ() / 2}
	if e := res.ObjectScale; e != nil {
		rec.ObjectScale = &ObjectScaleInfo{Radius: e.Radius, Sigma: e.Sigma, Strength: e.Strength, Blobs: e.Blobs, Noise: e.Noise, Found: e.Found, Used: res.ObjectScaleUsed}
	}
	rec.Eigenvalues, rec.SplitNcuts = res.Eigenvalues, res.SplitNcuts
	if rec.SplitNcuts == nil {
		rec.SplitNcuts = []float64{}
	}
	rec.Regions, rec.Objects = res.NumRegions, res.NumObjects
	rec.Warnings = append(append([]WarningInfo{}, stackWarnings(rec.Input, j.Options.EveryPlane, j.Voice)...), warningsOf(colourHint(res.Warnings, in.Info.Channels, j.Options.Features), j.Voice)...)
	if j.Options.FlattenRadii > 0 && rec.Input.Flatten == 0 {
		rec.Warnings = append(rec.Warnings, WarningInfo{Code: WarnNotFlattened, Message: j.Voice.Msg(
			"no object scale was found in the image, so \x60flatten-radii\x60 left it unflattened; give the scale in pixels with \x60flatten\x60")})
	}
	pixelSize := pixelSizeFor(j.Options.PixelSize, j.Options.Unit, in.calibration)
	rec.Input.PixelSize = pixelSize
	tableSize, tableUnit := 0.0, ""
	if pixelSize != nil {
		tableSize, tableUnit = pixelSize.Size, pixelSize.Unit
	}

	if err := ctx.Err(); err != nil {
		return fail(err)
	}
	w := feat.Width
	// The image outputs are encoded concurrently (PNG compression is the
	// slow part); each goes to its own file, so order does not matter, and
	// the list of outputs is kept in a fixed order.
	// The preview and the overlay's tints share one colouring; the
	// overlay shows a colour image in its colours.
	labels, classes := res.Labels, res.Classes
	workers := j.Options.Params.Workers
	// The colouring (a pass over the label map) is made beside the
	// encoders that do not read it (the label and class maps, the region
	// table, the outlines); the overlay and the preview wait for it.
	paletteC := make(chan *render.LabelColours, 1)
	go func() { paletteC <- render.ColourLabelsWorkers(labels, workers) }()
	palette := sync.OnceValue(func() *render.LabelColours { return <-paletteC })
	overlay := imageio.OverlayOptions{Tint: res.Params.Background != "", Numbers: true, Workers: workers}
	if len(in.channels) == 3 {
		overlay.Colour = in.channels
		overlay.Lo, overlay.Hi = imageio.ColourWindow(in.channels, j.Options.Params.Workers)
	}
	type output struct {
		suffix string
		fn     func(io.Writer) error
	}
	// Label and class maps share one format; labels that PNG cannot hold
	// switch both to TIFF, and the record and stderr say so.
	asked := j.Options.LabelsFormat
	top := maxLabel(labels, workers)
	format, switched := LabelsFormatFor(asked, top)
	if switched {
		also := ""
		if classes.Pix != nil {
			also = " (and the class map as " + filepath.Base(j.Out.Path(ClassesSuffix(format))) + ")"
		}
		rec.Warnings = append(rec.Warnings, WarningInfo{Code: LabelWarningCode, Message: j.Voice.Msg(fmt.Sprintf(
			"the label map holds labels up to %d, more than the %d a 16-bit PNG holds; it was written as a 32-bit TIFF, %s, instead of %s%s; `labels-format` tiff asks for TIFF from the start",
			top, imageio.MaxPNGLabel, filepath.Base(j.Out.Path(LabelsSuffix(format))), filepath.Base(j.Out.Path(LabelsSuffix(asked))), also))})
		fallback := []string{j.Out.Path(LabelsSuffix(format))}
		if classes.Pix != nil {
			fallback = append(fallback, j.Out.Path(ClassesSuffix(format)))
		}
		if err := checkPaths(fallback); err != nil {
			return fail(err)
		}
	}
	labelMaps := []LabelMapInfo{{File: filepath.Base(j.Out.Path(LabelsSuffix(format))), Content: "labels"}}
	outs := []output{
		{LabelsSuffix(format), encodeLabelMap(format, labels, tableSize, tableUnit, workers, &labelMaps[0])},
		{SuffixOverlay, func(wr io.Writer) error {
			o := overlay
			o.Palette = palette()
			return imageio.EncodeOverlay(wr, feat.Display, labels, o)
		}},
		{SuffixPreview, func(wr io.Writer) error { return imageio.EncodePreview(wr, labels, palette(), workers) }},
	}
	if classes.Pix != nil {
		labelMaps = append(labelMaps, LabelMapInfo{File: filepath.Base(j.Out.Path(ClassesSuffix(format))), Content: "classes"})
		outs = append(outs, output{ClassesSuffix(format), encodeLabelMap(format, classes, tableSize, tableUnit, workers, &labelMaps[1])})
	}
	rec.LabelMaps = labelMaps
	// The region table is measured while the pictures are encoded (below);
	// the table and the outlines' classes wait for it.
	planes, planeNames := intensityPlanes(feat.Raw, in.channels)
	var (
		regions      []measure.Region
		regionsErr   error
		classOf      map[int32]int32
		regionsReady = make(chan struct{})
	)
	measureRegions := func() {
		defer close(regionsReady)
		regions, regionsErr = measure.Regions(labels, planes, classes.Pix)
		if regionsErr == nil && classes.Pix != nil {
			classOf = make(map[int32]int32, len(regions))
			for _, r := range regions {
				classOf[r.Label] = r.Class
			}
		}
	}
	outs = append(outs, output{SuffixRegions, func(wr io.Writer) error {
		<-regionsReady
		if regionsErr != nil {
			return regionsErr
		}
		return measure.WriteTable(wr, regions, measure.TableOptions{Planes: planeNames, Class: classes.Pix != nil, PixelSize: tableSize, Unit: tableUnit})
	}}, output{SuffixOutlines, func(wr io.Writer) error {
		outlines, err := measure.Outlines(labels)
		if err != nil {
			return err
		}
		<-regionsReady
		if regionsErr != nil {
			return regionsErr
		}
		return measure.WriteGeoJSON(wr, outlines, classOf)
	}})
	// The record announces the outputs before they are written.
	written := map[string]bool{filepath.Base(recordPath): true}
	for _, o := range outs {
		written[filepath.Base(j.Out.Path(o.suffix))] = true
	}
	for name := range written {
		own[name] = true
	}
	intent := *rec
	intent.Status, intent.Outputs = StatusWriting, slices.Sorted(maps.Keys(own))
	if err := WriteRecord(recordPath, &intent, j.Replace != ReplaceNone, j.Owner); err != nil {
		return fail(err)
	}
	mayRecord = true
	go measureRegions()
	// Every output is written at once, one goroutine each.
	errs := make([]error, len(outs))
	parallel.For(len(outs), len(outs), func(k int) {
		errs[k] = imageio.WriteAtomicAs(j.Out.Path(outs[k].suffix), j.Replace != ReplaceNone, j.Owner, outs[k].fn)
	})
	for k, o := range outs {
		if errs[k] != nil {
			return fail(errs[k])
		}
		rec.Outputs = append(rec.Outputs, filepath.Base(j.Out.Path(o.suffix)))
	}
	if j.SaveGraph != "" {
		comment := fmt.Sprintf("cleave %s: top-level affinity matrix W of %s\n%s graph, %d nodes", j.Voice.Version, j.Path, kind, res.Graph.Nodes())
		if kind == "pixels" {
			comment += fmt.Sprintf("; node k is pixel (x, y) = (k mod %d, k div %d)", w, w)
		} else {
			comment += "; node k is superpixel k (numbered in raster order of its first pixel)"
		}
		if err := imageio.WriteAtomicAs(j.SaveGraph, j.Replace != ReplaceNone, j.Owner, func(wr io.Writer) error {
			return res.Graph.WriteMatrixMarket(wr, comment)
		}); err != nil {
			return fail(err)
		}
	}
	// Outputs of an earlier run that this one did not write (a class map
	// when classes were dropped) would look current beside the new ones.
	for _, name := range slices.Sorted(maps.Keys(own)) {
		if written[name] {
			continue
		}
		if err := os.Remove(filepath.Join(j.Out.Dir, name)); err != nil && !errors.Is(err, fs.ErrNotExist) {
			return fail(fmt.Errorf("cannot remove the earlier output %s: %v", filepath.Join(j.Out.Dir, name), DescribeErr(err)))
		}
		delete(own, name)
	}
	lap("write")
	rec.Status = "ok"
	rec.Seconds["total"] = time.Since(start).Seconds()
	if err := WriteRecord(recordPath, rec, true, j.Owner); err != nil {
		return fail(err)
	}
	return rec, nil
}

// maxLabel is m.Max() found on blocks of pixels on workers goroutines
// (parallel's rules): the largest of the blocks' largest labels.
func maxLabel(m labelmap.Map, workers int) int32 {
	const block = 1 << 16
	tops := make([]int32, (len(m.Pix)+block-1)/block)
	parallel.Blocks(len(m.Pix), block, workers, func(b, lo, hi int) {
		var top int32
		for _, l := range m.Pix[lo:hi] {
			top = max(top, l)
		}
		tops[b] = top
	})
	var top int32
	for _, t := range tops {
		top = max(top, t)
	}
	return top
}

// priorOutputs reads the record an earlier run left for set and returns
// the base names of the files it lists as cleave's outputs, with the
// record itself; only names that cleave gives the outputs of this stem
// count. No record: none. A folder, or a file that is not a cleave
// record, at the record's path is an error (wrapping imageio.ErrIsFolder
// for a folder).
func priorOutputs(set OutputSet) (map[string]bool, error) {
	own := map[string]bool{}
	p := set.Path(".json")
	st, err := os.Lstat(p)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return own, nil
	case err != nil:
		return own, err
	case st.IsDir():
		return own, fmt.Errorf("%s: %w (it is where the image's record goes)", p, imageio.ErrIsFolder)
	}
	rec, err := ReadRecord(p)
	if err != nil || !st.Mode().IsRegular() {
		return own, fmt.Errorf("%s exists and is not a record that cleave wrote; cleave does not replace it: move it away or choose another `out`", p)
	}
	valid := map[string]bool{}
	for _, s := range OutputSuffixes() {
		valid[set.Stem+s] = true
	}
	own[filepath.Base(p)] = true
	for _, name := range rec.Outputs {
		if valid[name] {
			own[name] = true
		}
	}
	return own, nil
}

// RecordBlocked says why the record at p could not be read (err from
// ReadRecord), as the manifest shows it.
func RecordBlocked(p string, err error) string {
	if st, serr := os.Lstat(p); serr == nil && st.IsDir() {
		return fmt.Sprintf("%s is a folder, where the image's record goes; move it away and run again", p)
	}
	if errors.Is(err, fs.ErrPermission) {
		return fmt.Sprintf("the record %s cannot be read: %v", p, DescribeErr(err))
	}
	return fmt.Sprintf("%s is not a record that cleave wrote, so cleave does not replace it; move it away and run again", p)
}

// collectAfterSegmentPixels is the frame size (pixels) from which
// Process collects the segmentation's garbage before the outputs are
// encoded: 4 megapixels, a frame whose float32 plane is 16 MiB.
const collectAfterSegmentPixels = 1 << 22

// collectAfterSegment runs a garbage collection after a frame of npix
// pixels of at least collectAfterSegmentPixels was segmented. The class
// and object stages leave dozens of bytes a pixel of garbage (object and
// contrast maps, per-object lists); the collector's target was set while
// the stages' planes were live, so without a collection the write
// stage's planes and buffers were taken from new memory beside that
// garbage: on the 16 MP nuclei frame (seed 15111) the heap's mapped
// memory grew by 128 MiB in the write stage, to a peak RSS above the
// class stage's (DEVELOPERS.md, "Measured choices"). The collection
// costs one mark of the live heap, mostly pointer-free planes.
func collectAfterSegment(npix int) {
	if npix >= collectAfterSegmentPixels {
		runtime.GC()
	}
}

// Outputs lists every file the job writes in the format asked for.
func (j Job) Outputs() []string {
	f := j.Options.LabelsFormat
	list := []string{j.Out.Path(LabelsSuffix(f)), j.Out.Path(SuffixOverlay), j.Out.Path(SuffixPreview), j.Out.Path(SuffixRegions), j.Out.Path(SuffixOutlines), j.Out.Path(SuffixRecord)}
	if j.Options.Params.Classes >= 2 {
		list = append(list, j.Out.Path(ClassesSuffix(f)))
	}
	if j.SaveGraph != "" {
		list = append(list, j.SaveGraph)
	}
	return list
}

// PossibleOutputs is Outputs with the TIFF label and class maps that
// replace the PNG ones when the labels pass 65535 (LabelsFormatFor).
func (j Job) PossibleOutputs() []string {
	list := j.Outputs()
	if j.Options.LabelsFormat == imageio.LabelsPNG {
		list = append(list, j.Out.Path(LabelsSuffix(imageio.LabelsTIFF)))
		if j.Options.Params.Classes >= 2 {
			list = append(list, j.Out.Path(ClassesSuffix(imageio.LabelsTIFF)))
		}
	}
	return list
}

// ReadRecord reads the record at p; a file that is not a cleave record is
// an error.
func ReadRecord(p string) (*Record, error) {
	data, err := os.ReadFile(p)
	if err != nil {
		return nil, err
	}
	var rec Record
	if err := json.Unmarshal(data, &rec); err != nil {
		return nil, fmt.Errorf("%s: not a cleave record: %v", p, err)
	}
	if rec.Tool != "cleave" {
		return nil, fmt.Errorf("%s: not a cleave record", p)
	}
	return &rec, nil
}

// WriteRecord writes the JSON record atomically.
func WriteRecord(path string, rec *Record, force bool, owner string) error {
	return imageio.WriteAtomicAs(path, force, owner, func(w io.Writer) error {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(rec)
	})
}

// Loaded is an input image decoded and turned into features, ready to be
// segmented (possibly many times, as a parameter search does).
type Loaded struct {
	Info     InputInfo
	Features *imageio.Features
	// Cache is work shared between runs of the image (tune), or nil.
	Cache          *segment.Cache
	decodeSeconds  float64
	featureSeconds float64
	calibration    imageio.Calibration // the pixel size the file states
	// channels are the colour planes of a three-channel image in its own
	// units, kept for the region table (Process); nil otherwise.
	channels [][]float32
}

// Load opens one image file, checks its header against the size and
// memory limits, and loads it (loadSource). Errors do not carry the path;
// callers add it.
func Load(ctx context.Context, path string, o *Options) (*Loaded, error) {
	src, err := openInput(path, o)
	if err != nil {
		return nil, err
	}
	defer src.Close()
	return loadSource(ctx, src, o)
}

// openInput opens an image file (regular files only) and refuses it,
// from its header, when it is above the megapixel limit or when a stage
// of its processing is estimated above the memory limit. Errors do not
// carry the path.
func openInput(path string, o *Options) (*imageio.Source, error) {
	src, err := imageio.Open(path, o.Load)
	if err != nil {
		return nil, stripPath(err, path)
	}
	if err := checkImageMemory(src.Header(), o); err != nil {
		src.Close()
		return nil, err
	}
	return src, nil
}

// stripPath removes the "path: " that imageio puts before its messages,
// for callers that add the path themselves.
func stripPath(err error, path string) error {
	msg := err.Error()
	if rest, ok := strings.CutPrefix(msg, path+": "); ok {
		return &pathless{err, rest}
	}
	return err
}

// loadSource checksums and decodes an opened image and computes its
// features. The file is read in steps (never held whole) and the work
// stops when ctx is done.
func loadSource(ctx context.Context, src *imageio.Source, o *Options) (*Loaded, error) {
	return loadSourceKeep(ctx, src, o, false)
}

// loadSourceKeep is loadSource that, with keepChannels, also keeps the
// planes of a colour image (loaded.channels) for the region table.
func loadSourceKeep(ctx context.Context, src *imageio.Source, o *Options, keepChannels bool) (*Loaded, error) {
	t0 := time.Now()
	h := sha256.New()
	if err := copyContext(ctx, h, src.Contents()); err != nil {
		return nil, err
	}
	in := &Loaded{Info: InputInfo{SHA256: hex.EncodeToString(h.Sum(nil))}, calibration: src.Stack().Calibration}
	if err := src.Choose(o.Selection); err != nil {
		return nil, stripPath(err, src.Path())
	}
	im, err := src.DecodeContext(ctx)
	if err != nil {
		return nil, stripPath(err, src.Path())
	}
	in.Info.Format, in.Info.Width, in.Info.Height = im.Format, im.Width, im.Height
	in.Info.Channels, in.Info.BitDepth, in.Info.HasAlpha, in.Info.Pages = im.Channels, im.BitDepth, im.HasAlpha, im.Pages
	in.Info.SampleType, in.Info.Stack = im.SampleType, stackInfoOf(im.Used)
	fopt := o.Features
	fopt.Channel = -1 // Choose chose it: the image holds that channel alone
	if keepChannels && im.Channels > 1 {
		in.channels = im.Planes
	}
	t1 := time.Now()
	in.decodeSeconds = t1.Sub(t0).Seconds()
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	if o.FlattenRadii > 0 {
		if fopt.Flatten, in.Info.FlattenRadius, err = flattenScale(ctx, im, fopt, o.FlattenRadii, o.Params.Workers); err != nil {
			return nil, err
		}
		in.Info.Flatten = fopt.Flatten
	}
	in.Features, err = imageio.MakeFeaturesContext(ctx, im, fopt, o.Params.Workers)
	if err != nil {
		return nil, err
	}
	in.Info.InvalidPixels = in.Features.InvalidCount
	in.featureSeconds = time.Since(t1).Seconds()
	return in, nil
}

// flattenScale returns the shading-correction scale for im under
// flatten-radii k: k times the object radius that affinity.ObjectScale
// finds on the image's unflattened luminance (the features of fopt
// without flattening), capped at the image's diagonal, and that radius;
// 0, 0 when it finds none, or only the weak small scale of packed
// boundaries or texture (segment.ObjectRadius): the image is then not
// flattened, and the record warns. The scale estimate is the one the automatic
// superpixel count makes, so a blob detector at the objects' own size
// sets the background's scale instead of a number fitted to one kind of
// scene.
func flattenScale(ctx context.Context, im *imageio.Image, fopt imageio.FeatureOptions, k float64, workers int) (scale, radius float64, err error) {
	fopt.Flatten = 0
	f, err := imageio.MakeFeaturesContext(ctx, im, fopt, workers)
	if err != nil {
		return 0, 0, err
	}
	r := segment.ObjectRadius(affinity.ObjectScale(f.Planes[0], f.Width, f.Height, workers))
	if r <= 0 {
		return 0, 0, nil
	}
	return min(k*r, math.Hypot(float64(f.Width), float64(f.Height))), r, nil
}

// copyContext copies src to dst in steps of 1 MiB, stopping when ctx is
// done.
func copyContext(ctx context.Context, dst io.Writer, src io.Reader) error {
	buf := make([]byte, 1<<20)
	for {
		if err := ctx.Err(); err != nil {
			return err
		}
		n, err := src.Read(buf)
		if n > 0 {
			if _, werr := dst.Write(buf[:n]); werr != nil {
				return werr
			}
		}
		if err == io.EOF {
			return nil
		}
		if err != nil {
			return err
		}
	}
}

// Segment runs the segmentation of a loaded image with parameters p.
func Segment(ctx context.Context, in *Loaded, p segment.Params) (*segment.Result, error) {
	f := in.Features
	return segment.Run(ctx, segment.Input{Width: f.Width, Height: f.Height, Planes: f.Planes, Luminance: f.Planes[0], Cache: in.Cache, Invalid: f.Invalid}, p)
}

// pathless is an error whose message leaves out the path that the
// error it wraps names.
type pathless struct {
	err error
	msg string
}

func (e *pathless) Error() string { return e.msg }
func (e *pathless) Unwrap() error { return e.err }
