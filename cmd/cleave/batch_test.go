package main

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"html"
	"io/fs"
	"os"
	"os/exec"
	"os/signal"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/batch"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/examples/loudskip"
	"github.com/cleave-seg/cleave/imageio/scenes"
)

// The expected outcomes in these tests come from the behaviour that issue 4
// specifies (exit codes, manifest columns, resume, shards) applied by hand
// to folders built here; the broken files are the acceptance set
// (truncated, empty, text named .tif, a non-image file). Byte equality is
// checked against an independent run of the same pipeline (clean run,
// --jobs 1, 'cleave segment'), since the issue demands identical bytes.

// makeBatchFolder writes nGood small generated scenes (the project's
// nuclei and plate generators, 128x128, alternating, half of them in a
// subfolder) and, when broken is set, the three broken images and a
// non-image file. It returns the folder and the relative paths of the good
// images.
func makeBatchFolder(t testing.TB, nGood int, broken bool) (string, []string) {
	t.Helper()
	dir := t.TempDir()
	var good []string
	for k := range nGood {
		var sc *scenes.Scene
		if k%2 == 0 {
			sc = scenes.Nuclei(scenes.NucleiOptions{Width: 128, Height: 128, Seed: uint64(700 + k)})
		} else {
			sc = scenes.Plate(scenes.PlateOptions{Width: 128, Height: 128, Seed: uint64(700 + k)})
		}
		rel := fmt.Sprintf("img-%02d.png", k)
		if k%2 == 1 {
			rel = "sub/" + rel
		}
		p := filepath.Join(dir, filepath.FromSlash(rel))
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := scenes.WritePNG(p, sc.Image()); err != nil {
			t.Fatal(err)
		}
		good = append(good, rel)
	}
	if broken {
		full, err := os.ReadFile(filepath.Join(dir, good[0]))
		if err != nil {
			t.Fatal(err)
		}
		files := map[string][]byte{
			"broken-truncated.png": full[:len(full)/2],
			"broken-empty.png":     {},
			"broken-text.tif":      []byte("this is text, not a TIFF image\n"),
			"notes.txt":            []byte("not an image; must be ignored\n"),
		}
		for name, data := range files {
			if err := os.WriteFile(filepath.Join(dir, name), data, 0o644); err != nil {
				t.Fatal(err)
			}
		}
	}
	return dir, good
}

var brokenInputs = []string{"broken-empty.png", "broken-text.tif", "broken-truncated.png"}

// runCleave runs the command in-process.
func runCleave(args ...string) (code int, stdout, stderr string) {
	var o, e bytes.Buffer
	code = run(context.Background(), args, &o, &e)
	return code, o.String(), e.String()
}

// readManifest parses manifest.csv (RFC 4180, encoding/csv) into rows
// keyed by input.
func readManifest(t *testing.T, out string) map[string][]string {
	t.Helper()
	recs := readCSV(t, filepath.Join(out, "manifest.csv"))
	if want := []string{"input", "status", "regions", "objects", "seconds", "error", "warnings", "labels"}; strings.Join(recs[0], ",") != strings.Join(want, ",") {
		t.Fatalf("manifest header %v, want %v", recs[0], want)
	}
	rows := map[string][]string{}
	for _, r := range recs[1:] {
		rows[r[0]] = r
	}
	return rows
}

// tempFiles lists the temporary files of imageio.WriteAtomic under dir.
func tempFiles(t *testing.T, dir string) []string {
	t.Helper()
	var list []string
	filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err == nil && strings.Contains(d.Name(), ".tmp-") {
			list = append(list, p)
		}
		return nil
	})
	return list
}

// outputBytes reads every output but the records (which hold timings) and
// the report (which shows them), keyed by path relative to out.
func outputBytes(t *testing.T, out string) map[string][]byte {
	t.Helper()
	m := map[string][]byte{}
	filepath.WalkDir(out, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return nil
		}
		name := d.Name()
		for _, s := range []string{".labels.png", ".overlay.png", ".classes.png", ".regions.csv"} {
			if strings.HasSuffix(name, s) {
				data, err := os.ReadFile(p)
				if err != nil {
					t.Fatal(err)
				}
				rel, _ := filepath.Rel(out, p)
				m[filepath.ToSlash(rel)] = data
			}
		}
		return nil
	})
	return m
}

func sameOutputs(t *testing.T, what string, a, b map[string][]byte) {
	t.Helper()
	if len(a) == 0 || len(a) != len(b) {
		t.Errorf("%s: %d and %d output files", what, len(a), len(b))
	}
	for k, v := range a {
		if !bytes.Equal(v, b[k]) {
			t.Errorf("%s: %s differs", what, k)
		}
	}
}

// summaryCounts reads "N computed now, M already up to date, F failed".
func summaryCounts(t *testing.T, stderr string) (computed, upToDate, failed int) {
	t.Helper()
	i := strings.LastIndex(stderr, "computed now")
	if i < 0 {
		t.Fatalf("no summary in %q", stderr)
	}
	line := stderr[strings.LastIndex(stderr[:i], ":")+1:]
	if _, err := fmt.Sscanf(line, " %d computed now, %d already up to date, %d failed", &computed, &upToDate, &failed); err != nil {
		t.Fatalf("summary %q: %v", line, err)
	}
	return
}

