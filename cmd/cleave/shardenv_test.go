package main

import (
	"errors"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// The variables are the ones the schedulers document: SLURM_ARRAY_TASK_ID
// and SLURM_ARRAY_TASK_MAX (sbatch(1), OUTPUT ENVIRONMENT VARIABLES),
// JOB_COMPLETION_INDEX (Kubernetes documentation, Jobs, completion mode).
func TestShardFromEnv(t *testing.T) {
	tests := []struct {
		name    string
		env     map[string]string
		i, n    int
		wantErr string // a part of the message; "" for success
	}{
		{"slurm", map[string]string{"SLURM_ARRAY_TASK_ID": "3", "CLEAVE_SHARDS": "8"}, 3, 8, ""},
		{"slurm subset resubmitted", map[string]string{"SLURM_ARRAY_TASK_ID": "7", "SLURM_ARRAY_TASK_MAX": "7", "SLURM_ARRAY_TASK_COUNT": "2", "CLEAVE_SHARDS": "8"}, 7, 8, ""},
		{"slurm single task resubmitted", map[string]string{"SLURM_ARRAY_TASK_ID": "5", "SLURM_ARRAY_TASK_MAX": "5", "SLURM_ARRAY_TASK_COUNT": "1", "CLEAVE_SHARDS": "8"}, 5, 8, ""},
		{"kubernetes", map[string]string{"JOB_COMPLETION_INDEX": "0", "CLEAVE_SHARDS": "4"}, 0, 4, ""},
		{"one shard", map[string]string{"JOB_COMPLETION_INDEX": "0", "CLEAVE_SHARDS": "1"}, 0, 1, ""},
		{"empty index counts as unset", map[string]string{"SLURM_ARRAY_TASK_ID": "", "JOB_COMPLETION_INDEX": "2", "CLEAVE_SHARDS": "4"}, 2, 4, ""},
		{"no count", map[string]string{"SLURM_ARRAY_TASK_ID": "3", "SLURM_ARRAY_TASK_COUNT": "16"}, 0, 0, "needs CLEAVE_SHARDS"},
		{"count not a number", map[string]string{"SLURM_ARRAY_TASK_ID": "3", "CLEAVE_SHARDS": "eight"}, 0, 0, `CLEAVE_SHARDS must be a whole number of shards, 1 or more, got "eight"`},
		{"count zero", map[string]string{"SLURM_ARRAY_TASK_ID": "0", "CLEAVE_SHARDS": "0"}, 0, 0, "1 or more"},
		{"no index", map[string]string{"CLEAVE_SHARDS": "4"}, 0, 0, "neither SLURM_ARRAY_TASK_ID"},
		{"both indices", map[string]string{"SLURM_ARRAY_TASK_ID": "1", "JOB_COMPLETION_INDEX": "1", "CLEAVE_SHARDS": "4"}, 0, 0, "both SLURM_ARRAY_TASK_ID=1 (Slurm) and JOB_COMPLETION_INDEX=1"},
		{"index not a number", map[string]string{"JOB_COMPLETION_INDEX": "x1", "CLEAVE_SHARDS": "4"}, 0, 0, `JOB_COMPLETION_INDEX must be a whole number, got "x1"`},
		{"index too large", map[string]string{"SLURM_ARRAY_TASK_ID": "16", "CLEAVE_SHARDS": "16"}, 0, 0, "SLURM_ARRAY_TASK_ID=16 is outside 0 to 15"},
		{"negative index", map[string]string{"JOB_COMPLETION_INDEX": "-1", "CLEAVE_SHARDS": "4"}, 0, 0, "outside 0 to 3"},
		{"array larger than the count", map[string]string{"SLURM_ARRAY_TASK_ID": "2", "SLURM_ARRAY_TASK_MAX": "16", "CLEAVE_SHARDS": "16"}, 0, 0, "the array reaches task 16"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			i, n, from, err := shardFromEnv(func(k string) (string, bool) { v, ok := tc.env[k]; return v, ok })
			if tc.wantErr == "" {
				if err != nil || i != tc.i || n != tc.n {
					t.Fatalf("got %d/%d, %v; want %d/%d", i, n, err, tc.i, tc.n)
				}
				if !strings.Contains(from, "CLEAVE_SHARDS=") {
					t.Errorf("from %q does not name the count variable", from)
				}
				return
			}
			var ue *usageError
			if !errors.As(err, &ue) || !strings.Contains(err.Error(), tc.wantErr) {
				t.Fatalf("error %v, want a usage error containing %q", err, tc.wantErr)
			}
		})
	}
}

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
