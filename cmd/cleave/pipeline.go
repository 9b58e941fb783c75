package main

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"time"

	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/segment"
)

// inputInfo describes the input file in the record.
type inputInfo struct {
	Path     string `json:"path"`
	SHA256   string `json:"sha256"`
	Format   string `json:"format"`
	Width    int    `json:"width"`
	Height   int    `json:"height"`
	Channels int    `json:"channels"`
	BitDepth int    `json:"bit_depth"`
	HasAlpha bool   `json:"has_alpha"`
	Pages    int    `json:"pages"` // images in the file; only the first is read
}

// record is STEM.json: what was read, what was done, what came out.
type record struct {
	Tool        string             `json:"tool"`
	Version     string             `json:"version"`
	Status      string             `json:"status"`
	Error       string             `json:"error,omitempty"`
	Input       inputInfo          `json:"input"`
	Settings    *settings          `json:"settings,omitempty"` // parameters as requested ("auto" unresolved)
	Params      map[string]any     `json:"params,omitempty"`   // parameters as used, automatic values resolved
	Graph       *graphInfo         `json:"graph,omitempty"`
	ObjectScale *objectScaleInfo   `json:"object_scale,omitempty"`
	Eigenvalues []float64          `json:"eigenvalues"`
	SplitNcuts  []float64          `json:"split_ncuts"`
	Regions     int                `json:"regions"`
	Objects     int                `json:"objects"`
	Warnings    []warningInfo      `json:"warnings"`
	Seconds     map[string]float64 `json:"seconds"`
	Outputs     []string           `json:"outputs,omitempty"`
}

// warningInfo is one finding about the result that the user should check
// (segment.Warning), its message written with this command's flags.
type warningInfo struct {
	Code    string `json:"code"`
	Message string `json:"message"`
}

// warningsOf converts the library's warnings: every parameter a message
// names (in backquotes) becomes its flag.
func warningsOf(ws []segment.Warning) []warningInfo {
	out := make([]warningInfo, 0, len(ws))
	for _, w := range ws {
		out = append(out, warningInfo{Code: w.Code, Message: flagQuoted(w.Message)})
	}
	return out
}

// graphInfo describes the graph that was solved.
type graphInfo struct {
	Kind  string `json:"kind"` // "pixels" or "superpixels"
	Nodes int    `json:"nodes"`
	Edges int    `json:"edges"`
}

// objectScaleInfo is the object scale estimated for the automatic
// superpixel count (segment.Result.ObjectScale): present only when one was
// estimated; Used tells whether the count followed it.
type objectScaleInfo struct {
	Radius   float64 `json:"radius"`
	Sigma    float64 `json:"sigma"`
	Strength float64 `json:"strength"`
	Blobs    int     `json:"blobs"`
	Noise    float64 `json:"noise"`
	Found    bool    `json:"found"`
	Used     bool    `json:"used"`
}

// outputSet names the files written for one image.
type outputSet struct {
	dir, stem string
}

func (o outputSet) path(suffix string) string { return filepath.Join(o.dir, o.stem+suffix) }

// job is one image to segment.
type job struct {
	path      string
	out       outputSet
	settings  settings
	resolved  *resolved
	force     bool
	saveGraph string // Matrix Market path for the top-level W, or ""
}

