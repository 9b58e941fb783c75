package main

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"html/template"
	"io"
	"io/fs"
	"net/url"
	"os"
	"path"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"github.com/cleave-seg/cleave/imageio"
)

// Files batch writes at the top of --out besides the per-image outputs.
// The index starts with a dot, and inputs starting with a dot are skipped,
// so no input's record can take its name.
const (
	indexName    = ".cleave-batch.json"
	manifestName = "manifest.csv"
	reportName   = "report.html"
)

// batchIndex is the list of every input of a batch (all shards) with the
// settings: what manifest.csv and report.html are rebuilt from. Every
// shard of one command writes the same bytes.
type batchIndex struct {
	Tool     string       `json:"tool"`
	Version  string       `json:"version"`
	InputDir string       `json:"input_dir"`
	Settings settings     `json:"settings"`
	Inputs   []batchInput `json:"inputs"`
}

func writeBatchIndex(dir string, idx *batchIndex) error {
	return imageio.WriteAtomic(filepath.Join(dir, indexName), true, func(w io.Writer) error {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(idx)
	})
}

func readBatchIndex(dir string) (*batchIndex, error) {
	p := filepath.Join(dir, indexName)
	data, err := os.ReadFile(p)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, fmt.Errorf("%s is not the output folder of a batch: %s is missing", dir, indexName)
	}
	if err != nil {
		return nil, err
	}
	var idx batchIndex
	if err := json.Unmarshal(data, &idx); err != nil || idx.Tool != "cleave" {
		return nil, fmt.Errorf("%s: not a cleave batch index (%v)", p, err)
	}
	for _, in := range idx.Inputs {
		if in.Stem == "" || path.IsAbs(in.Stem) || strings.HasPrefix(path.Clean(in.Stem), "..") {
			return nil, fmt.Errorf("%s: output stem %q leaves the folder", p, in.Stem)
		}
	}
	return &idx, nil
}

// manifestRow is one line of manifest.csv and of the report's table.
type manifestRow struct {
	Input, Stem, Status, Error string
	Regions, Objects           int
	Seconds                    float64
	Warnings                   []string // messages of an ok record's warnings
}

// Statuses in the manifest.
const (
	rowOK      = "ok"
	rowFailed  = "failed"
	rowPending = "pending" // no record for the current settings and version yet
)

// manifestRows reads the record of every input of the index.
func manifestRows(dir string, idx *batchIndex) []manifestRow {
	rows := make([]manifestRow, len(idx.Inputs))
	for k, in := range idx.Inputs {
		r := manifestRow{Input: in.Input, Stem: in.Stem, Status: rowPending}
		rec, err := readRecord(filepath.Join(dir, filepath.FromSlash(in.Stem)+".json"))
		switch {
		case errors.Is(err, fs.ErrNotExist):
			r.Error = "no record yet"
		case err != nil:
			r.Error = err.Error()
		case rec.Version != version || rec.Settings == nil || *rec.Settings != idx.Settings:
			r.Error = "the record is from other parameters or another cleave version"
		case rec.Status == "ok":
			r.Status, r.Regions, r.Objects, r.Seconds = rowOK, rec.Regions, rec.Objects, rec.Seconds["total"]
			for _, w := range rec.Warnings {
				r.Warnings = append(r.Warnings, w.Message)
			}
		default:
			r.Status, r.Error, r.Seconds = rowFailed, rec.Error, rec.Seconds["total"]
		}
		rows[k] = r
	}
	return rows
}

type rowCounts struct{ ok, warned, failed, pending int }

func countRows(rows []manifestRow) rowCounts {
	var c rowCounts
	for _, r := range rows {
		switch r.Status {
		case rowOK:
			c.ok++
			if len(r.Warnings) > 0 {
				c.warned++
			}
		case rowFailed:
			c.failed++
		default:
			c.pending++
		}
	}
	return c
}

// writeManifestAndReport rebuilds manifest.csv and report.html in dir from
// the records of the inputs of idx.
func writeManifestAndReport(dir string, idx *batchIndex) ([]manifestRow, error) {
	rows := manifestRows(dir, idx)
	if err := imageio.WriteAtomic(filepath.Join(dir, manifestName), true, func(w io.Writer) error {
		return writeManifest(w, rows)
	}); err != nil {
		return nil, err
	}
	if err := imageio.WriteAtomic(filepath.Join(dir, reportName), true, func(w io.Writer) error {
		return writeReport(w, idx, rows)
	}); err != nil {
		return nil, err
	}
	return rows, nil
}