func TestBatchFolderResumeAndReport(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	in, good := makeBatchFolder(t, 4, true)
	// Hostile and awkward names (copies of the first image): a name that
	// would be a script link, names with : and %, and names a spreadsheet
	// would take for formulas.
	first, err := os.ReadFile(filepath.Join(in, good[0]))
	if err != nil {
		t.Fatal(err)
	}
	hostile := []string{"javascript:(document.title='PWNED').png", "run:7 sample.png", "50% done.png", "=SUM(1+1).png", "-2+3.png", "@cmd.png"}
	for _, n := range hostile {
		if err := os.WriteFile(filepath.Join(in, n), first, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	good = append(good, hostile...)
	out := filepath.Join(t.TempDir(), "out")
	args := []string{"batch", "-r", "--classes", "2", "--background", "dark", "--superpixels", "150", "--jobs", "2", "--out", out, in}
	code, stdout, stderr := runCleave(args...)
	if code != exitFail {
		t.Fatalf("exit %d, want 1 (three broken files): %s", code, stderr)
	}
	if stdout != "" {
		t.Errorf("stdout %q, want nothing", stdout)
	}
	if c, u, f := summaryCounts(t, stderr); c != 10 || u != 0 || f != 3 {
		t.Errorf("summary %d computed, %d up to date, %d failed; want 10, 0, 3", c, u, f)
	}
	rows := readManifest(t, out)
	if len(rows) != 13 {
		t.Errorf("manifest has %d rows, want 13 (notes.txt is not an image)", len(rows))
	}
	// A text cell starting with = + - @ is written with a leading quote
	// (OWASP's advice on CSV injection); the others as they are.
	for _, n := range []string{"=SUM(1+1).png", "-2+3.png", "@cmd.png"} {
		if rows["'"+n] == nil || rows[n] != nil {
			t.Errorf("manifest: the row of %s is not neutralized with a leading quote", n)
		}
	}
	for _, g := range good {
		r := rows[g]
		if strings.ContainsAny(g[:1], "=-@") {
			r = rows["'"+g]
		}
		if r == nil || r[1] != "ok" || r[2] == "" || r[2] == "0" || r[5] != "" {
			t.Errorf("manifest row for %s: %v", g, r)
		}
		if _, err := os.Stat(filepath.Join(out, strings.TrimSuffix(g, ".png")+".labels.png")); err != nil {
			t.Errorf("mirrored output: %v", err)
		}
	}
	wantMsg := map[string]string{"broken-empty.png": "empty", "broken-text.tif": "not a PNG, TIFF", "broken-truncated.png": "truncated"}
	for _, b := range brokenInputs {
		r := rows[b]
		if r == nil || r[1] != "failed" || !strings.Contains(r[5], b) || !strings.Contains(r[5], wantMsg[b]) {
			t.Errorf("manifest row for %s: %v", b, r)
		}
		rec, err := pipeline.ReadRecord(filepath.Join(out, strings.TrimSuffix(b, filepath.Ext(b))+".json"))
		if err != nil || rec.Status != "failed" || rec.Error != r[5] {
			t.Errorf("record of %s: %+v, %v", b, rec, err)
		}
	}
	if tmp := tempFiles(t, out); len(tmp) > 0 {
		t.Errorf("temporary files left: %v", tmp)
	}
	t.Run("report in chromium", func(t *testing.T) { checkReportInBrowser(t, out, good, brokenInputs) })

	// Rerun: nothing recomputed, records untouched.
	recPath := filepath.Join(out, "img-00.json")
	before, _ := os.Stat(recPath)
	code, _, stderr = runCleave(args...)
	if c, u, f := summaryCounts(t, stderr); code != exitFail || c != 0 || u != 10 || f != 3 {
		t.Errorf("rerun: exit %d, %d computed, %d up to date, %d failed; want 1, 0, 10, 3", code, c, u, f)
	}
	if after, _ := os.Stat(recPath); !after.ModTime().Equal(before.ModTime()) {
		t.Errorf("rerun rewrote %s", recPath)
	}

	// A changed file is recomputed, alone.
	sc := scenes.Nuclei(scenes.NucleiOptions{Width: 128, Height: 128, Seed: 999})
	if err := scenes.WritePNG(filepath.Join(in, good[0]), sc.Image()); err != nil {
		t.Fatal(err)
	}
	_, _, stderr = runCleave(args...)
	if c, u, _ := summaryCounts(t, stderr); c != 1 || u != 9 {
		t.Errorf("after changing one file: %d computed, %d up to date; want 1, 9", c, u)
	}
	// A changed parameter recomputes everything.
	_, _, stderr = runCleave(append(args[:len(args)-1], "--min-area", "30", in)...)
	if c, u, _ := summaryCounts(t, stderr); c != 10 || u != 0 {
		t.Errorf("after changing --min-area: %d computed, %d up to date; want 10, 0", c, u)
	}
}

// checkReportInBrowser loads report.html in Debian's chromium (headless)
// and checks what a reader sees: the counts, every overlay thumbnail
// decoded by the browser and shown scaled, the failure rows. A probe page
// next to the report (written by the test only; the report has no
// scripts) reads the rendered report from an iframe.
func checkReportInBrowser(t *testing.T, out string, ok, failed []string) {
	t.Helper()
	chromium, err := exec.LookPath("chromium")
	if err != nil {
		loudskip.Skip(t, "Debian chromium not installed (apt-get install -y chromium); report.html was not checked in a browser")
	}
	report, err := os.ReadFile(filepath.Join(out, "report.html"))
	if err != nil {
		t.Fatal(err)
	}
	if bytes.Contains(report, []byte("<script")) || bytes.Contains(report, []byte("http://")) || bytes.Contains(report, []byte("https://")) {
		t.Error("report.html has scripts or external links")
	}
	browse := func(page string) string {
		ctx, cancel := context.WithTimeout(context.Background(), 90*time.Second)
		defer cancel()
		cmd := exec.CommandContext(ctx, chromium, "--headless", "--no-sandbox", "--disable-gpu", "--allow-file-access-from-files",
			"--virtual-time-budget=10000", "--dump-dom", "file://"+page)
		cmd.Env = append(os.Environ(), "HOME="+t.TempDir())
		dom, err := cmd.Output()
		if err != nil {
			t.Fatalf("chromium on %s: %v", page, err)
		}
		return string(dom)
	}
	abs, _ := filepath.Abs(out)
	dom := browse(filepath.Join(abs, "report.html"))
	// The plates of makeBatchFolder, run with --background dark, come out
	// as one object over the field and are ok with a warning.
	for _, want := range []string{fmt.Sprintf("%d inputs: <b>%d ok</b>", len(ok)+len(failed), len(ok)), fmt.Sprintf("<b>%d failed</b>", len(failed))} {
		if !strings.Contains(dom, want) {
			t.Errorf("rendered report lacks %q", want)
		}
	}
	if !strings.Contains(dom, `<a href="./manifest.csv">manifest.csv</a>`) {
		t.Error("rendered report lacks the link to manifest.csv")
	}
	if !strings.Contains(dom, `<a href="./objects.csv">objects.csv</a>`) {
		t.Error("rendered report lacks the link to objects.csv")
	}
	// The summary: images segmented, the date, a histogram bar per
	// doubling bin whose counts add up to the objects (or regions) of the
	// region tables, links to each table.
	if !strings.Contains(dom, fmt.Sprintf("<td>images segmented</td><td class=\"n\">%d</td>", len(ok))) {
		t.Errorf("rendered report lacks the count of images segmented (%d)", len(ok))
	}
	if !regexp.MustCompile(`Report written \d{4}-\d\d-\d\d \d\d:\d\d UTC`).MatchString(dom) {
		t.Error("rendered report lacks its date")
	}
	if len(ok) > 0 {
		bars := regexp.MustCompile(`<title>(\d+) with area (\d+) to (\d+) px</title>`).FindAllStringSubmatch(dom, -1)
		total := 0
		for _, b := range bars {
			n, _ := strconv.Atoi(b[1])
			total += n
		}
		rows := 0
		for _, g := range ok {
			rows += len(readRegionRows(t, filepath.Join(out, strings.TrimSuffix(g, ".png")+".regions.csv")))
		}
		if len(bars) == 0 || total != rows {
			t.Errorf("size histogram: %d bars counting %d labels; the region tables hold %d", len(bars), total, rows)
		}
	}
	for _, f := range failed {
		if !strings.Contains(dom, `<tr class="failed"><td>`+f+`</td>`) {
			t.Errorf("rendered report lacks the failure row of %s", f)
		}
	}
	probe := filepath.Join(abs, ".probe.html")
	if err := os.WriteFile(probe, []byte(reportProbe), 0o644); err != nil {
		t.Fatal(err)
	}
	defer os.Remove(probe)
	seen := browse(probe)
	i, j := strings.Index(seen, `<pre id="out">`), strings.Index(seen, "</pre>")
	if i < 0 || j < i {
		t.Fatalf("probe page did not render: %s", seen)
	}
	var lines []string
	links := 0
	for _, l := range strings.Split(strings.TrimSpace(html.UnescapeString(seen[i+len(`<pre id="out">`):j])), "\n") {
		kind, rest, _ := strings.Cut(l, " ")
		switch kind {
		case "IMG":
			lines = append(lines, rest)
		case "LINK":
			// Every link and image source is a relative path written
			// with "./" and resolves to a file: no scheme (javascript:,
			// run:, ...) is ever taken from a file name.
			links++
			protocol, raw, _ := strings.Cut(rest, " ")
			if protocol != "file:" || !strings.HasPrefix(raw, "./") {
				t.Errorf("link %q resolves to protocol %s; want a ./ path to a file", raw, protocol)
			}
		default:
			t.Errorf("probe line %q", l)
		}
	}
	// manifest.csv and objects.csv; per ok image the overlay (link and
	// image), the record, the label map, the region table, the outlines
	// and the preview; per failed image the record.
	if want := 2 + 7*len(ok) + len(failed); links != want {
		t.Errorf("%d links and image sources, want %d", links, want)
	}
	sort.Strings(lines)
	var want []string
	for _, g := range ok {
		// Overlays are full size (128x128 here) and shown 360 px wide,
		// loaded from the file beside the input's record.
		want = append(want, filepath.Join(abs, strings.TrimSuffix(g, ".png")+".overlay.png")+" 128x128 shown 360x360")
	}
	sort.Strings(want)
	if strings.Join(lines, "\n") != strings.Join(want, "\n") {
		t.Errorf("thumbnails as the browser shows them:\n%s\nwant:\n%s", strings.Join(lines, "\n"), strings.Join(want, "\n"))
	}
	if strings.Contains(dom, "PWNED</title>") {
		t.Error("a file name changed the report's title")
	}
}

// reportProbe renders report.html in a tall iframe (so lazy images load)
// and lists each contact-sheet image (the file it loaded, its decoded and
// shown size) and every link or image source (the protocol it resolves
// to, and the attribute as written).
const reportProbe = `<!DOCTYPE html><html><body><iframe id="f" src="report.html" style="width:1200px;height:100000px"></iframe><pre id="out">waiting</pre>
<script>
const f = document.getElementById('f');
f.addEventListener('load', () => {
  const check = () => {
    const imgs = Array.from(f.contentDocument.querySelectorAll('#sheet img'));
    if (imgs.some(i => !i.complete)) { setTimeout(check, 100); return; }
    const links = Array.from(f.contentDocument.querySelectorAll('[href], [src]')).map(e => {
      const raw = e.getAttribute('href') ?? e.getAttribute('src');
      return 'LINK ' + new URL(raw, f.contentDocument.baseURI).protocol + ' ' + raw;
    });
    document.getElementById('out').textContent = imgs.map(i => 'IMG ' + decodeURIComponent(new URL(i.src).pathname) + ' ' + i.naturalWidth + 'x' + i.naturalHeight + ' shown ' + i.width + 'x' + i.height).concat(links).join('\n');
  };
  check();
});
</script></body></html>
`

// Same bytes whatever --jobs, and shards 0/3, 1/3, 2/3 into one folder
// give the whole run; --rebuild then writes the full manifest. Batch's
// outputs also equal those of 'cleave segment' on the same file.
func TestBatchJobsShardsSegment(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	in, good := makeBatchFolder(t, 5, false)
	root := t.TempDir()
	base := []string{"batch", "-r", "--classes", "2", "--superpixels", "150", "-q"}
	whole := map[string]map[string][]byte{}
	for _, jobs := range []string{"1", "2"} {
		out := filepath.Join(root, "jobs"+jobs)
		if code, _, stderr := runCleave(append(base, "--jobs", jobs, "--out", out, in)...); code != exitOK {
			t.Fatalf("--jobs %s: exit %d: %s", jobs, code, stderr)
		}
		whole[jobs] = outputBytes(t, out)
	}
	sameOutputs(t, "--jobs 1 vs 2", whole["1"], whole["2"])

	shared := filepath.Join(root, "shards")
	for i := range 3 {
		code, _, stderr := runCleave(append(base, "--jobs", "1", "--shard", fmt.Sprintf("%d/3", i), "--out", shared, in)...)
		if code != exitOK {
			t.Fatalf("shard %d/3: exit %d: %s", i, code, stderr)
		}
	}
	if _, err := os.Stat(filepath.Join(shared, "manifest.csv")); err == nil {
		t.Error("a shard wrote manifest.csv; only --rebuild should")
	}
	sameOutputs(t, "shards vs whole", whole["1"], outputBytes(t, shared))
	if code, _, stderr := runCleave("batch", "--rebuild", shared); code != exitOK {
		t.Fatalf("--rebuild: exit %d: %s", code, stderr)
	}
	rows := readManifest(t, shared)
	for _, g := range good {
		if rows[g] == nil || rows[g][1] != "ok" {
			t.Errorf("rebuilt manifest row of %s: %v", g, rows[g])
		}
	}
	if len(rows) != len(good) {
		t.Errorf("rebuilt manifest has %d rows, want %d", len(rows), len(good))
	}

	seg := filepath.Join(root, "segment")
	if code, _, stderr := runCleave("segment", "--classes", "2", "--superpixels", "150", "--out", seg, filepath.Join(in, good[0])); code != exitOK {
		t.Fatalf("segment: exit %d: %s", code, stderr)
	}
	for _, s := range []string{".labels.png", ".overlay.png", ".classes.png", ".regions.csv"} {
		a, _ := os.ReadFile(filepath.Join(seg, "img-00"+s))
		if len(a) == 0 || !bytes.Equal(a, whole["2"]["img-00"+s]) {
			t.Errorf("batch's img-00%s differs from cleave segment's", s)
		}
	}
}

// A pending shard shows in the rebuilt manifest as pending, exit 1.
func TestBatchRebuildPending(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	in, good := makeBatchFolder(t, 2, false)
	out := filepath.Join(t.TempDir(), "out")
	if code, _, stderr := runCleave("batch", "-r", "-q", "--superpixels", "150", "--shard", "0/2", "--out", out, in); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	code, _, _ := runCleave("batch", "--rebuild", "-q", out)
	rows := readManifest(t, out)
	if code != exitFail || rows[good[0]][1] != "ok" || rows[good[1]][1] != "pending" {
		t.Errorf("exit %d, rows %v; want 1, %s ok and %s pending", code, rows, good[0], good[1])
	}
}

// TestBatchHelperProcess is not a test: it is the cleave command when the
// kill test starts this test binary as a subprocess.
func TestBatchHelperProcess(t *testing.T) {
	if os.Getenv("CLEAVE_BATCH_HELPER") != "1" {
		t.Skip("helper process only")
	}
	args := os.Args
	for k, a := range args {
		if a == "--" {
			args = args[k+1:]
			break
		}
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM) // as main does
	code := run(ctx, args, os.Stdout, os.Stderr)
	stop()
	os.Exit(code)
}

// kill -9 in the middle of a run, then a rerun: the same files as an
// uninterrupted run, byte for byte, and no temporary files.
func TestBatchKillAndResume(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	in, _ := makeBatchFolder(t, 8, false)
	root := t.TempDir()
	clean := filepath.Join(root, "clean")
	args := []string{"batch", "-r", "-q", "--classes", "2", "--superpixels", "150", "--jobs", "2", "--workers", "1"}
	if code, _, stderr := runCleave(append(args, "--out", clean, in)...); code != exitOK {
		t.Fatalf("clean run: exit %d: %s", code, stderr)
	}
	want := outputBytes(t, clean)

	for round, after := range []int{1, 4} {
		out := filepath.Join(root, fmt.Sprintf("killed%d", round))
		cmd := exec.Command(os.Args[0], append([]string{"-test.run=^TestBatchHelperProcess$", "--"}, append(args, "--out", out, in)...)...)
		cmd.Env = append(os.Environ(), "CLEAVE_BATCH_HELPER=1")
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		// Kill once `after` records exist: other images are mid-way then.
		deadline := time.Now().Add(60 * time.Second)
		for time.Now().Before(deadline) {
			recs, _ := filepath.Glob(filepath.Join(out, "*.json"))
			sub, _ := filepath.Glob(filepath.Join(out, "sub", "*.json"))
			if len(recs)+len(sub) >= after+1 { // +1: the index
				break
			}
			time.Sleep(2 * time.Millisecond)
		}
		if err := cmd.Process.Signal(syscall.SIGKILL); err != nil {
			t.Fatal(err)
		}
		cmd.Wait()
		done := 0
		for _, in := range []string{"img-00", "img-02", "img-04", "img-06", "sub/img-01", "sub/img-03", "sub/img-05", "sub/img-07"} {
			if rec, err := pipeline.ReadRecord(filepath.Join(out, filepath.FromSlash(in)+".json")); err == nil && rec.Status == "ok" {
				done++
			}
		}
		if done == 8 {
			t.Fatalf("the run finished before the kill; the test proves nothing")
		}
		t.Logf("killed with %d of 8 records written", done)
		// Stale temporary files (of this version and of earlier ones) and
		// a broken output under the record that pipeline.Process writes
		// before the outputs (status "writing"), as kill -9 mid-write
		// would leave them if a renamed file were damaged.
		os.MkdirAll(out, 0o755)
		os.WriteFile(filepath.Join(out, ".img-06.labels.png.tmp-123456"), []byte("partial"), 0o644)
		os.WriteFile(filepath.Join(out, ".img-06.overlay.png.tmp-pid1-123456"), []byte("partial"), 0o644)
		os.WriteFile(filepath.Join(out, "img-06.labels.png"), []byte("partial"), 0o644)
		// It announces every output of a PNG run, as pipeline.Process does
		// (the one list, pipeline.OutputSuffixes).
		var announced []string
		for _, suf := range pipeline.OutputSuffixes() {
			if !strings.HasSuffix(suf, ".tif") {
				announced = append(announced, "img-06"+suf)
			}
		}
		intent := &pipeline.Record{Tool: "cleave", Version: version, Status: pipeline.StatusWriting, Outputs: announced}
		if err := pipeline.WriteRecord(filepath.Join(out, "img-06.json"), intent, true, ""); err != nil {
			t.Fatal(err)
		}

		if code, _, stderr := runCleave(append(args, "--out", out, in)...); code != exitOK {
			t.Fatalf("rerun after kill: exit %d: %s", code, stderr)
		}
		sameOutputs(t, fmt.Sprintf("killed after %d records, rerun vs clean", after), want, outputBytes(t, out))
		if tmp := tempFiles(t, out); len(tmp) > 0 {
			t.Errorf("temporary files left after the rerun: %v", tmp)
		}
	}
}

// Ctrl-C (SIGINT) mid-run: exit 1 with a message, no temporary files, and
// the rerun completes the work with the bytes of a clean run.
func TestBatchInterrupt(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	in, _ := makeBatchFolder(t, 8, false)
	root := t.TempDir()
	args := []string{"batch", "-r", "--classes", "2", "--superpixels", "150", "--jobs", "1"}
	clean := filepath.Join(root, "clean")
	if code, _, stderr := runCleave(append(args, "-q", "--out", clean, in)...); code != exitOK {
		t.Fatalf("clean run: exit %d: %s", code, stderr)
	}
	out := filepath.Join(root, "out")
	cmd := exec.Command(os.Args[0], append([]string{"-test.run=^TestBatchHelperProcess$", "--"}, append(args, "--out", out, in)...)...)
	cmd.Env = append(os.Environ(), "CLEAVE_BATCH_HELPER=1")
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	deadline := time.Now().Add(60 * time.Second)
	for time.Now().Before(deadline) {
		if recs, _ := filepath.Glob(filepath.Join(out, "img-00.json")); len(recs) > 0 {
			break
		}
		time.Sleep(2 * time.Millisecond)
	}
	cmd.Process.Signal(os.Interrupt)
	err := cmd.Wait()
	var ee *exec.ExitError
	if !errors.As(err, &ee) || ee.ExitCode() != exitFail || !strings.Contains(stderr.String(), "interrupted") {
		t.Errorf("after SIGINT: %v, stderr %q; want exit 1 and 'interrupted'", err, stderr.String())
	}
	if tmp := tempFiles(t, out); len(tmp) > 0 {
		t.Errorf("temporary files left after SIGINT: %v", tmp)
	}
	if code, _, stderr := runCleave(append(args, "-q", "--out", out, in)...); code != exitOK {
		t.Fatalf("rerun: exit %d: %s", code, stderr)
	}
	sameOutputs(t, "interrupted then rerun vs clean", outputBytes(t, clean), outputBytes(t, out))
}

// Wrong usage: exit 2, a message naming the problem, nothing written.
func TestBatchUsage(t *testing.T) {
	in, _ := makeBatchFolder(t, 1, false)
	root := t.TempDir()
	file := filepath.Join(root, "file.txt")
	os.WriteFile(file, []byte("x"), 0o644)
	badJSON := filepath.Join(root, "bad.json")
	os.WriteFile(badJSON, []byte("{not json"), 0o644)
	unknown := filepath.Join(root, "unknown.json")
	os.WriteFile(unknown, []byte(`{"sigma": 3}`), 0o644)
	out := filepath.Join(root, "out")
	cases := []struct {
		name string
		args []string
		want string
	}{
		{"no INPUT_DIR", []string{"--out", out}, "no INPUT_DIR"},
		{"two arguments", []string{"--out", out, in, in}, "one INPUT_DIR expected"},
		{"INPUT_DIR missing", []string{"--out", out, filepath.Join(root, "nope")}, "does not exist"},
		{"INPUT_DIR is a file", []string{"--out", out, file}, "is a file"},
		{"no --out", []string{in}, "--out DIR is required"},
		{"--out is a file", []string{"--out", file, in}, "is a file, not a folder"},
		{"--out under a file", []string{"--out", filepath.Join(file, "sub"), in}, "is a file, not a folder"},
		{"--out is INPUT_DIR", []string{"--out", in, in}, "inside INPUT_DIR"},
		{"shard no slash", []string{"--shard", "1", "--out", out, in}, "--shard must be I/N"},
		{"shard I = N", []string{"--shard", "3/3", "--out", out, in}, "--shard must be I/N"},
		{"shard negative", []string{"--shard", "-1/3", "--out", out, in}, "--shard must be I/N"},
		{"shard N = 0", []string{"--shard", "0/0", "--out", out, in}, "--shard must be I/N"},
		{"shard words", []string{"--shard", "a/b", "--out", out, in}, "--shard must be I/N"},
		{"params not JSON", []string{"--params", badJSON, "--out", out, in}, "not a JSON object"},
		{"params unknown key", []string{"--params", unknown, "--out", out, in}, `unknown parameter "sigma"`},
		{"params missing", []string{"--params", filepath.Join(root, "none.json"), "--out", out, in}, "params file"},
		{"bad parameter", []string{"--sigma-i", "wide", "--out", out, in}, "--sigma-i"},
		{"bad glob", []string{"--include", "[", "--out", out, in}, "not a valid glob"},
		{"negative jobs", []string{"--jobs", "-1", "--out", out, in}, "--jobs"},
		{"unknown flag", []string{"--bogus", "--out", out, in}, "unknown flag"},
		{"rebuild not a batch folder", []string{"--rebuild", root}, "not the output folder of a batch"},
		{"rebuild with parameters", []string{"--rebuild", "--classes", "2", root}, "--rebuild takes only"},
	}
	// An unwritable --out: a folder without write permission (not for
	// root, who may write anyway) and Linux's /proc, which refuses new
	// files even to root (proc(5)).
	if os.Geteuid() != 0 {
		ro := filepath.Join(root, "readonly")
		os.Mkdir(ro, 0o500)
		cases = append(cases, struct {
			name string
			args []string
			want string
		}{"--out not writable", []string{"--out", filepath.Join(ro, "out"), in}, "cannot write in"})
	}
	if st, err := os.Stat("/proc/self"); err == nil && st.IsDir() {
		cases = append(cases, struct {
			name string
			args []string
			want string
		}{"--out in /proc", []string{"--out", "/proc/cleave-batch-test-out", in}, "cannot write in /proc"})
	}
	listing := func() string {
		var names []string
		filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
			names = append(names, p)
			return nil
		})
		return strings.Join(names, "\n")
	}
	before := listing()
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			code, stdout, stderr := runCleave(append([]string{"batch"}, c.args...)...)
			if code != exitUsage || !strings.Contains(stderr, c.want) || stdout != "" {
				t.Errorf("exit %d, stderr %q; want 2 and a message with %q", code, stderr, c.want)
			}
			if !strings.HasPrefix(stderr, "cleave batch: ") {
				t.Errorf("stderr %q lacks the program prefix", stderr)
			}
			if after := listing(); after != before {
				t.Errorf("files written:\n%s", after)
			}
		})
	}
}

