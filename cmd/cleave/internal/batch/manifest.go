package batch

import (
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"html/template"
	"io"
	"io/fs"
	"maps"
	"net/url"
	"os"
	"path"
	"path/filepath"
	"slices"
	"sort"
	"strconv"
	"strings"
	"syscall"
	"time"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/outlock"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/imageio"
)

// Files batch writes at the top of the output folder besides the
// per-image outputs.
// The index starts with a dot, and inputs starting with a dot are skipped,
// so no input's record can take its name.
const (
	IndexName    = ".cleave-batch.json"
	ManifestName = "manifest.csv"
	ObjectsName  = "objects.csv"
	ReportName   = "report.html"
)

// Index is the list of every input of a batch (all shards) with the
// settings: what manifest.csv and report.html are rebuilt from. Every
// shard of one command writes the same bytes.
type Index struct {
	Tool     string           `json:"tool"`
	Version  string           `json:"version"`
	InputDir string           `json:"input_dir"`
	Settings pipeline.Request `json:"settings"`
	Inputs   []Input          `json:"inputs"`
	// Skipped are the entries of INPUT_DIR named like images that were
	// not read (manifest status skipped).
	Skipped []Skip `json:"skipped"`
	// Files are the files at the top of the folder, besides the index and
	// the per-image outputs, that cleave writes there (manifest.csv,
	// objects.csv and report.html): listed before they are first written,
	// so that cleave knows them for its own and never replaces a user's
	// file of the same name. Absent (nil) in indexes of earlier versions,
	// which wrote manifest.csv and report.html only.
	Files []string `json:"files"`
}

// topFiles are the files an unsharded batch or a rebuild writes at the top
// of the folder.
var topFiles = []string{ManifestName, ObjectsName, ReportName}

// legacyFiles are the top files the versions whose index has no Files
// wrote (before objects.csv).
var legacyFiles = []string{ManifestName, ReportName}

func writeIndex(dir string, idx *Index, owner string) error {
	return imageio.WriteAtomicAs(filepath.Join(dir, IndexName), true, owner, func(w io.Writer) error {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(idx)
	})
}

func ReadIndex(dir string) (*Index, error) {
	p := filepath.Join(dir, IndexName)
	data, err := os.ReadFile(p)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, fmt.Errorf("%s is not the output folder of a batch: %s is missing", dir, IndexName)
	}
	if err != nil {
		return nil, err
	}
	var idx Index
	if err := json.Unmarshal(data, &idx); err != nil || idx.Tool != "cleave" {
		return nil, fmt.Errorf("%s: not a cleave batch index (%v); cleave does not replace it", p, err)
	}
	for _, in := range idx.Inputs {
		if in.Stem == "" || path.IsAbs(in.Stem) || strings.HasPrefix(path.Clean(in.Stem), "..") {
			return nil, fmt.Errorf("%s: output stem %q leaves the folder", p, in.Stem)
		}
	}
	return &idx, nil
}

// existingIndex is the index of an earlier batch in dir, or nil when there
// is none (no folder, or no index in it).
func existingIndex(dir string) (*Index, error) {
	if _, err := os.Lstat(filepath.Join(dir, IndexName)); errors.Is(err, fs.ErrNotExist) || errors.Is(err, syscall.ENOTDIR) {
		return nil, nil
	}
	return ReadIndex(dir)
}

// legacyTopFiles are the top files an index of an earlier version (without
// Files) stands for: those present, which that version wrote.
func legacyTopFiles(dir string) []string {
	var files []string
	for _, name := range legacyFiles {
		if _, err := os.Lstat(filepath.Join(dir, name)); err == nil {
			files = append(files, name)
		}
	}
	return files
}

