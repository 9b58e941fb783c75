package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// A rerun with a narrower selection lists the outputs of the inputs that
// left it and keeps them; --prune removes exactly those (every file their
// records list, and the records), and nothing else: not the outputs of
// the inputs still selected, not a file of the user's in --out (a .json
// that is not a cleave record, a .png beside the outputs). --prune with
// --shard is wrong usage.
func TestBatchPrune(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	in, good := makeBatchFolder(t, 4, false) // img-00.png, sub/img-01.png, img-02.png, sub/img-03.png
	out := filepath.Join(t.TempDir(), "out")
	base := []string{"batch", "-r", "--superpixels", "100", "--out", out}
	if code, _, stderr := runCleave(append(base, in)...); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	if len(good) != 4 {
		t.Fatalf("inputs %v", good)
	}
	stemFiles := func(stem string) []string {
		m, _ := filepath.Glob(filepath.Join(out, filepath.FromSlash(stem)) + ".*")
		return m
	}
	left := []string{"img-02", "sub/img-03"}
	var leftFiles []string
	for _, s := range left {
		leftFiles = append(leftFiles, stemFiles(s)...)
	}
	if len(leftFiles) < 2*6 {
		t.Fatalf("outputs of the inputs to drop: %v", leftFiles)
	}
	mine := map[string]string{
		filepath.Join(out, "notes.json"):      `{"tool": "mine"}`,
		filepath.Join(out, "img-02.mine.png"): "not cleave's",
		filepath.Join(out, "sub", "old.json"): `[1, 2]`,
	}
	for p, body := range mine {
		if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	keep := append(stemFiles("img-00"), stemFiles("sub/img-01")...)

	narrow := append(base, "--exclude", "img-02.png", "--exclude", "sub/img-03.png", in)
	code, _, stderr := runCleave(narrow...)
	if code != exitOK {
		t.Fatalf("narrower rerun: exit %d: %s", code, stderr)
	}
	want := "kept " + plural(len(leftFiles), "earlier output") + " in " + out + " of 2 inputs no longer selected (or gone): img-02.*, sub/img-03.*; --prune removes them"
	if !strings.Contains(stderr, want) {
		t.Errorf("stderr lacks %q:\n%s", want, stderr)
	}
	for _, f := range append(append([]string{}, leftFiles...), keep...) {
		if _, err := os.Stat(f); err != nil {
			t.Errorf("without --prune: %v", err)
		}
	}

	if code, _, stderr := runCleave(append(append([]string{}, narrow[:len(narrow)-1]...), "--shard", "0/2", "--prune", in)...); code != exitUsage || !strings.Contains(stderr, "--prune") {
		t.Errorf("--prune with --shard: exit %d: %s", code, stderr)
	}

	code, _, stderr = runCleave(append(append([]string{}, narrow[:len(narrow)-1]...), "--prune", in)...)
	if code != exitOK {
		t.Fatalf("--prune: exit %d: %s", code, stderr)
	}
	if want := "removed " + plural(len(leftFiles), "earlier output") + " of 2 inputs no longer selected (--prune): img-02.*, sub/img-03.*"; !strings.Contains(stderr, want) {
		t.Errorf("stderr lacks %q:\n%s", want, stderr)
	}
	for _, f := range leftFiles {
		if _, err := os.Stat(f); !os.IsNotExist(err) {
			t.Errorf("--prune left %s (%v)", f, err)
		}
	}
	for _, f := range keep {
		if _, err := os.Stat(f); err != nil {
			t.Errorf("--prune removed an output of a selected input: %v", err)
		}
	}
	for p, body := range mine {
		if b, err := os.ReadFile(p); err != nil || string(b) != body {
			t.Errorf("--prune touched the user's %s: %q, %v", p, b, err)
		}
	}
	// Nothing stale is left: the next run says nothing about it.
	if _, _, stderr := runCleave(narrow...); strings.Contains(stderr, "no longer selected") {
		t.Errorf("after --prune: %s", stderr)
	}
}