// --out inside INPUT_DIR is wrong usage (issue 4, bad input): exit 2 and
// nothing written, so a later run cannot read the outputs back as inputs.
func TestBatchOutInsideInput(t *testing.T) {
	in, _ := makeBatchFolder(t, 2, false)
	for _, sub := range []string{"results", filepath.Join("a", "b")} {
		out := filepath.Join(in, sub)
		code, _, stderr := runCleave("batch", "-r", "-q", "--out", out, in)
		if code != exitUsage || !strings.Contains(stderr, "inside INPUT_DIR") {
			t.Errorf("--out %s: exit %d, stderr %q; want exit 2 naming the problem", sub, code, stderr)
		}
		if _, err := os.Stat(out); err == nil {
			t.Errorf("--out %s was created", sub)
		}
	}
}

// A symbolic link inside --out that leads elsewhere is not written
// through: a usage error before anything is written.
func TestBatchSymlinkEscape(t *testing.T) {
	in, _ := makeBatchFolder(t, 2, false)
	out := filepath.Join(t.TempDir(), "out")
	outside := t.TempDir()
	os.MkdirAll(out, 0o755)
	if err := os.Symlink(outside, filepath.Join(out, "sub")); err != nil {
		t.Skip("no symbolic links here:", err)
	}
	code, _, stderr := runCleave("batch", "-r", "-q", "--out", out, in)
	if code != exitUsage || !strings.Contains(stderr, "outside --out, through a symbolic link") {
		t.Errorf("exit %d, stderr %q; want 2 and the escape named", code, stderr)
	}
	if entries, _ := os.ReadDir(outside); len(entries) != 0 {
		t.Errorf("%d files written outside --out", len(entries))
	}
	if entries, _ := os.ReadDir(out); len(entries) != 1 {
		t.Errorf("%d entries in --out, want only the link", len(entries))
	}
	// A file where an output folder is needed.
	os.Remove(filepath.Join(out, "sub"))
	os.WriteFile(filepath.Join(out, "sub"), nil, 0o644)
	code, _, stderr = runCleave("batch", "-r", "-q", "--out", out, in)
	if code != exitUsage || !strings.Contains(stderr, "a file stands in its way") {
		t.Errorf("exit %d, stderr %q; want 2 and the file named", code, stderr)
	}
}