// checkTopFiles refuses to go on when manifest.csv, objects.csv or
// report.html in dir
// is a file that cleave did not write (not listed in the index idx of an
// earlier run; idx may be nil) or a folder.
func checkTopFiles(dir string, idx *Index) error {
	own := map[string]bool{}
	if idx != nil {
		files := idx.Files
		if files == nil {
			files = legacyTopFiles(dir)
		}
		for _, name := range files {
			own[name] = true
		}
	}
	for _, name := range topFiles {
		p := filepath.Join(dir, name)
		st, err := os.Lstat(p)
		switch {
		case err != nil:
			continue
		case st.IsDir():
			return fmt.Errorf("%s is a folder, where batch writes its %s; move it away or choose another `out`", p, name)
		case !own[name]:
			return fmt.Errorf("%s exists and was not written by cleave (the batch index in %s does not list it); cleave does not replace it: move it away or choose another `out`", p, dir)
		}
	}
	return nil
}

// warnUnlocked tells the user that dir could not be locked (see lockOut).
func warnUnlocked(log io.Writer, l *outlock.Lock, dir string) {
	if l != nil && l.Unsupported != nil {
		fmt.Fprintf(log, "cleave batch: warning: cannot lock %s (%v); make sure no other cleave batch writes into it at the same time\n", dir, l.Unsupported)
	}
}

// manifestRow is one line of manifest.csv and of the report's table.
type manifestRow struct {
	Input, Stem, Status, Error string
	Plane                      *int // the plane, when every plane is an input
	// Labels is the label map of an ok record, relative to the folder
	// and slash-separated (its name depends on the format written).
	Labels string
	// Table is the region table (STEM.regions.csv) of an ok record,
	// relative to the folder and slash-separated, or "".
	Table string
	// Outlines and Preview are the outlines file and the colour preview
	// of an ok record, like Table, or "" when the record lists none.
	Outlines, Preview string
	Regions, Objects  int
	Seconds           float64
	Warnings          []string // messages of an ok record's warnings
}

// Statuses in the manifest.
const (
	rowOK      = "ok"
	rowFailed  = "failed"
	rowPending = "pending" // no record for the current settings and version yet
	rowSkipped = "skipped" // named like an image, but not a file batch reads
)

// manifestRows reads the record of every input of the index, and adds the
// skipped entries; rows are sorted by input path. A record is current
// when it is of cleave version and of the index's settings.
func manifestRows(dir string, idx *Index, version string) []manifestRow {
	rows := make([]manifestRow, 0, len(idx.Inputs)+len(idx.Skipped))
	for _, in := range idx.Inputs {
		r := manifestRow{Input: in.Input, Stem: in.Stem, Plane: in.Plane, Status: rowPending}
		p := filepath.Join(dir, filepath.FromSlash(in.Stem)+".json")
		rec, err := pipeline.ReadRecord(p)
		switch {
		case errors.Is(err, fs.ErrNotExist):
			r.Error = "no record yet"
		case err != nil:
			// Something that is not a cleave record stands where the
			// record goes (a user's file, a folder): the image cannot be
			// done until it is moved away.
			r.Status, r.Error = rowFailed, pipeline.RecordBlocked(p, err)
		case rec.Version != version || rec.Settings == nil || !pipeline.SameRequest(*rec.Settings, idx.Settings):
			r.Error = "the record is from other parameters or another cleave version"
		case rec.Status == pipeline.StatusWriting:
			r.Error = "the run stopped while the outputs were being written; run the batch again"
		case rec.Status == "ok":
			r.Status, r.Regions, r.Objects, r.Seconds = rowOK, rec.Regions, rec.Objects, rec.Seconds["total"]
			if name := labelMapOf(rec); name != "" {
				r.Labels = path.Join(path.Dir(in.Stem), name)
			}
			for _, name := range rec.Outputs {
				switch {
				case strings.HasSuffix(name, pipeline.SuffixRegions):
					r.Table = path.Join(path.Dir(in.Stem), name)
				case strings.HasSuffix(name, pipeline.SuffixOutlines):
					r.Outlines = path.Join(path.Dir(in.Stem), name)
				case strings.HasSuffix(name, pipeline.SuffixPreview):
					r.Preview = path.Join(path.Dir(in.Stem), name)
				}
			}
			for _, w := range rec.Warnings {
				r.Warnings = append(r.Warnings, w.Message)
			}
		default:
			r.Status, r.Error, r.Seconds = rowFailed, rec.Error, rec.Seconds["total"]
		}
		rows = append(rows, r)
	}
	for _, sk := range idx.Skipped {
		rows = append(rows, manifestRow{Input: sk.Input, Status: rowSkipped, Error: sk.Reason})
	}
	sort.SliceStable(rows, func(a, b int) bool { return rows[a].Input < rows[b].Input })
	return rows
}

