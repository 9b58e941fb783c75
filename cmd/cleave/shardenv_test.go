package main

import (
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// The command exits 2 and writes nothing when the variables are wrong, and
// processes its share when they are right.
func TestBatchShardAutoCommand(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	in, good := makeBatchFolder(t, 3, false)
	out := filepath.Join(t.TempDir(), "results")
	for _, k := range []string{"SLURM_ARRAY_TASK_ID", "SLURM_ARRAY_TASK_MAX", "JOB_COMPLETION_INDEX", "CLEAVE_SHARDS"} {
		t.Setenv(k, "")
	}
	t.Setenv("SLURM_ARRAY_TASK_ID", "1")
	code, _, stderr := runCleave("batch", "--shard", "auto", "--recursive", "--superpixels", "150", "--out", out, in)
	if code != exitUsage || !strings.Contains(stderr, "CLEAVE_SHARDS") {
		t.Fatalf("without CLEAVE_SHARDS: exit %d, %q; want 2 naming CLEAVE_SHARDS", code, stderr)
	}
	if _, err := os.Stat(out); !os.IsNotExist(err) {
		t.Fatalf("a usage error created %s (%v)", out, err)
	}
	t.Setenv("CLEAVE_SHARDS", "2")
	code, _, stderr = runCleave("batch", "--shard", "auto", "--recursive", "--superpixels", "150", "--out", out, in)
	if code != exitOK || !strings.Contains(stderr, "(shard 1/2 of 3, from SLURM_ARRAY_TASK_ID=1, CLEAVE_SHARDS=2)") {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	// Share 1 of 2 of the list sorted by relative path is its second file
	// alone.
	slices.Sort(good)
	for k, g := range good {
		_, err := os.Stat(filepath.Join(out, strings.TrimSuffix(g, filepath.Ext(g))+".json"))
		if mine := k%2 == 1; mine != (err == nil) {
			t.Errorf("%s: record present %v, want %v", g, err == nil, mine)
		}
	}
}