// --fail-fast stops at the first failure; --include/--exclude select files;
// two inputs with one stem keep their extensions; the plain progress line
// appears when stderr is not a terminal, and --quiet silences everything.
func TestBatchOptions(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	in, good := makeBatchFolder(t, 2, true)
	root := t.TempDir()

	out := filepath.Join(root, "failfast")
	code, _, stderr := runCleave("batch", "--jobs", "1", "--superpixels", "150", "--fail-fast", "--out", out, in)
	if code != exitFail || !strings.Contains(stderr, "--fail-fast") {
		t.Errorf("--fail-fast: exit %d, %q", code, stderr)
	}
	// Sorted, broken-empty.png comes first: nothing after it is done.
	if _, err := os.Stat(filepath.Join(out, "img-00.json")); err == nil {
		t.Error("--fail-fast went on after the first failure")
	}

	out = filepath.Join(root, "select")
	code, _, stderr = runCleave("batch", "-r", "-q", "--superpixels", "150", "--include", "*.png", "--exclude", "broken-*", "--exclude", "sub/*", "--out", out, in)
	rows := readManifest(t, out)
	if code != exitOK || len(rows) != 1 || rows[good[0]] == nil {
		t.Errorf("--include/--exclude: exit %d, rows %v, %s", code, rows, stderr)
	}

	// img-00.tif beside img-00.png: both keep their extension in the stem.
	tif := scenes.Nuclei(scenes.NucleiOptions{Width: 128, Height: 128, Seed: 1234})
	if err := scenes.WriteTIFF(filepath.Join(in, "img-00.tif"), tif.Image()); err != nil {
		t.Fatal(err)
	}
	out = filepath.Join(root, "stems")
	var progress bytes.Buffer
	code = runBatchWith(context.Background(), []string{"--exclude", "broken-*", "--superpixels", "150", "--jobs", "1", "--out", out, in}, &bytes.Buffer{}, &progress,
		func(o *batchOptions) { o.progressEvery = time.Millisecond })
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, progress.String())
	}
	for _, name := range []string{"img-00.png.labels.png", "img-00.tif.labels.png"} {
		if _, err := os.Stat(filepath.Join(out, name)); err != nil {
			t.Errorf("same stem: %v", err)
		}
	}
	if !strings.Contains(progress.String(), "images done") {
		t.Errorf("no plain progress line in %q", progress.String())
	}
	code, stdout, stderr := runCleave("batch", "-q", "--exclude", "broken-*", "--superpixels", "150", "--out", out, in)
	if code != exitOK || stdout != "" || stderr != "" {
		t.Errorf("--quiet: exit %d, stdout %q, stderr %q", code, stdout, stderr)
	}
}