// labelMapOf is the file name of the label map a record lists as written
// (records of earlier versions lack label_maps: their outputs tell), or "".
func labelMapOf(rec *pipeline.Record) string {
	for _, m := range rec.LabelMaps {
		if m.Content == "labels" {
			return m.File
		}
	}
	for _, name := range rec.Outputs {
		for _, f := range pipeline.LabelFormats() {
			if strings.HasSuffix(name, pipeline.LabelsSuffix(f)) {
				return name
			}
		}
	}
	return ""
}

// Counts are the rows of a manifest by status; Warned counts the ok rows
// with warnings.
type Counts struct{ Rows, OK, Warned, Failed, Pending, Skipped int }

// CountRows counts the rows of a manifest.
func CountRows(rows []manifestRow) Counts {
	c := Counts{Rows: len(rows)}
	for _, r := range rows {
		switch r.Status {
		case rowOK:
			c.OK++
			if len(r.Warnings) > 0 {
				c.Warned++
			}
		case rowFailed:
			c.Failed++
		case rowSkipped:
			c.Skipped++
		default:
			c.Pending++
		}
	}
	return c
}

// writeManifestAndReport rebuilds manifest.csv, objects.csv and
// report.html in dir from the records of the inputs of idx and their
// region tables.
func writeManifestAndReport(dir string, idx *Index, owner, version string) ([]manifestRow, error) {
	rows := manifestRows(dir, idx, version)
	if err := imageio.WriteAtomicAs(filepath.Join(dir, ManifestName), true, owner, func(w io.Writer) error {
		return writeManifest(w, rows)
	}); err != nil {
		return nil, err
	}
	// The size histogram is counted while objects.csv copies the tables,
	// so each table is read twice (head, rows), not a third time.
	sizes := newSizeHistogram()
	if err := imageio.WriteAtomicAs(filepath.Join(dir, ObjectsName), true, owner, func(w io.Writer) error {
		return writeObjects(w, dir, rows, sizes)
	}); err != nil {
		return nil, fmt.Errorf("%s not written: %w", filepath.Join(dir, ObjectsName), err)
	}
	if err := sizes.err; err != nil {
		return nil, fmt.Errorf("%s not written: %w", filepath.Join(dir, ReportName), err)
	}
	if sizes.Total == 0 {
		sizes = nil
	}
	if err := imageio.WriteAtomicAs(filepath.Join(dir, ReportName), true, owner, func(w io.Writer) error {
		return writeReport(w, idx, rows, sizes, time.Now(), version)
	}); err != nil {
		return nil, err
	}
	return rows, nil
}

// writeManifest writes the CSV (RFC 4180 quoting by encoding/csv; text
// cells neutralized by CSVText).
func writeManifest(w io.Writer, rows []manifestRow) error {
	cw := csv.NewWriter(w)
	planes := hasPlanes(rows)
	_ = cw.Write(withPlane(planes, []string{"input", "status", "regions", "objects", "seconds", "error", "warnings", "labels"}, "plane"))
	for _, r := range rows {
		rec := []string{CSVText(r.Input), r.Status, "", "", "", CSVText(r.Error), CSVText(strings.Join(r.Warnings, " | ")), CSVText(r.Labels)}
		if r.Status == rowOK {
			rec[2], rec[3] = strconv.Itoa(r.Regions), strconv.Itoa(r.Objects)
		}
		if r.Status == rowOK || r.Status == rowFailed {
			rec[4] = strconv.FormatFloat(r.Seconds, 'f', 3, 64)
		}
		_ = cw.Write(withPlane(planes, rec, r.planeText()))
	}
	cw.Flush()
	return cw.Error()
}

