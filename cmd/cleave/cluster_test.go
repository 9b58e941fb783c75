package main

import (
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// The shipped Slurm script runs for real: each task's command, with the
// task index the scheduler would set, calls this test binary as cleave
// (through TestBatchHelperProcess); after all tasks, --rebuild must find
// every input ok. TestClusterSlurmReal runs it on a real cluster; the
// Kubernetes manifests are checked in examples/cluster. The index
// variables are the documented ones: Slurm's SLURM_ARRAY_TASK_ID,
// SLURM_ARRAY_TASK_MIN, SLURM_ARRAY_TASK_MAX and SLURM_ARRAY_TASK_COUNT
// (sbatch(1), OUTPUT ENVIRONMENT VARIABLES).

// fakeCleave puts a "cleave" on PATH that runs this test binary's helper.
func fakeCleave(t *testing.T) []string {
	t.Helper()
	bin := t.TempDir()
	script := "#!/bin/sh\nexec \"$CLEAVE_TEST_BINARY\" -test.run='^TestBatchHelperProcess$' -- \"$@\"\n"
	if err := os.WriteFile(filepath.Join(bin, "cleave"), []byte(script), 0o755); err != nil {
		t.Fatal(err)
	}
	return append(os.Environ(), "PATH="+bin+string(os.PathListSeparator)+os.Getenv("PATH"),
		"CLEAVE_TEST_BINARY="+os.Args[0], "CLEAVE_BATCH_HELPER=1")
}

func clusterData(t *testing.T) (data, in string, good []string) {
	t.Helper()
	in, good = makeBatchFolder(t, 5, false)
	data = t.TempDir()
	if err := os.WriteFile(filepath.Join(data, "best.json"), []byte(`{"superpixels": 150, "classes": 2}`), 0o644); err != nil {
		t.Fatal(err)
	}
	return data, in, good
}

func checkRebuilt(t *testing.T, out string, good []string) {
	t.Helper()
	if code, _, stderr := runCleave("batch", "--rebuild", out); code != exitOK {
		t.Fatalf("--rebuild: exit %d: %s", code, stderr)
	}
	rows := readManifest(t, out)
	if len(rows) != len(good) {
		t.Errorf("%d manifest rows, want %d", len(rows), len(good))
	}
	for _, g := range good {
		if rows[g] == nil || rows[g][1] != "ok" {
			t.Errorf("row of %s: %v", g, rows[g])
		}
	}
}

func TestClusterSlurmArray(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	if _, err := exec.LookPath("bash"); err != nil {
		t.Skip("no bash")
	}
	script, _ := filepath.Abs(filepath.Join("..", "..", "examples", "cluster", "slurm-array.sh"))
	// Every task of the script's array (SHARDS of them, more than the five
	// images: some shares are empty), as sbatch --array=0-(SHARDS-1) runs
	// them; TestClusterSlurmReal runs the script on a real cluster.
	shards := scriptShards(t, script)
	data, in, good := clusterData(t)
	out := filepath.Join(data, "results")
	env := fakeCleave(t)
	for id := range shards {
		cmd := exec.Command("bash", script)
		cmd.Env = append(env, "IN="+in, "OUT="+out, "PARAMS="+filepath.Join(data, "best.json"),
			"SLURM_ARRAY_TASK_ID="+strconv.Itoa(id), "SLURM_ARRAY_TASK_MIN=0", "SLURM_ARRAY_TASK_MAX="+strconv.Itoa(shards-1),
			"SLURM_ARRAY_TASK_COUNT="+strconv.Itoa(shards), "SLURM_CPUS_PER_TASK=1")
		if msg, err := cmd.CombinedOutput(); err != nil {
			t.Fatalf("task %d: %v: %s", id, err, msg)
		} else if want := "shard " + strconv.Itoa(id) + "/" + strconv.Itoa(shards); !strings.Contains(string(msg), want) {
			t.Errorf("task %d: output %q lacks %q", id, msg, want)
		}
	}
	checkRebuilt(t, out, good)
}

// scriptShards reads SHARDS=N from the script.
func scriptShards(t *testing.T, script string) int {
	t.Helper()
	data, err := os.ReadFile(script)
	if err != nil {
		t.Fatal(err)
	}
	m := regexp.MustCompile(`(?m)^SHARDS=(\d+)$`).FindSubmatch(data)
	if m == nil {
		t.Fatalf("%s sets no SHARDS=N", script)
	}
	n, _ := strconv.Atoi(string(m[1]))
	arr := regexp.MustCompile(`(?m)^#SBATCH --array=0-(\d+)$`).FindSubmatch(data)
	if arr == nil || string(arr[1]) != strconv.Itoa(n-1) {
		t.Fatalf("%s: #SBATCH --array must be 0-%d for SHARDS=%d", script, n-1, n)
	}
	return n
}
