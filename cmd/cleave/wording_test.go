package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// 'cleave help help' shows the main help; 'cleave help version' says what
// version does; an unknown name is still wrong usage.
func TestHelpHelp(t *testing.T) {
	code, stdout, stderr := runCleave("help", "help")
	if code != exitOK || !strings.Contains(stdout, "Commands:") || stderr != "" {
		t.Errorf("help help: exit %d, stdout %q, stderr %q", code, stdout, stderr)
	}
	code, stdout, _ = runCleave("help", "version")
	if code != exitOK || !strings.Contains(stdout, "Usage: cleave version") {
		t.Errorf("help version: exit %d, stdout %q", code, stdout)
	}
	if code, _, stderr := runCleave("help", "nosuch"); code != exitUsage || !strings.Contains(stderr, `no command "nosuch"`) {
		t.Errorf("help nosuch: exit %d, stderr %q", code, stderr)
	}
}

// Counts agree with their nouns: one argument, not "1 arguments".
func TestScoreOneArgumentWording(t *testing.T) {
	code, _, stderr := runCleave("score", "x.png")
	if code != exitUsage || !strings.Contains(stderr, "got 1 argument ") {
		t.Errorf("exit %d, stderr %q; want \"got 1 argument \"", code, stderr)
	}
	code, _, stderr = runCleave("score", "a.png", "b.png", "c.png")
	if code != exitUsage || !strings.Contains(stderr, "got 3 arguments") {
		t.Errorf("exit %d, stderr %q; want \"got 3 arguments\"", code, stderr)
	}
}

// segment given a folder fails that input and points to batch.
func TestSegmentFolderPointsToBatch(t *testing.T) {
	dir := t.TempDir()
	in := filepath.Join(dir, "images")
	if err := os.Mkdir(in, 0o755); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out")
	code, _, stderr := runCleave("segment", "--out", out, in)
	if code != exitFail || !strings.Contains(stderr, "cleave batch "+in+" --out "+out) {
		t.Errorf("exit %d, stderr %q; want a pointer to cleave batch", code, stderr)
	}
}