// processImage is the one pipeline every command shares: decode, features,
// segment, write the label map, overlay, class map, region table and
// finally the record. It returns the record (also on failure, with the
// error in it) and the error.
func processImage(ctx context.Context, j job) (*record, error) {
	start := time.Now()
	set := j.settings
	rec := &record{Tool: "cleave", Version: version, Status: "failed", Input: inputInfo{Path: j.path}, Settings: &set, Warnings: []warningInfo{}, Seconds: map[string]float64{}}
	fail := func(err error) (*record, error) {
		err = withFlags(fmt.Errorf("%s: %w", j.path, err))
		rec.Error = err.Error()
		rec.Seconds["total"] = time.Since(start).Seconds()
		return rec, err
	}
	var tick time.Time
	lap := func(name string) {
		now := time.Now()
		rec.Seconds[name] += now.Sub(tick).Seconds()
		tick = now
	}
	if !j.force {
		for _, p := range j.outputs() {
			if _, err := os.Lstat(p); err == nil {
				return fail(fmt.Errorf("output %s already exists (use --force to overwrite)", p))
			}
		}
	}
	src, err := openInput(j.path, j.resolved)
	if err != nil {
		return fail(err)
	}
	defer src.Close()
	// Images processed at once (batch --jobs) share the memory limit.
	budget := budgetFor(j.resolved.params.MaxMemory)
	held, err := budget.acquire(ctx, peakOf(estimateImage(src.Header(), j.resolved)))
	if err != nil {
		return fail(err)
	}
	defer budget.release(held)
	in, err := loadSource(ctx, src, j.resolved)
	if err != nil {
		return fail(err)
	}
	in.info.Path = j.path
	rec.Input = in.info
	rec.Seconds["decode"], rec.Seconds["features"] = in.decodeSeconds, in.featureSeconds
	feat := in.features
	res, err := segmentInput(ctx, in, j.resolved.params)
	if err != nil {
		return fail(err)
	}
	for _, st := range res.Stages {
		rec.Seconds[st.Name] += st.Seconds
	}
	tick = time.Now()
	rec.Params = usedParams(j.settings, res.Params)
	kind := "pixels"
	if res.Params.Superpixels > 0 {
		kind = "superpixels"
	}
	rec.Graph = &graphInfo{Kind: kind, Nodes: res.Graph.N, Edges: res.Graph.NNZ() / 2}
	if e := res.ObjectScale; e != nil {
		rec.ObjectScale = &objectScaleInfo{Radius: e.Radius, Sigma: e.Sigma, Strength: e.Strength, Blobs: e.Blobs, Noise: e.Noise, Found: e.Found, Used: res.ObjectScaleUsed}
	}
	rec.Eigenvalues, rec.SplitNcuts = res.Eigenvalues, res.SplitNcuts
	if rec.SplitNcuts == nil {
		rec.SplitNcuts = []float64{}
	}
	rec.Regions, rec.Objects = res.NumRegions, res.NumObjects
	rec.Warnings = warningsOf(res.Warnings)
	if p := rec.Input.Pages; p > 1 {
		rec.Warnings = append([]warningInfo{{Code: "unused-pages", Message: fmt.Sprintf(
			"the file holds %d images (pages: planes of a stack, channels or time points); only the first was segmented; save the plane you want as a file of its own", p)}}, rec.Warnings...)
	}

	if err := ctx.Err(); err != nil {
		return fail(err)
	}
	w, h := feat.Width, feat.Height
	// The image outputs are encoded concurrently (PNG compression is the
	// slow part); each goes to its own file, so order does not matter, and
	// the list of outputs is kept in a fixed order.
	tint := res.Params.Background != ""
	type output struct {
		suffix string
		fn     func(io.Writer) error
	}
	outs := []output{
		{".labels.png", func(wr io.Writer) error { return imageio.EncodeLabels(wr, w, h, res.Labels) }},
		{".overlay.png", func(wr io.Writer) error { return imageio.EncodeOverlay(wr, w, h, feat.Display, res.Labels, tint) }},
	}
	if res.Classes != nil {
		outs = append(outs, output{".classes.png", func(wr io.Writer) error { return imageio.EncodeLabels(wr, w, h, res.Classes) }})
	}
	outs = append(outs, output{".regions.csv", func(wr io.Writer) error {
		return writeRegionTable(wr, measureRegions(res.Labels, feat.Raw, w, h), j.settings.PixelSize, j.settings.Unit)
	}})
	errs := make([]error, len(outs))
	var wg sync.WaitGroup
	for k, o := range outs {
		wg.Add(1)
		go func() {
			defer wg.Done()
			errs[k] = imageio.WriteAtomic(j.out.path(o.suffix), j.force, o.fn)
		}()
	}
	wg.Wait()
	for k, o := range outs {
		if errs[k] != nil {
			return fail(errs[k])
		}
		rec.Outputs = append(rec.Outputs, filepath.Base(j.out.path(o.suffix)))
	}
	if j.saveGraph != "" {
		comment := fmt.Sprintf("cleave %s: top-level affinity matrix W of %s\n%s graph, %d nodes", version, j.path, kind, res.Graph.N)
		if kind == "pixels" {
			comment += fmt.Sprintf("; node k is pixel (x, y) = (k mod %d, k div %d)", w, w)
		} else {
			comment += "; node k is superpixel k (numbered in raster order of its first pixel)"
		}
		if err := imageio.WriteAtomic(j.saveGraph, j.force, func(wr io.Writer) error {
			return res.Graph.WriteMatrixMarket(wr, comment)
		}); err != nil {
			return fail(err)
		}
	}
	lap("write")
	rec.Status = "ok"
	rec.Seconds["total"] = time.Since(start).Seconds()
	if err := writeRecord(j.out.path(".json"), rec, true); err != nil {
		return fail(err)
	}
	return rec, nil
}

