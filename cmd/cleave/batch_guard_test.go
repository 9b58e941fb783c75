//go:build linux || darwin || freebsd || netbsd || openbsd || dragonfly || solaris

package main

import (
	"bytes"
	"errors"
	"fmt"
	"net"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/batch"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/outlock"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/cleave-seg/cleave/imageio/scenes"
	"golang.org/x/sys/unix"
)

// These tests need flock(2), FIFOs and SIGSTOP, hence the systems above.
//
// The expected outcomes here are those issue 11 asks for (items 6, 7 and
// 9), applied by hand to folders built in each test: one writer per
// --out, only cleave's own files replaced, odd folder entries listed as
// skipped.

// startHelperBatch starts the cleave command in a child process (this test
// binary, see TestBatchHelperProcess) with args.
func startHelperBatch(t *testing.T, args ...string) (*exec.Cmd, *bytes.Buffer) {
	t.Helper()
	cmd := exec.Command(os.Args[0], append([]string{"-test.run=^TestBatchHelperProcess$", "--"}, args...)...)
	cmd.Env = append(os.Environ(), "CLEAVE_BATCH_HELPER=1")
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	return cmd, &stderr
}

// waitFor polls until cond holds; the deadline only keeps a broken run
// from hanging the test (no time is asserted).
func waitFor(t *testing.T, what string, cond func() bool) {
	t.Helper()
	deadline := time.Now().Add(60 * time.Second)
	for !cond() {
		if time.Now().After(deadline) {
			t.Fatalf("gave up waiting for %s", what)
		}
		time.Sleep(2 * time.Millisecond)
	}
}

// Two batch processes on one --out: the second, a rebuild and a shard are
// refused at once with exit 2 naming the holder (its pid), and the first
// finishes unharmed with the bytes of a run that was alone. The first is
// stopped (SIGSTOP) while it holds the lock in the middle of its work, so
// the overlap does not depend on timing; the lock is the kernel's and
// lasts while the process exists.
func TestBatchOneWriterPerOut(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	in, _ := makeBatchFolder(t, 6, false)
	root := t.TempDir()
	args := []string{"batch", "-r", "-q", "--classes", "2", "--superpixels", "150", "--jobs", "1", "--workers", "1"}
	clean := filepath.Join(root, "clean")
	if code, _, stderr := runCleave(append(args, "--out", clean, in)...); code != exitOK {
		t.Fatalf("clean run: exit %d: %s", code, stderr)
	}

	out := filepath.Join(root, "out")
	first, firstErr := startHelperBatch(t, append(args, "--out", out, in)...)
	pid := strconv.Itoa(first.Process.Pid)
	waitFor(t, "the first run's first record", func() bool {
		lock, _ := os.ReadFile(filepath.Join(out, outlock.Name))
		_, err := os.Stat(filepath.Join(out, "img-00.json"))
		return err == nil && strings.Contains(string(lock), "pid "+pid)
	})
	if err := first.Process.Signal(syscall.SIGSTOP); err != nil {
		t.Fatal(err)
	}
	// The signal is delivered asynchronously: wait until the kernel
	// reports the child stopped (waitpid with WUNTRACED), so that no
	// write of the first run can land after the snapshot below.
	var ws syscall.WaitStatus
	if _, err := syscall.Wait4(first.Process.Pid, &ws, syscall.WUNTRACED, nil); err != nil || !ws.Stopped() {
		t.Fatalf("the first run did not stop: %v (status %v)", err, ws)
	}
	stopped := true
	defer func() {
		if stopped {
			first.Process.Signal(syscall.SIGCONT)
		}
	}()
	if _, err := os.Stat(filepath.Join(out, batch.ManifestName)); err == nil {
		t.Fatal("the first run finished before it was stopped; the test proves nothing")
	}
	tmpBefore := tempFiles(t, out)
	for _, second := range [][]string{
		append(append([]string{}, args...), "--out", out, in),
		{"batch", "--rebuild", out},
		append(append([]string{}, args...), "--shard", "1/2", "--out", out, in),
	} {
		code, _, stderr := runCleave(second...)
		if code != exitUsage || !strings.Contains(stderr, "is in use by cleave batch, pid "+pid) {
			t.Errorf("%v while the first run holds --out: exit %d, stderr %q; want 2 naming pid %s", second[1:3], code, stderr, pid)
		}
	}
	if after := tempFiles(t, out); fmt.Sprint(after) != fmt.Sprint(tmpBefore) {
		t.Errorf("the refused runs touched the first's temporary files: %v, then %v", tmpBefore, after)
	}
	if _, err := os.Stat(filepath.Join(out, batch.ManifestName)); err == nil {
		t.Error("a refused run wrote the manifest")
	}
	first.Process.Signal(syscall.SIGCONT)
	stopped = false
	if err := first.Wait(); err != nil {
		t.Fatalf("the first run: %v, stderr %q; want exit 0", err, firstErr.String())
	}
	rows := readManifest(t, out)
	for in, r := range rows {
		if r[1] != "ok" {
			t.Errorf("first run's manifest: %s is %s (%s)", in, r[1], r[5])
		}
	}
	if len(rows) != 6 {
		t.Errorf("first run's manifest has %d rows, want 6", len(rows))
	}
	sameOutputs(t, "first run, overlapped, vs a run alone", outputBytes(t, clean), outputBytes(t, out))
	if tmp := tempFiles(t, out); len(tmp) > 0 {
		t.Errorf("temporary files left: %v", tmp)
	}
	// Once it has ended the folder is free again.
	if code, _, stderr := runCleave("batch", "--rebuild", "-q", out); code != exitOK {
		t.Errorf("rebuild after the run: exit %d, %s", code, stderr)
	}
}

