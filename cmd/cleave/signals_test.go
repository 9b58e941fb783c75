//go:build unix

package main

import (
	"bytes"
	"context"
	"errors"
	"image"
	"image/color"
	"image/png"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"
)

// TestSignalHelperProcess is not a test: it is the cleave command, with
// main's signal handling, when the signal tests start this test binary
// as a subprocess.
func TestSignalHelperProcess(t *testing.T) {
	if os.Getenv("CLEAVE_SIGNAL_HELPER") != "1" {
		t.Skip("helper process only")
	}
	args := os.Args
	for k, a := range args {
		if a == "--" {
			args = args[k+1:]
			break
		}
	}
	os.Exit(runWithSignals(func(ctx context.Context) int {
		return run(ctx, args, os.Stdout, os.Stderr)
	}, os.Stderr, os.Exit))
}

// noisePNG writes a w x h 8-bit gray PNG of seeded noise.
func noisePNG(t *testing.T, path string, w, h int) {
	t.Helper()
	img := image.NewGray(image.Rect(0, 0, w, h))
	rng := rand.New(rand.NewPCG(7, 8))
	for i := range img.Pix {
		img.Pix[i] = uint8(rng.IntN(256))
	}
	img.SetGray(0, 0, color.Gray{0})
	var b bytes.Buffer
	if err := png.Encode(&b, img); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, b.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}

// startHelper starts the helper process running cleave with args.
func startHelper(t *testing.T, args ...string) (*exec.Cmd, *bytes.Buffer) {
	t.Helper()
	cmd := exec.Command(os.Args[0], append([]string{"-test.run=^TestSignalHelperProcess$", "--"}, args...)...)
	cmd.Env = append(os.Environ(), "CLEAVE_SIGNAL_HELPER=1")
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	return cmd, &stderr
}

// A long pixel-graph run stopped by SIGTERM exits with 143, and by two
// SIGINTs with 130, leaving no output and no temporary file.
func TestSignalsStopSegment(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	dir := t.TempDir()
	img := filepath.Join(dir, "noise.png")
	noisePNG(t, img, 500, 500)
	for _, c := range []struct {
		name string
		sigs []os.Signal
		want int
	}{
		{"SIGTERM", []os.Signal{syscall.SIGTERM}, 143},
		{"two SIGINTs", []os.Signal{os.Interrupt, os.Interrupt}, 130},
	} {
		out := filepath.Join(dir, "out-"+strings.ReplaceAll(c.name, " ", "-"))
		cmd, stderr := startHelper(t, "segment", "--superpixels", "0", "--radius", "6", "--workers", "1", "--out", out, img)
		// Let the run get under way; the outcome must be the same
		// whichever stage the signal reaches.
		time.Sleep(700 * time.Millisecond)
		for _, s := range c.sigs {
			if err := cmd.Process.Signal(s); err != nil {
				t.Fatal(err)
			}
		}
		err := cmd.Wait()
		var ee *exec.ExitError
		if !errors.As(err, &ee) || ee.ExitCode() != c.want {
			t.Errorf("%s: %v, stderr %q; want exit %d", c.name, err, stderr.String(), c.want)
		}
		entries, _ := os.ReadDir(out)
		for _, e := range entries {
			t.Errorf("%s: %s left in the output folder", c.name, e.Name())
		}
	}
}

// A named pipe given as an image is refused at once, by segment and by
// score, with a message naming it; opening it would block for ever.
func TestFIFORefused(t *testing.T) {
	dir := t.TempDir()
	fifo := filepath.Join(dir, "pipe.png")
	if err := syscall.Mkfifo(fifo, 0o644); err != nil {
		t.Skipf("no FIFO here: %v", err)
	}
	code, _, stderr := runCleave("segment", "--out", filepath.Join(dir, "out"), fifo)
	if code != exitFail || !strings.Contains(stderr, fifo+": not a regular file") || !strings.Contains(stderr, "named pipe") {
		t.Errorf("segment FIFO: exit %d, stderr %q; want 1 naming the file as a named pipe", code, stderr)
	}
	code, _, stderr = runCleave("score", fifo, fifo)
	if code != exitFail || !strings.Contains(stderr, fifo+": not a regular file") {
		t.Errorf("score FIFO: exit %d, stderr %q; want 1 naming the file", code, stderr)
	}
}