// hasPlanes reports rows of the planes of stacks (every plane on its own): the
// manifest and objects.csv then have a plane column after the input.
func hasPlanes(rows []manifestRow) bool {
	return slices.ContainsFunc(rows, func(r manifestRow) bool { return r.Plane != nil })
}

// withPlane inserts cell after the first cell of rec when planes is set.
func withPlane(planes bool, rec []string, cell string) []string {
	if !planes {
		return rec
	}
	return slices.Insert(rec, 1, cell)
}

// planeText is the row's plane as a cell ("" without one).
func (r manifestRow) planeText() string {
	if r.Plane == nil {
		return ""
	}
	return strconv.Itoa(*r.Plane)
}

// objectsColumns is the header of objects.csv after "input": the union of
// the columns of the region tables heads, in order. Tables differ when
// their images do (a colour image adds per-channel columns, classes the
// class column, a pixel size the columns in its unit); a column that an
// earlier table lacks goes right after the column that precedes it in the
// first table that has it (the first column of a table, at the front).
// Tables are taken in the order of heads (rows sorted by input path), so
// the order depends only on the tables.
func objectsColumns(heads [][]string) []string {
	var cols []string
	have := map[string]bool{}
	for _, head := range heads {
		at := 0 // where the next new column of this head goes
		for _, c := range head {
			if have[c] {
				at = slices.Index(cols, c) + 1
				continue
			}
			cols = slices.Insert(cols, at, c)
			have[c] = true
			at++
		}
	}
	return cols
}

// readTableHead reads the header of the region table at p and checks that
// its column names are distinct.
func readTableHead(p string) ([]string, error) {
	f, err := os.Open(p)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	head, err := csv.NewReader(f).Read()
	if err != nil {
		return nil, fmt.Errorf("%s: %w", p, err)
	}
	seen := map[string]bool{}
	for _, c := range head {
		if seen[c] {
			return nil, fmt.Errorf("%s: column %q appears twice", p, c)
		}
		seen[c] = true
	}
	return head, nil
}

// writeObjects writes objects.csv: every row of the region table of every
// ok row, with the input path in front, under the union of the tables'
// columns (objectsColumns; the cells of a column a table lacks are left
// empty). The tables are read twice (heads first), so the file is
// streamed however many objects there are. A cell that is not a number
// is neutralized by CSVText like every text cell; numbers are copied as
// they are. Each table's area_px cells are counted into sizes.
func writeObjects(w io.Writer, dir string, rows []manifestRow, sizes *sizeHistogram) error {
	var tables []manifestRow
	var heads [][]string
	for _, r := range rows {
		if r.Status != rowOK || r.Table == "" {
			continue
		}
		head, err := readTableHead(filepath.Join(dir, filepath.FromSlash(r.Table)))
		if err != nil {
			return err
		}
		tables, heads = append(tables, r), append(heads, head)
	}
	cols := objectsColumns(heads)
	planes := hasPlanes(rows)
	out := withPlane(planes, []string{"input"}, "plane")
	lead := len(out)
	pos := make(map[string]int, len(cols))
	for k, c := range cols {
		pos[c] = k + lead
		out = append(out, CSVText(c))
	}
	cw := csv.NewWriter(w)
	if err := cw.Write(out); err != nil {
		return err
	}
	for t, r := range tables {
		first := withPlane(planes, []string{CSVText(r.Input)}, r.planeText())
		if err := copyObjects(cw, filepath.Join(dir, filepath.FromSlash(r.Table)), first, heads[t], pos, len(out), sizes); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// copyObjects writes the rows of the region table at p to cw, each as a
// row of width cells: the cells of first (the input, and its plane with
// every plane on its own), then each cell at the position pos gives its column
// (head is the table's header); the area_px cells go to sizes.
func copyObjects(cw *csv.Writer, p string, first []string, head []string, pos map[string]int, width int, sizes *sizeHistogram) error {
	f, err := os.Open(p)
	if err != nil {
		return err
	}
	defer f.Close()
	cr := csv.NewReader(f)
	cr.ReuseRecord = true
	if _, err := cr.Read(); err != nil {
		return fmt.Errorf("%s: %w", p, err)
	}
	if len(head) == 0 {
		return nil
	}
	out := make([]string, width)
	area := slices.Index(head, "area_px") // -1 in a table of an earlier version
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			return nil
		}
		if err != nil {
			return fmt.Errorf("%s: %w", p, err)
		}
		if area >= 0 && area < len(rec) {
			sizes.add(p, rec[area])
		}
		clear(out)
		copy(out, first)
		for k, cell := range rec {
			if _, err := strconv.ParseFloat(cell, 64); err != nil {
				cell = CSVText(cell)
			}
			out[pos[head[k]]] = cell
		}
		if err := cw.Write(out); err != nil {
			return err
		}
	}
}

