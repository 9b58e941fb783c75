package main

import (
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// The version can be set at build time with -ldflags -X main.version=...
// (README "Install"): a binary built so reports it.
func TestVersionSetAtBuild(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the command")
	}
	gobin, err := exec.LookPath("go")
	if err != nil {
		t.Skip("no go command on PATH")
	}
	bin := filepath.Join(t.TempDir(), "cleave")
	const want = "7.7.7-buildtest"
	build := exec.Command(gobin, "build", "-ldflags", "-X main.version="+want, "-o", bin, ".")
	if out, err := build.CombinedOutput(); err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	out, err := exec.Command(bin, "version").Output()
	if err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(string(out), "cleave "+want) {
		t.Errorf("cleave version printed %q; want it to start with %q", out, "cleave "+want)
	}
}
