//go:build linux || darwin || freebsd || netbsd || openbsd || dragonfly || solaris

package outlock

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// The rules of the lock (flock(2) semantics: locks belong to open files,
// so two Takes in one process contend like two processes): an exclusive
// holder refuses everyone and is named in the refusal; shards share;
// a shared holder refuses an exclusive taker (a shard refused retries for
// shardLockPatience before it gives up); a released lock is free
// again; a link at the lock file's name is refused, not followed.
func TestTake(t *testing.T) {
	dir := t.TempDir()
	a, err := Take(dir, true, "run A")
	if err != nil || a.Unsupported != nil {
		t.Fatalf("first exclusive: %v %v", err, a)
	}
	var le *LockedError
	if _, err := Take(dir, true, "run B"); !errors.As(err, &le) || len(le.Holders) != 1 || !strings.HasPrefix(le.Holders[0], "run A, pid ") ||
		!strings.Contains(err.Error(), "in use by run A") {
		t.Errorf("second exclusive: %v", err)
	}
	if _, err := Take(dir, false, "shard 1/2"); !errors.As(err, &le) { // after shardLockPatience
		t.Errorf("shared while held exclusively: %v", err)
	}
	a.Release()
	s1, err := Take(dir, false, "shard 1/2")
	if err != nil {
		t.Fatalf("shared after release: %v", err)
	}
	s2, err := Take(dir, false, "shard 2/2")
	if err != nil {
		t.Fatalf("second shared: %v", err)
	}
	if _, err := Take(dir, true, "rebuild"); !errors.As(err, &le) || len(le.Holders) != 2 || !strings.Contains(err.Error(), "they end") {
		t.Errorf("exclusive while shared: %v", err)
	}
	s1.Release()
	s2.Release()
	c, err := Take(dir, true, "run C")
	if err != nil {
		t.Fatalf("exclusive after the shards: %v", err)
	}
	c.Release()
	data, _ := os.ReadFile(filepath.Join(dir, Name))
	if lines := strings.Split(strings.TrimSpace(string(data)), "\n"); len(lines) != 1 || !strings.HasPrefix(lines[0], "run C, pid ") {
		t.Errorf("lock file after C: %q", data)
	}

	linked := t.TempDir()
	target := filepath.Join(t.TempDir(), "elsewhere")
	if err := os.WriteFile(target, []byte("keep"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.Symlink(target, filepath.Join(linked, Name)); err != nil {
		t.Fatal(err)
	}
	if _, err := Take(linked, true, "run D"); err == nil || errors.As(err, &le) {
		t.Errorf("link at the lock's name: %v", err)
	}
	if data, _ := os.ReadFile(target); string(data) != "keep" {
		t.Errorf("the link's target changed: %q", data)
	}
}