// relURL turns a slash-separated path relative to the report into a
// relative URL: "./" and every segment escaped (names may hold spaces, #,
// ?, % or :). The "./" keeps a first segment such as "javascript:x" from
// reading as a URL scheme, so every link stays a path next to the report.
// The result is a plain string, not a trusted template.URL, so
// html/template still checks and escapes it.
func relURL(p string) string {
	parts := strings.Split(p, "/")
	for k, s := range parts {
		parts[k] = url.PathEscape(s)
	}
	return "./" + strings.Join(parts, "/")
}

type reportParam struct{ Name, Value string }

type reportRow struct {
	manifestRow
	Overlay, Record string
	LabelsLink      string // relative URL of the label map, "" when none
	TableLink       string // relative URLs of the region table, the outlines
	OutlinesLink    string // and the preview, "" when none
	PreviewLink     string
	SecondsText     string
	StatusText      string // "ok", "ok, 2 warnings", "failed", "pending", "skipped"
	Class           string // row class: ok, warned, failed, pending, skipped
}

type reportData struct {
	Version, InputDir               string
	Total, OK, Warned, Failed, Pend int
	Skipped                         int
	Params                          []reportParam
	Rows, Sheet, FailureRows        []reportRow
	WarnedRows                      []reportRow
	Date                            string // when the report was written, UTC
	Summary                         reportSummary
}

// reportSummary is the report's summary of the ok images.
type reportSummary struct {
	Images                 int
	Unit                   string // "objects", or "regions" when no image has objects
	Count                  int    // objects (or regions) over all ok images
	Mean                   string // per image, 1 decimal
	Min, Max               int
	Median                 string
	Histogram              *sizeHistogram
	HistogramW, HistogramH int
}