// outputs lists every file the job may write.
func (j job) outputs() []string {
	list := []string{j.out.path(".labels.png"), j.out.path(".overlay.png"), j.out.path(".regions.csv"), j.out.path(".json")}
	if j.settings.Classes >= 2 {
		list = append(list, j.out.path(".classes.png"))
	}
	if j.saveGraph != "" {
		list = append(list, j.saveGraph)
	}
	return list
}

// writeRecord writes the JSON record atomically.
func writeRecord(path string, rec *record, force bool) error {
	return imageio.WriteAtomic(path, force, func(w io.Writer) error {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(rec)
	})
}

// stemOf is the file name without its extension.
func stemOf(path string) string {
	base := filepath.Base(path)
	return strings.TrimSuffix(base, filepath.Ext(base))
}

// loaded is an input image decoded and turned into features, ready to be
// segmented (possibly many times, as a parameter search does).
type loaded struct {
	info           inputInfo
	features       *imageio.Features
	decodeSeconds  float64
	featureSeconds float64
	cache          *segment.Cache // work shared between runs (tune), or nil
}

// loadInput opens one image file, checks its header against the size and
// memory limits, and loads it (loadSource). Errors do not carry the path;
// callers add it.
func loadInput(ctx context.Context, path string, r *resolved) (*loaded, error) {
	src, err := openInput(path, r)
	if err != nil {
		return nil, err
	}
	defer src.Close()
	return loadSource(ctx, src, r)
}

// openInput opens an image file (regular files only) and refuses it,
// from its header, when it is above the megapixel limit or when a stage
// of its processing is estimated above the memory limit. Errors do not
// carry the path.
func openInput(path string, r *resolved) (*imageio.Source, error) {
	src, err := imageio.Open(path, r.load)
	if err != nil {
		return nil, stripPath(err, path)
	}
	if err := checkImageMemory(src.Header(), r); err != nil {
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
		return &flagged{err, rest}
	}
	return err
}

// loadSource checksums and decodes an opened image and computes its
// features. The file is read in steps (never held whole) and the work
// stops when ctx is done.
func loadSource(ctx context.Context, src *imageio.Source, r *resolved) (*loaded, error) {
	t0 := time.Now()
	h := sha256.New()
	if err := copyContext(ctx, h, src.Contents()); err != nil {
		return nil, err
	}
	in := &loaded{info: inputInfo{SHA256: hex.EncodeToString(h.Sum(nil))}}
	im, err := src.DecodeContext(ctx)
	if err != nil {
		return nil, stripPath(err, src.Path())
	}
	in.info.Format, in.info.Width, in.info.Height = im.Format, im.Width, im.Height
	in.info.Channels, in.info.BitDepth, in.info.HasAlpha, in.info.Pages = im.Channels, im.BitDepth, im.HasAlpha, im.Pages
	t1 := time.Now()
	in.decodeSeconds = t1.Sub(t0).Seconds()
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	in.features, err = imageio.MakeFeaturesContext(ctx, im, r.features, r.params.Workers)
	if err != nil {
		return nil, err
	}
	in.featureSeconds = time.Since(t1).Seconds()
	return in, nil
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

// segmentInput runs the segmentation of a loaded image with parameters p.
func segmentInput(ctx context.Context, in *loaded, p segment.Params) (*segment.Result, error) {
	f := in.features
	return segment.Run(ctx, segment.Input{Width: f.Width, Height: f.Height, Planes: f.Planes, Luminance: f.Planes[0], Cache: in.cache}, p)
}
