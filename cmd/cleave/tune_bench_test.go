package main

import (
	"path/filepath"
	"testing"
)

// BenchmarkTune3x256 is tune over its default search (5 sigma-i x 3
// sigma-x x 2 max-ncut grid, --budget 8 per search, 3 folds) on three
// generated 256x256 nuclei scenes with --classes 2 --background dark: the
// issue's speed case (target: at most 90 s on the 2-core machine).
func BenchmarkTune3x256(b *testing.B) {
	dir := b.TempDir()
	writeNuclei(b, dir, 8800, 3, 256)
	args := []string{"tune", "--force", "--images", dir, "--truth", dir, "--out", filepath.Join(dir, "tuned"), "--classes", "2", "--background", "dark"}
	benchRun(b, args)
}