// writeReport writes report.html: one self-contained page, no scripts and
// no external assets. The summary counts the ok images and their objects
// and draws the size histogram as inline SVG; the contact sheet shows the
// overlays themselves, scaled by the browser to 360 pixels wide (no
// thumbnail files), each a link to the full-size overlay, loaded lazily so
// that large batches open quickly. now is the date written on it.
// version is the cleave version the report names.
func writeReport(w io.Writer, idx *Index, rows []manifestRow, sizes *sizeHistogram, now time.Time, version string) error {
	c := CountRows(rows)
	d := reportData{Version: version, InputDir: idx.InputDir, Total: len(rows) - c.Skipped, OK: c.OK, Warned: c.Warned, Failed: c.Failed, Pend: c.Pending, Skipped: c.Skipped,
		Date: now.UTC().Format("2006-01-02 15:04 UTC"), Summary: summarize(rows, sizes)}
	m := idx.Settings.Map()
	for _, k := range slices.Sorted(maps.Keys(m)) {
		d.Params = append(d.Params, reportParam{k, pipeline.ValueText(m[k])})
	}
	for _, r := range rows {
		if r.Plane != nil {
			r.Input = fmt.Sprintf("%s, plane %d", r.Input, *r.Plane)
		}
		rr := reportRow{manifestRow: r, Overlay: relURL(r.Stem + pipeline.SuffixOverlay), Record: relURL(r.Stem + pipeline.SuffixRecord), StatusText: r.Status, Class: r.Status}
		if r.Labels != "" {
			rr.LabelsLink = relURL(r.Labels)
		}
		if r.Table != "" {
			rr.TableLink = relURL(r.Table)
		}
		if r.Outlines != "" {
			rr.OutlinesLink = relURL(r.Outlines)
		}
		if r.Preview != "" {
			rr.PreviewLink = relURL(r.Preview)
		}
		if n := len(r.Warnings); n > 0 {
			rr.StatusText, rr.Class = "ok, "+pipeline.Plural(n, "warning"), "warned"
			d.WarnedRows = append(d.WarnedRows, rr)
		}
		if r.Status == rowOK || r.Status == rowFailed {
			rr.SecondsText = strconv.FormatFloat(r.Seconds, 'f', 2, 64)
		}
		d.Rows = append(d.Rows, rr)
		switch r.Status {
		case rowOK:
			d.Sheet = append(d.Sheet, rr)
		case rowFailed:
			d.FailureRows = append(d.FailureRows, rr)
		}
	}
	return reportTemplate.Execute(w, d)
}

