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

// Boolean flags show in help as they are typed (--force), without pflag's
// [=true|false], and every flag's description starts in the column of
// the wrapped description lines.
func TestHelpBooleanFlags(t *testing.T) {
	for _, cmd := range []string{"segment", "batch", "tune", "score", "demo"} {
		_, stdout, _ := runCleave(cmd, "--help")
		if strings.Contains(stdout, "[=true|false]") {
			t.Errorf("%s --help shows [=true|false]", cmd)
		}
		_, flags, ok := strings.Cut(stdout, "Flags:\n")
		if !ok {
			t.Fatalf("%s --help has no Flags section", cmd)
		}
		col := -1
		var flagLines []string
		for _, l := range strings.Split(flags, "\n") {
			trimmed := strings.TrimLeft(l, " ")
			switch {
			case trimmed == "":
				continue
			case strings.HasPrefix(trimmed, "-"):
				flagLines = append(flagLines, l)
			case len(l)-len(trimmed) > 10 && col < 0:
				col = len(l) - len(trimmed) // a wrapped description line
			}
		}
		if col < 0 {
			t.Fatalf("%s --help: no wrapped description line", cmd)
		}
		help := false
		for _, l := range flagLines {
			if len(l) <= col || l[col-1] != ' ' || l[col-2] != ' ' || l[col] == ' ' {
				t.Errorf("%s --help: %q does not start its description at column %d", cmd, l, col)
			}
			help = help || strings.HasPrefix(strings.TrimLeft(l, " "), "-h, --help  ")
		}
		if !help {
			t.Errorf("%s --help: the boolean --help is not shown as \"-h, --help\"", cmd)
		}
	}
}