// Shards share the lock: while one holds it another shard runs, but an
// unsharded batch and a rebuild are refused. A shard removes no temporary
// file it does not own (another shard's, or one left by a killed process);
// a rebuild, once no shard holds the lock, removes them all.
func TestBatchShardsShareTheLock(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	in, good := makeBatchFolder(t, 2, false)
	out := filepath.Join(t.TempDir(), "out")
	os.MkdirAll(filepath.Join(out, "sub"), 0o755)
	held, err := outlock.Take(out, false, "shard 1/2 of the test")
	if err != nil || held.Unsupported != nil {
		t.Fatalf("outlock.Take: %v", err)
	}
	defer held.Release()
	// Temporary files of shard 1's output sub/img-01: one being written by
	// the holder, one of an earlier version's process.
	others := []string{
		filepath.Join(out, "sub", ".img-01.labels.png.tmp-shard1of2-pid999999-42"),
		filepath.Join(out, "sub", ".img-01.overlay.png.tmp-7"),
		filepath.Join(out, ".img-00.json.tmp-shard1of2-pid999999-43"),
	}
	for _, p := range others {
		os.WriteFile(p, []byte("being written"), 0o644)
	}
	args := []string{"batch", "-r", "-q", "--superpixels", "150", "--out", out, in}
	code, _, stderr := runCleave(args...)
	if code != exitUsage || !strings.Contains(stderr, "in use by shard 1/2 of the test, pid ") {
		t.Errorf("unsharded run beside a shard: exit %d, %q; want 2 naming the shard", code, stderr)
	}
	for _, shard := range []string{"0/2", "1/2"} {
		if code, _, stderr := runCleave(append([]string{"batch", "--shard", shard}, args[1:]...)...); code != exitOK {
			t.Fatalf("shard %s beside the held lock: exit %d, %s", shard, code, stderr)
		}
	}
	code, _, stderr = runCleave("batch", "--rebuild", out)
	if code != exitUsage || !strings.Contains(stderr, "in use by shard 1/2") {
		t.Errorf("rebuild beside a shard: exit %d, %q; want 2", code, stderr)
	}
	for _, p := range others {
		if _, err := os.Stat(p); err != nil {
			t.Errorf("a shard removed a temporary file it does not own: %v", err)
		}
	}
	held.Release()
	if code, _, stderr := runCleave("batch", "--rebuild", "-q", out); code != exitOK {
		t.Fatalf("rebuild: exit %d, %s", code, stderr)
	}
	if tmp := tempFiles(t, out); len(tmp) > 0 {
		t.Errorf("temporary files left after the rebuild: %v", tmp)
	}
	if rows := readManifest(t, out); rows[good[0]][1] != "ok" || rows[good[1]][1] != "ok" {
		t.Errorf("rows %v", rows)
	}
}