// writeManifest writes the CSV (RFC 4180 quoting by encoding/csv; text
// cells neutralized by csvText).
func writeManifest(w io.Writer, rows []manifestRow) error {
	cw := csv.NewWriter(w)
	_ = cw.Write([]string{"input", "status", "regions", "objects", "seconds", "error", "warnings"})
	for _, r := range rows {
		rec := []string{csvText(r.Input), r.Status, "", "", "", csvText(r.Error), csvText(strings.Join(r.Warnings, " | "))}
		if r.Status == rowOK {
			rec[2], rec[3] = strconv.Itoa(r.Regions), strconv.Itoa(r.Objects)
		}
		if r.Status != rowPending {
			rec[4] = strconv.FormatFloat(r.Seconds, 'f', 3, 64)
		}
		_ = cw.Write(rec)
	}
	cw.Flush()
	return cw.Error()
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
	SecondsText     string
	StatusText      string // "ok", "ok, 2 warnings", "failed", "pending"
	Class           string // row class: ok, warned, failed, pending
}

type reportData struct {
	Version, InputDir               string
	Total, OK, Warned, Failed, Pend int
	Params                          []reportParam
	Rows, Sheet, FailureRows        []reportRow
	WarnedRows                      []reportRow
}

// writeReport writes report.html: one self-contained page, no scripts and
// no external assets. The contact sheet shows the overlays themselves,
// scaled down by the browser (no thumbnail files), loaded lazily so that
// large batches open quickly.
func writeReport(w io.Writer, idx *batchIndex, rows []manifestRow) error {
	c := countRows(rows)
	d := reportData{Version: version, InputDir: idx.InputDir, Total: len(rows), OK: c.ok, Warned: c.warned, Failed: c.failed, Pend: c.pending}
	m := map[string]any{}
	data, _ := json.Marshal(idx.Settings)
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.UseNumber()
	_ = dec.Decode(&m)
	for _, k := range sortedKeysAny(m) {
		d.Params = append(d.Params, reportParam{k, fmt.Sprint(m[k])})
	}
	for _, r := range rows {
		rr := reportRow{manifestRow: r, Overlay: relURL(r.Stem + ".overlay.png"), Record: relURL(r.Stem + ".json"), StatusText: r.Status, Class: r.Status}
		if n := len(r.Warnings); n > 0 {
			rr.StatusText, rr.Class = "ok, "+plural(n, "warning"), "warned"
			d.WarnedRows = append(d.WarnedRows, rr)
		}
		if r.Status != rowPending {
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

func sortedKeysAny(m map[string]any) []string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	return keys
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
.sheet { display: flex; flex-wrap: wrap; gap: 10px; }
.sheet figure { margin: 0; width: 160px; }
.sheet img { width: 160px; height: auto; border: 1px solid #999; }
.sheet figcaption { font-size: 12px; word-break: break-all; }
</style>
</head>
<body>
<h1>cleave batch report</h1>
<p id="counts">{{.Total}} inputs: <b>{{.OK}} ok</b>{{if .Warned}} ({{.Warned}} with warnings to check){{end}}, <b>{{.Failed}} failed</b>{{if .Pend}}, <b>{{.Pend}} pending</b> (no current record yet){{end}}.
Input folder: <code>{{.InputDir}}</code>. cleave {{.Version}}.
The same table as CSV: <a href="./manifest.csv">manifest.csv</a>.</p>

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
{{range .Sheet}}<figure><a href="{{.Overlay}}"><img src="{{.Overlay}}" loading="lazy" alt="overlay of {{.Input}}"></a><figcaption>{{.Input}}</figcaption></figure>
{{end}}</div>

<h2>Files</h2>
<table id="files">
<tr><th>input</th><th>status</th><th>regions</th><th>objects</th><th>seconds</th><th>record</th></tr>
{{range .Rows}}<tr class="{{.Class}}"><td>{{.Input}}</td><td>{{.StatusText}}</td>{{if eq .Status "ok"}}<td class="n">{{.Regions}}</td><td class="n">{{.Objects}}</td>{{else}}<td></td><td></td>{{end}}<td class="n">{{.SecondsText}}</td><td>{{if ne .Status "pending"}}<a href="{{.Record}}">json</a>{{end}}</td></tr>
{{end}}</table>

<h2>Parameters (as requested; each record holds the values used)</h2>
<table id="params">
<tr><th>parameter</th><th>value</th></tr>
{{range .Params}}<tr><td>{{.Name}}</td><td>{{.Value}}</td></tr>
{{end}}</table>
</body>
</html>
`))
