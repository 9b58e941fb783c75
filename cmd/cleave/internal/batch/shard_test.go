package batch

import (
	"errors"
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
			i, n, from, err := ShardFromEnv(func(k string) (string, bool) { v, ok := tc.env[k]; return v, ok })
			if tc.wantErr == "" {
				if err != nil || i != tc.i || n != tc.n {
					t.Fatalf("got %d/%d, %v; want %d/%d", i, n, err, tc.i, tc.n)
				}
				if !strings.Contains(from, "CLEAVE_SHARDS=") {
					t.Errorf("from %q does not name the count variable", from)
				}
				return
			}
			var re *RequestError
			if !errors.As(err, &re) || !strings.Contains(err.Error(), tc.wantErr) {
				t.Fatalf("error %v, want a RequestError containing %q", err, tc.wantErr)
			}
		})
	}
}