// fileBytes reads a file, failing the test when it is missing.
func fileBytes(t *testing.T, p string) []byte {
	t.Helper()
	b, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// Batch replaces only files its records list: a user's x.json, a user's
// class map and a user's manifest.csv stay as they were and the image (or
// the run) fails naming them; a folder where an output goes fails the
// image; outputs a later run does not write (the class map when --classes
// is dropped, everything when the input has turned bad) are removed, so
// the files on disk match the record.
func TestBatchReplacesOnlyItsOwnFiles(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	in, _ := makeBatchFolder(t, 4, false) // img-00, sub/img-01, img-02, sub/img-03
	root := t.TempDir()
	out := filepath.Join(root, "out")
	os.MkdirAll(filepath.Join(out, "sub"), 0o755)
	userJSON := []byte(`{"note": "the user's own file"}`)
	userPNG := []byte("the user's own class map")
	os.WriteFile(filepath.Join(out, "img-00.json"), userJSON, 0o644)
	os.WriteFile(filepath.Join(out, "img-02.classes.png"), userPNG, 0o644)
	os.Mkdir(filepath.Join(out, "sub", "img-01.labels.png"), 0o755)
	os.Mkdir(filepath.Join(out, "sub", "img-03.json"), 0o755)
	args := []string{"batch", "-r", "-q", "--superpixels", "150", "--classes", "2", "--background", "dark"}
	code, _, stderr := runCleave(append(args, "--out", out, in)...)
	if code != exitFail {
		t.Fatalf("exit %d, want 1: %s", code, stderr)
	}
	if !bytes.Equal(fileBytes(t, filepath.Join(out, "img-00.json")), userJSON) || !bytes.Equal(fileBytes(t, filepath.Join(out, "img-02.classes.png")), userPNG) {
		t.Error("a user's file was replaced")
	}
	rows := readManifest(t, out)
	want := map[string]string{
		"img-00.png":     "img-00.json is not a record that cleave wrote",
		"img-02.png":     "img-02.classes.png exists and was not written by cleave",
		"sub/img-01.png": "a folder stands in the way",
		"sub/img-03.png": "img-03.json is a folder",
	}
	for input, msg := range want {
		if r := rows[input]; r == nil || r[1] != "failed" || !strings.Contains(r[5], msg) {
			t.Errorf("%s: row %v; want failed with %q", input, r, msg)
		}
	}
	for _, name := range []string{"img-02.labels.png", "sub/img-01.overlay.png"} {
		if _, err := os.Stat(filepath.Join(out, name)); err == nil {
			t.Errorf("%s written although its image failed up front", name)
		}
	}

	// Moved away, the run completes; a second run with the manifest now
	// cleave's own is fine.
	os.Remove(filepath.Join(out, "img-00.json"))
	os.Remove(filepath.Join(out, "img-02.classes.png"))
	os.Remove(filepath.Join(out, "sub", "img-01.labels.png"))
	os.Remove(filepath.Join(out, "sub", "img-03.json"))
	if code, _, stderr := runCleave(append(args, "--out", out, in)...); code != exitOK {
		t.Fatalf("after moving them away: exit %d, %s", code, stderr)
	}

	// Without --classes the class maps go, and the records no longer list
	// them.
	if code, _, stderr := runCleave("batch", "-r", "-q", "--superpixels", "150", "--out", out, in); code != exitOK {
		t.Fatalf("without --classes: exit %d, %s", code, stderr)
	}
	for _, stem := range []string{"img-00", "sub/img-01", "img-02", "sub/img-03"} {
		if _, err := os.Stat(filepath.Join(out, stem+".classes.png")); err == nil {
			t.Errorf("%s.classes.png stayed after a run without --classes", stem)
		}
		rec, err := pipeline.ReadRecord(filepath.Join(out, stem+".json"))
		if err != nil || rec.Status != "ok" || strings.Contains(strings.Join(rec.Outputs, " "), "classes") {
			t.Errorf("%s record: %v, %+v", stem, err, rec)
		}
	}

	// An input that turns bad: its earlier outputs are removed, and the
	// record says failed and lists none.
	os.WriteFile(filepath.Join(in, "img-02.png"), []byte("not a PNG any more"), 0o644)
	if code, _, _ := runCleave("batch", "-r", "-q", "--superpixels", "150", "--out", out, in); code != exitFail {
		t.Errorf("bad input: exit %d, want 1", code)
	}
	for _, s := range []string{".labels.png", ".overlay.png", ".regions.csv"} {
		if _, err := os.Stat(filepath.Join(out, "img-02"+s)); err == nil {
			t.Errorf("img-02%s of the earlier run stayed beside the failed record", s)
		}
	}
	if rec, err := pipeline.ReadRecord(filepath.Join(out, "img-02.json")); err != nil || rec.Status != "failed" || len(rec.Outputs) != 0 {
		t.Errorf("img-02 record: %v, %+v", err, rec)
	}

	// A manifest.csv that cleave did not write: exit 2 before anything is
	// written, the file as it was.
	fresh := filepath.Join(root, "fresh")
	os.Mkdir(fresh, 0o755)
	userCSV := []byte("sample,weight\na,1\n")
	os.WriteFile(filepath.Join(fresh, batch.ManifestName), userCSV, 0o644)
	code, _, stderr = runCleave("batch", "-q", "--out", fresh, in)
	if code != exitUsage || !strings.Contains(stderr, "manifest.csv exists and was not written by cleave") {
		t.Errorf("user's manifest.csv: exit %d, %q; want 2 naming it", code, stderr)
	}
	if !bytes.Equal(fileBytes(t, filepath.Join(fresh, batch.ManifestName)), userCSV) {
		t.Error("the user's manifest.csv was replaced")
	}
	if entries, _ := os.ReadDir(fresh); len(entries) != 1 {
		t.Errorf("%d entries in --out after the refusal, want only the user's file", len(entries))
	}
}

// segment never replaces one of its inputs, even with --force: an output
// or --save-graph path that is an input (also through a symbolic link) is
// wrong usage, exit 2, nothing written. With --force a rerun without
// --classes removes the class map the record listed.
func TestSegmentNeverReplacesAnInput(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	d := t.TempDir()
	a, b := filepath.Join(d, "a.png"), filepath.Join(d, "b.png")
	for k, p := range []string{a, b} {
		sc := scenes.Nuclei(scenes.NucleiOptions{Width: 96, Height: 96, Seed: uint64(1100 + k)})
		if err := scenes.WritePNG(p, sc.Image()); err != nil {
			t.Fatal(err)
		}
	}
	// An input named like a's label map.
	labels := filepath.Join(d, "a.labels.png")
	if err := os.WriteFile(labels, fileBytes(t, b), 0o644); err != nil {
		t.Fatal(err)
	}
	link := filepath.Join(t.TempDir(), "alias.png")
	if err := os.Symlink(b, link); err != nil {
		t.Fatal(err)
	}
	listing := func() string {
		var names []string
		entries, _ := os.ReadDir(d)
		for _, e := range entries {
			info, _ := e.Info()
			names = append(names, fmt.Sprintf("%s %d", e.Name(), info.Size()))
		}
		return strings.Join(names, ", ")
	}
	before := listing()
	const isInput, notGraph = "cleave never replaces an input", "is not a Matrix Market file"
	cases := []struct {
		args []string
		want string
	}{
		{[]string{"--force", "--out", d, a, labels}, isInput},
		{[]string{"--out", d, a, labels}, isInput},
		{[]string{"--force", "--superpixels", "100", "--save-graph", b, "--out", t.TempDir(), b}, isInput},
		{[]string{"--force", "--superpixels", "100", "--save-graph", link, "--out", t.TempDir(), b}, isInput},
		// Not an input of this command, but an image all the same.
		{[]string{"--force", "--superpixels", "100", "--save-graph", b, "--out", t.TempDir(), a}, notGraph},
	}
	for _, c := range cases {
		code, _, stderr := runCleave(append([]string{"segment"}, c.args...)...)
		if code != exitUsage || !strings.Contains(stderr, c.want) {
			t.Errorf("segment %v: exit %d, %q; want 2 and %q", c.args, code, stderr, c.want)
		}
	}
	if after := listing(); after != before {
		t.Errorf("files changed:\n%s\n%s", before, after)
	}
	out := t.TempDir()
	code, _, stderr := runCleave("segment", "--superpixels", "100", "--save-graph", filepath.Join(out, "a.json"), "--out", out, a)
	if code != exitUsage || !strings.Contains(stderr, "is also an output") {
		t.Errorf("--save-graph onto the record: exit %d, %q", code, stderr)
	}

	// --force without --classes after a run with it: the class map goes.
	if code, _, stderr := runCleave("segment", "--superpixels", "100", "--classes", "2", "--background", "dark", "--out", out, a); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	if _, err := os.Stat(filepath.Join(out, "a.classes.png")); err != nil {
		t.Fatal(err)
	}
	if code, _, stderr := runCleave("segment", "--force", "--superpixels", "100", "--out", out, a); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	if _, err := os.Stat(filepath.Join(out, "a.classes.png")); err == nil {
		t.Error("a.classes.png of the run with --classes stayed")
	}
	// An output folder in the way is named, not reported as existing.
	os.Mkdir(filepath.Join(out, "b.labels.png"), 0o755)
	code, _, stderr = runCleave("segment", "--force", "--superpixels", "100", "--out", out, b)
	if code != exitFail || !strings.Contains(stderr, "b.labels.png: a folder stands in the way") {
		t.Errorf("folder in the way: exit %d, %q", code, stderr)
	}
}

// Folders as users have them: an INPUT_DIR that is a symbolic link is
// followed; dangling and looping links, a link to a folder, a FIFO, a
// socket, a link to a device and an unreadable subfolder are manifest
// rows with status skipped and the reason, and the run goes on (exit 0).
// The FIFO is never opened: opening it would block the run for ever.
func TestBatchOddEntries(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	data, good := makeBatchFolder(t, 2, false)
	linked := filepath.Join(t.TempDir(), "images")
	if err := os.Symlink(data, linked); err != nil {
		t.Fatal(err)
	}
	mk := func(err error) {
		t.Helper()
		if err != nil {
			t.Fatal(err)
		}
	}
	mk(os.Symlink("missing.png", filepath.Join(data, "dangling.png")))
	mk(os.Symlink("loop.png", filepath.Join(data, "loop.png")))
	mk(os.Symlink("sub", filepath.Join(data, "folder.png")))
	mk(os.Symlink("/dev/null", filepath.Join(data, "device.png")))
	mk(unix.Mkfifo(filepath.Join(data, "fifo.png"), 0o644))
	// A socket file: bound by a listener (path kept short for sun_path).
	sockDir, err := os.MkdirTemp("", "ck")
	mk(err)
	defer os.RemoveAll(sockDir)
	ln, err := net.Listen("unix", filepath.Join(sockDir, "s.png"))
	mk(err)
	defer ln.Close()
	mk(os.Rename(filepath.Join(sockDir, "s.png"), filepath.Join(data, "socket.png")))
	locked := filepath.Join(data, "locked")
	mk(os.Mkdir(locked, 0o755))
	mk(os.WriteFile(filepath.Join(locked, "hidden-away.png"), fileBytes(t, filepath.Join(data, good[0])), 0o644))
	mk(os.Chmod(locked, 0))
	defer os.Chmod(locked, 0o755)
	wantSkipped := map[string]string{
		"dangling.png": "a symbolic link to missing.png, which does not exist",
		"loop.png":     "a symbolic link that loops",
		"folder.png":   "a symbolic link to a folder",
		"device.png":   "a symbolic link to a device",
		"fifo.png":     "a named pipe (FIFO)",
		"socket.png":   "a socket",
	}
	if os.Geteuid() == 0 {
		t.Log("************************************************************")
		t.Log("running as root: chmod 000 does not stop root from reading a")
		t.Log("folder, so the unreadable-subfolder case is NOT checked here")
		t.Log("************************************************************")
	} else {
		wantSkipped["locked"] = "folder not read: permission denied"
	}
	out := filepath.Join(t.TempDir(), "out")
	code, _, stderr := runCleave("batch", "-r", "--superpixels", "150", "--out", out, linked)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	rows := readManifest(t, out)
	for _, g := range good {
		if rows[g] == nil || rows[g][1] != "ok" {
			t.Errorf("%s: row %v; want ok (INPUT_DIR through a link)", g, rows[g])
		}
	}
	for name, reason := range wantSkipped {
		r := rows[name]
		if r == nil || r[1] != "skipped" || !strings.Contains(r[5], reason) {
			t.Errorf("%s: row %v; want skipped with %q", name, r, reason)
		}
		if !strings.Contains(stderr, "skipped "+filepath.Join(linked, name)) {
			t.Errorf("%s not named on stderr: %q", name, stderr)
		}
	}
	if os.Geteuid() == 0 {
		if r := rows["locked/hidden-away.png"]; r == nil || r[1] != "ok" {
			t.Errorf("as root the chmod 000 folder is read: row %v", r)
		}
	}
	if len(rows) != len(good)+len(wantSkipped)+boolInt(os.Geteuid() == 0) {
		t.Errorf("%d manifest rows: %v", len(rows), rows)
	}
	// The rebuilt manifest keeps them.
	if code, _, stderr := runCleave("batch", "--rebuild", out); code != exitOK || !strings.Contains(stderr, fmt.Sprintf("%d skipped", len(wantSkipped))) {
		t.Errorf("rebuild: exit %d, %q", code, stderr)
	}
}

func boolInt(b bool) int {
	if b {
		return 1
	}
	return 0
}

// The --out-inside-INPUT_DIR guard in the nested case: --out nest with
// INPUT_DIR nest/raw holding a subfolder raw/ would write the outputs of
// raw/x.png into nest/raw, among the inputs. Without that subfolder the
// same layout is fine.
func TestBatchOutputsIntoInputDir(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	nest := t.TempDir()
	raw := filepath.Join(nest, "raw")
	os.MkdirAll(filepath.Join(raw, "raw"), 0o755)
	sc := scenes.Nuclei(scenes.NucleiOptions{Width: 96, Height: 96, Seed: 1120})
	for _, p := range []string{filepath.Join(raw, "x.png"), filepath.Join(raw, "raw", "y.png")} {
		if err := scenes.WritePNG(p, sc.Image()); err != nil {
			t.Fatal(err)
		}
	}
	code, _, stderr := runCleave("batch", "-r", "-q", "--superpixels", "100", "--out", nest, raw)
	if code != exitUsage || !strings.Contains(stderr, "inside INPUT_DIR") {
		t.Errorf("nested: exit %d, %q; want 2 naming the problem", code, stderr)
	}
	if entries, _ := os.ReadDir(raw); len(entries) != 2 {
		t.Errorf("%d entries in INPUT_DIR after the refusal, want 2", len(entries))
	}
	if _, err := os.Stat(filepath.Join(nest, batch.IndexName)); err == nil {
		t.Error("the refused run wrote its index")
	}
	// Without --recursive raw/raw is not read, and the outputs of x.png go
	// to nest/x.*, outside INPUT_DIR.
	if code, _, stderr := runCleave("batch", "-q", "--superpixels", "100", "--out", nest, raw); code != exitOK {
		t.Errorf("flat: exit %d, %s", code, stderr)
	}
	if _, err := os.Stat(filepath.Join(nest, "x.labels.png")); err != nil {
		t.Error(err)
	}
	if _, err := os.Stat(filepath.Join(raw, "raw", "y.labels.png")); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("outputs inside INPUT_DIR: %v", err)
	}
}
