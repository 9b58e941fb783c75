package main

import (
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/examples/loudskip"
)

// The shipped cluster examples run for real: each task's command, with the
// task index the scheduler would set, calls this test binary as cleave
// (through TestBatchHelperProcess); after all tasks, --rebuild must find
// every input ok. The index variables are the documented ones: Slurm's
// SLURM_ARRAY_TASK_ID, SLURM_ARRAY_TASK_MIN, SLURM_ARRAY_TASK_MAX and
// SLURM_ARRAY_TASK_COUNT (sbatch(1), OUTPUT ENVIRONMENT VARIABLES) and
// Kubernetes' JOB_COMPLETION_INDEX for Indexed Jobs (Kubernetes
// documentation, Jobs, completion mode).

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

func TestClusterKubernetesIndexedJob(t *testing.T) {
	if testing.Short() {
		t.Skip("end-to-end")
	}
	// Debian's python3-yaml reads the manifest.
	manifest, _ := filepath.Abs(filepath.Join("..", "..", "examples", "cluster", "k8s-indexed-job.yaml"))
	py := `import sys, yaml
d = yaml.safe_load(open(sys.argv[1]))
s = d["spec"]; c = s["template"]["spec"]["containers"][0]
env = {e["name"]: e["value"] for e in c.get("env", [])}
assert s["completionMode"] == "Indexed", s
print(s["completions"]); print(env["SHARDS"]); print(c["command"][0]); print(c["command"][1]); print(c["args"][0])
`
	outp, err := exec.Command("python3", "-c", py, manifest).CombinedOutput()
	if err != nil {
		if strings.Contains(string(outp), "No module named") || strings.Contains(err.Error(), "not found") {
			loudskip.Skip(t, "Debian python3-yaml not installed (apt-get install -y python3-yaml); the Kubernetes example was not run")
		}
		t.Fatalf("reading %s: %v: %s", manifest, err, outp)
	}
	f := strings.SplitN(strings.TrimSpace(string(outp)), "\n", 5)
	if len(f) != 5 || f[0] != f[1] {
		t.Fatalf("completions and SHARDS must agree: %q", f)
	}
	n, _ := strconv.Atoi(f[0])
	data, in, good := clusterData(t)
	// The pod's /data is the test's data folder, with the images in it.
	if err := os.Rename(in, filepath.Join(data, "images")); err != nil {
		t.Fatal(err)
	}
	command := strings.ReplaceAll(f[4], "/data/", data+"/")
	env := fakeCleave(t)
	for i := range n {
		cmd := exec.Command(f[2], f[3], command)
		cmd.Env = append(env, "SHARDS="+f[1], "JOB_COMPLETION_INDEX="+strconv.Itoa(i))
		if msg, err := cmd.CombinedOutput(); err != nil {
			t.Fatalf("index %d: %v: %s", i, err, msg)
		}
	}
	checkRebuilt(t, filepath.Join(data, "results"), good)
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