var reportTemplate = template.Must(template.New("report").Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<title>cleave batch report</title>
<style>
body { font: 14px/1.4 sans-serif; margin: 1.5em; color: #222; }
table { border-collapse: collapse; }
th, td { border: 1px solid #ccc; padding: 2px 8px; text-align: left; }
td.n { text-align: right; }
tr.failed td { background: #fde8e8; }
tr.warned td { background: #eef3fb; }
tr.pending td { background: #fff6d6; }
tr.skipped td { background: #eeeeee; }
.sheet { display: flex; flex-wrap: wrap; gap: 10px; }
.sheet figure { margin: 0; width: 360px; }
.sheet img { width: 360px; height: auto; border: 1px solid #999; }
#summary td { border: none; padding: 1px 12px 1px 0; }
svg text { font: 11px sans-serif; fill: #333; }
.sheet figcaption { font-size: 12px; word-break: break-all; }
</style>
</head>
<body>
<h1>cleave batch report</h1>
<p id="counts">{{.Total}} inputs: <b>{{.OK}} ok</b>{{if .Warned}} ({{.Warned}} with warnings to check){{end}}, <b>{{.Failed}} failed</b>{{if .Pend}}, <b>{{.Pend}} pending</b> (no current record yet){{end}}{{if .Skipped}}; <b>{{.Skipped}} skipped</b> (named like images but not read: see the table){{end}}.
Input folder: <code>{{.InputDir}}</code>. cleave {{.Version}}. Report written {{.Date}}.
The same table as CSV: <a href="./manifest.csv">manifest.csv</a>; every object of every ok image, one row each: <a href="./objects.csv">objects.csv</a>.</p>

<h2>Summary</h2>
{{with .Summary}}<table id="summary">
<tr><td>images segmented</td><td class="n">{{.Images}}</td></tr>
<tr><td>{{.Unit}}</td><td class="n">{{.Count}}</td></tr>
{{if .Images}}<tr><td>{{.Unit}} per image</td><td class="n">{{.Mean}} on average; fewest {{.Min}}, median {{.Median}}, most {{.Max}}</td></tr>{{end}}
</table>
{{if .Histogram}}{{$h := .Histogram}}<figure id="sizes" style="margin: 0.5em 0">
<svg width="{{.HistogramW}}" height="{{.HistogramH}}" role="img" aria-label="histogram of {{.Unit}} sizes">
<line x1="{{$h.X0}}" y1="{{$h.Base}}" x2="{{$h.X1}}" y2="{{$h.Base}}" stroke="#555"/>
{{range $h.Bars}}<rect x="{{.X}}" y="{{.Y}}" width="{{.W}}" height="{{.H}}" fill="#3b6e8f"><title>{{.Count}} with area {{.Lo}} to {{.Hi}} px</title></rect>
{{if .Count}}<text x="{{.Mid}}" y="{{.CountY}}" text-anchor="middle">{{.Count}}</text>{{end}}
{{end}}{{range $h.Ticks}}<text x="{{.X}}" y="{{$h.TickY}}" text-anchor="middle">{{.Text}}</text>
{{end}}<text x="{{$h.X0}}" y="{{$h.LabelY}}">area in pixels (each bar from one power of two to the next)</text>
</svg>
<figcaption>sizes of the {{$h.Total}} {{.Unit}} of the ok images (the area_px column of objects.csv)</figcaption></figure>{{end}}{{end}}

{{if .FailureRows}}<h2>Failures</h2>
<table id="failures">
<tr><th>input</th><th>message</th></tr>
{{range .FailureRows}}<tr class="failed"><td>{{.Input}}</td><td>{{.Error}}</td></tr>
{{end}}</table>
{{end}}
{{if .WarnedRows}}<h2>Warnings</h2>
<p>These images were segmented, but the result is probably not what was wanted; each message says what to change.</p>
<table id="warnings">
<tr><th>input</th><th>message</th></tr>
{{range .WarnedRows}}{{$in := .Input}}{{range .Warnings}}<tr class="warned"><td>{{$in}}</td><td>{{.}}</td></tr>
{{end}}{{end}}</table>
{{end}}
<h2>Overlays</h2>
<div class="sheet" id="sheet">
{{range .Sheet}}<figure><a href="{{.Overlay}}"><img src="{{.Overlay}}" loading="lazy" alt="overlay of {{.Input}}"></a><figcaption>{{.Input}}: {{if .Objects}}{{.Objects}} objects{{else}}{{.Regions}} regions{{end}} (click for full size)</figcaption></figure>
{{end}}</div>

<h2>Files</h2>
<table id="files">
<tr><th>input</th><th>status</th><th>regions</th><th>objects</th><th>seconds</th><th>record</th><th>label map</th><th>region table</th><th>outlines</th><th>preview</th></tr>
{{range .Rows}}<tr class="{{.Class}}"><td>{{.Input}}</td><td>{{.StatusText}}</td>{{if eq .Status "ok"}}<td class="n">{{.Regions}}</td><td class="n">{{.Objects}}</td>{{else}}<td></td><td></td>{{end}}<td class="n">{{.SecondsText}}</td><td>{{if or (eq .Status "ok") (eq .Status "failed")}}<a href="{{.Record}}">json</a>{{end}}</td><td>{{if .LabelsLink}}<a href="{{.LabelsLink}}">{{.Labels}}</a>{{end}}</td><td>{{if .TableLink}}<a href="{{.TableLink}}">regions.csv</a>{{end}}</td><td>{{if .OutlinesLink}}<a href="{{.OutlinesLink}}">geojson</a>{{end}}</td><td>{{if .PreviewLink}}<a href="{{.PreviewLink}}">png</a>{{end}}</td></tr>
{{end}}</table>

<h2>Parameters (as requested; each record holds the values used)</h2>
<table id="params">
<tr><th>parameter</th><th>value</th></tr>
{{range .Params}}<tr><td>{{.Name}}</td><td>{{.Value}}</td></tr>
{{end}}</table>
</body>
</html>
`))