// Files named like truth masks (tune's and score's rule) are skipped by
// default, counted in one stderr line and listed as skipped manifest rows;
// --with-truths segments them.
func TestBatchSkipsTruths(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	in, good := makeBatchFolder(t, 1, false)
	img, err := os.ReadFile(filepath.Join(in, good[0]))
	if err != nil {
		t.Fatal(err)
	}
	truths := []string{"img-00.truth.png", "img-00_mask.png"}
	for _, name := range truths {
		if err := os.WriteFile(filepath.Join(in, name), img, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	root := t.TempDir()

	out := filepath.Join(root, "default")
	code, _, stderr := runCleave("batch", "--jobs", "1", "--superpixels", "150", "--out", out, in)
	rows := readManifest(t, out)
	if code != exitOK || len(rows) != 3 || rows[good[0]] == nil || rows[good[0]][1] != "ok" {
		t.Fatalf("default: exit %d, rows %v, %s", code, rows, stderr)
	}
	for _, name := range truths {
		if r := rows[name]; r == nil || r[1] != "skipped" || !strings.Contains(r[5], "truth mask") || !strings.Contains(r[5], "--with-truths") {
			t.Errorf("%s: row %v; want skipped as a truth mask", name, r)
		}
		if _, err := os.Stat(filepath.Join(out, strings.TrimSuffix(name, ".png")+".labels.png")); err == nil {
			t.Errorf("%s was segmented", name)
		}
	}
	if n := strings.Count(stderr, "named like truth masks"); n != 1 || !strings.Contains(stderr, "skipped 2 files named like truth masks") {
		t.Errorf("stderr says %d times, want one line with the count 2:\n%s", n, stderr)
	}
	// The summary counts them as truth masks, not as other entries.
	if !strings.Contains(stderr, ", 2 truth masks skipped in ") || strings.Contains(stderr, "other entries skipped") {
		t.Errorf("summary line does not count the 2 truth masks apart:\n%s", stderr)
	}
	if strings.Contains(stderr, "skipped "+filepath.Join(in, truths[0])) {
		t.Errorf("truth files named one by one on stderr:\n%s", stderr)
	}

	out = filepath.Join(root, "with")
	code, _, stderr = runCleave("batch", "--jobs", "1", "--superpixels", "150", "--with-truths", "--out", out, in)
	rows = readManifest(t, out)
	if code != exitOK || len(rows) != 3 || strings.Contains(stderr, "truth") {
		t.Fatalf("--with-truths: exit %d, rows %v, %s", code, rows, stderr)
	}
	for _, name := range truths {
		if r := rows[name]; r == nil || r[1] != "ok" {
			t.Errorf("--with-truths: %s row %v; want ok", name, r)
		}
	}
}

func TestParseShard(t *testing.T) {
	cases := []struct {
		in   string
		i, n int
		ok   bool
	}{
		{"0/1", 0, 1, true}, {"2/3", 2, 3, true}, {" 1/4 ", 1, 4, true},
		{"3/3", 0, 0, false}, {"-1/2", 0, 0, false}, {"0/0", 0, 0, false}, {"1", 0, 0, false}, {"1/", 0, 0, false}, {"x/2", 0, 0, false},
	}
	for _, c := range cases {
		i, n, _, err := batch.Shard(c.in, nil)
		if (err == nil) != c.ok || i != c.i || n != c.n {
			t.Errorf("batch.Shard(%q) = %d, %d, %v", c.in, i, n, err)
		}
	}
}

// Help on both routes, with the worked example and the caution (STYLE.md:
// every command's --help has a summary, the flags and a worked example).
func TestBatchHelp(t *testing.T) {
	for _, args := range [][]string{{"help", "batch"}, {"batch", "--help"}} {
		code, stdout, _ := runCleave(args...)
		for _, want := range []string{"Usage: cleave batch", "cleave batch --classes 2 --background dark --out results examples/nuclei", "--with-truths", "--rebuild", "--shard", "Caution:"} {
			if code != exitOK || !strings.Contains(stdout, want) {
				t.Errorf("%v: exit %d, help lacks %q", args, code, want)
			}
		}
	}
}
