// Package cluster_test checks the Kubernetes examples beside it: the
// manifests decoded strictly against the Kubernetes API types (k8s.io/api,
// with sigs.k8s.io/yaml: an unknown or misspelt field, or a value of the
// wrong type, is an error), their settings checked against each other, and
// the pod command run as a scratch image would run it: the static binary
// alone in an otherwise empty root, no shell, as the manifest's user, with
// only the environment the manifest and the Job controller give it.
package cluster_test

import (
	"bytes"
	"debug/elf"
	"encoding/csv"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"syscall"
	"testing"

	"github.com/cleave-seg/cleave/examples/loudskip"
	"github.com/cleave-seg/cleave/imageio/scenes"
	batchv1 "k8s.io/api/batch/v1"
	corev1 "k8s.io/api/core/v1"
	"sigs.k8s.io/yaml"
)

// decodeStrict reads a manifest into v, refusing unknown fields, and
// checks its apiVersion and kind.
func decodeStrict(t *testing.T, file, apiVersion, kind string, v any) {
	t.Helper()
	data, err := os.ReadFile(file)
	if err != nil {
		t.Fatal(err)
	}
	if err := yaml.UnmarshalStrict(data, v); err != nil {
		t.Fatalf("%s: %v", file, err)
	}
	var tm struct {
		APIVersion string `json:"apiVersion"`
		Kind       string `json:"kind"`
	}
	yaml.Unmarshal(data, &tm)
	if tm.APIVersion != apiVersion || tm.Kind != kind {
		t.Fatalf("%s is %s %s, want %s %s", file, tm.APIVersion, tm.Kind, apiVersion, kind)
	}
}

type manifests struct {
	job, rebuild batchv1.Job
	pvc          corev1.PersistentVolumeClaim
}

func loadManifests(t *testing.T) *manifests {
	t.Helper()
	m := &manifests{}
	decodeStrict(t, "k8s-indexed-job.yaml", "batch/v1", "Job", &m.job)
	decodeStrict(t, "k8s-rebuild-job.yaml", "batch/v1", "Job", &m.rebuild)
	decodeStrict(t, "k8s-pvc.yaml", "v1", "PersistentVolumeClaim", &m.pvc)
	return m
}

// The strict decoder is what it claims: a misspelt field fails.
func TestStrictDecoderRefusesUnknownFields(t *testing.T) {
	var j batchv1.Job
	err := yaml.UnmarshalStrict([]byte("apiVersion: batch/v1\nkind: Job\nspec:\n  completionMode: Indexed\n  backofLimitPerIndex: 2\n"), &j)
	if err == nil || !strings.Contains(err.Error(), "backofLimitPerIndex") {
		t.Fatalf("misspelt field: %v", err)
	}
	err = yaml.UnmarshalStrict([]byte("apiVersion: batch/v1\nkind: Job\nspec:\n  completions: eight\n"), &j)
	if err == nil {
		t.Fatal("a string for completions was accepted")
	}
}

func envOf(c corev1.Container) map[string]string {
	m := map[string]string{}
	for _, e := range c.Env {
		m[e.Name] = e.Value
	}
	return m
}

// The settings of the manifests agree with each other and with what
// 'cleave batch --shard auto' reads (JOB_COMPLETION_INDEX, CLEAVE_SHARDS).
func TestManifestsAgree(t *testing.T) {
	m := loadManifests(t)
	s := m.job.Spec
	if s.CompletionMode == nil || *s.CompletionMode != batchv1.IndexedCompletion {
		t.Fatal("the Job is not Indexed: its pods get no JOB_COMPLETION_INDEX")
	}
	if s.Completions == nil {
		t.Fatal("no completions")
	}
	c := s.Template.Spec.Containers
	if len(c) != 1 {
		t.Fatalf("%d containers, want 1", len(c))
	}
	env := envOf(c[0])
	if env["CLEAVE_SHARDS"] != strconv.Itoa(int(*s.Completions)) {
		t.Errorf("CLEAVE_SHARDS %q, completions %d: they must agree", env["CLEAVE_SHARDS"], *s.Completions)
	}
	if s.Parallelism != nil && *s.Parallelism > *s.Completions {
		t.Errorf("parallelism %d above completions %d", *s.Parallelism, *s.Completions)
	}
	for name, j := range map[string]*batchv1.Job{"indexed": &m.job, "rebuild": &m.rebuild} {
		ps := j.Spec.Template.Spec
		if ps.RestartPolicy != corev1.RestartPolicyNever {
			t.Errorf("%s: restartPolicy %q, want Never (podFailurePolicy and backoffLimitPerIndex need it)", name, ps.RestartPolicy)
		}
		cmd := ps.Containers[0].Command
		if len(cmd) != 1 || !strings.HasPrefix(cmd[0], "/") || strings.HasSuffix(cmd[0], "sh") {
			t.Errorf("%s: command %q: want the binary's absolute path alone, no shell", name, cmd)
		}
		for _, a := range ps.Containers[0].Args {
			if strings.Contains(a, "$") {
				t.Errorf("%s: argument %q needs expansion; the pod has no shell", name, a)
			}
		}
		if ps.Containers[0].Image != c[0].Image {
			t.Errorf("%s: image %q differs from the indexed Job's %q", name, ps.Containers[0].Image, c[0].Image)
		}
		if len(ps.Volumes) != 1 || ps.Volumes[0].PersistentVolumeClaim == nil || ps.Volumes[0].PersistentVolumeClaim.ClaimName != m.pvc.Name {
			t.Errorf("%s: volumes %+v do not name the claim %q of k8s-pvc.yaml", name, ps.Volumes, m.pvc.Name)
		}
	}
	if !slices.Contains(m.pvc.Spec.AccessModes, corev1.ReadWriteMany) {
		t.Errorf("the claim's access modes %v lack ReadWriteMany: the pods run on several nodes at once", m.pvc.Spec.AccessModes)
	}
	args := c[0].Args
	if k := slices.Index(args, "--shard"); k < 0 || k+1 >= len(args) || args[k+1] != "auto" {
		t.Errorf("args %q lack --shard auto", args)
	}
	// A permanently failed index (exit 1: images failed; 2: usage) ends
	// it at once; evictions are not counted; others are retried.
	if s.BackoffLimitPerIndex == nil || *s.BackoffLimitPerIndex < 1 {
		t.Error("no backoffLimitPerIndex: one failed index would fail the whole Job at once")
	}
	for code, want := range map[int32]batchv1.PodFailurePolicyAction{1: batchv1.PodFailurePolicyActionFailIndex, 2: batchv1.PodFailurePolicyActionFailIndex, 137: ""} {
		if got := policyAction(s.PodFailurePolicy, c[0].Name, code, ""); got != want {
			t.Errorf("exit %d: podFailurePolicy action %q, want %q", code, got, want)
		}
	}
	if got := policyAction(s.PodFailurePolicy, c[0].Name, 1, corev1.DisruptionTarget); got != batchv1.PodFailurePolicyActionIgnore {
		t.Errorf("an evicted pod (DisruptionTarget) that exits 1 (interrupted): action %q, want Ignore", got)
	}
}

// policyAction applies the rules of a pod failure policy in order, as the
// Job controller does (Kubernetes documentation, Jobs, pod failure
// policy: the first matching rule wins; no match counts against the
// backoff limit, "" here), to a pod whose container exited with code and
// that has the condition cond (if not "").
func policyAction(p *batchv1.PodFailurePolicy, container string, code int32, cond corev1.PodConditionType) batchv1.PodFailurePolicyAction {
	if p == nil {
		return ""
	}
	for _, r := range p.Rules {
		if r.OnExitCodes != nil {
			e := r.OnExitCodes
			if e.ContainerName != nil && *e.ContainerName != container {
				continue
			}
			in := slices.Contains(e.Values, code)
			if (e.Operator == batchv1.PodFailurePolicyOnExitCodesOpIn) == in {
				return r.Action
			}
		}
		for _, pc := range r.OnPodConditions {
			if cond != "" && pc.Type == cond {
				return r.Action
			}
		}
	}
	return ""
}

// TestPodWithoutShell runs every index of the Indexed Job as its pod
// would on a FROM scratch image: the binary built as the Containerfile
// builds it (CGO_ENABLED=0, checked static), alone at the command's path
// in an empty root (chroot), the volume at its mount path, the manifest's
// user and group, and no environment but the manifest's and the Job
// controller's JOB_COMPLETION_INDEX. One input is corrupt: its index must
// exit 1, which the pod failure policy fails for good, and the rebuild
// Job's command must then list it as failed and every other input ok.
func TestPodWithoutShell(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the command")
	}
	if os.Geteuid() != 0 {
		loudskip.Skip(t, "not root: the pod command needs chroot and a change of user; only the manifests were checked")
	}
	m := loadManifests(t)
	c := m.job.Spec.Template.Spec.Containers[0]
	sc := m.job.Spec.Template.Spec.SecurityContext
	if sc == nil || sc.RunAsUser == nil || sc.RunAsGroup == nil {
		t.Fatal("the pod names no runAsUser and runAsGroup")
	}
	root := t.TempDir()
	os.Chmod(root, 0o755)
	bin := filepath.Join(root, c.Command[0])
	build := exec.Command("go", "build", "-trimpath", "-ldflags", "-s -w", "-o", bin, "../../cmd/cleave") // as the Containerfile
	build.Env = append(os.Environ(), "CGO_ENABLED=0")
	if out, err := build.CombinedOutput(); err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	if f, err := elf.Open(bin); err != nil {
		t.Fatal(err)
	} else {
		for _, p := range f.Progs {
			if p.Type == elf.PT_INTERP {
				t.Fatal("the binary has an ELF interpreter: it is not static")
			}
		}
		f.Close()
	}
	if len(c.VolumeMounts) != 1 {
		t.Fatalf("%d volume mounts", len(c.VolumeMounts))
	}
	data := filepath.Join(root, c.VolumeMounts[0].MountPath)
	images := filepath.Join(data, "images")
	os.MkdirAll(images, 0o755)
	var good []string
	for k := range 5 {
		name := fmt.Sprintf("nuclei-%d.png", k)
		sc := scenes.Nuclei(scenes.NucleiOptions{Width: 128, Height: 128, Seed: uint64(700 + k)})
		if err := scenes.WritePNG(filepath.Join(images, name), sc.Image()); err != nil {
			t.Fatal(err)
		}
		good = append(good, name)
	}
	os.WriteFile(filepath.Join(images, "corrupt.png"), []byte("\x89PNG\r\n\x1a\nnot really"), 0o644)
	os.WriteFile(filepath.Join(data, "best.json"), []byte(`{"superpixels": 150, "classes": 2}`), 0o644)
	uid, gid := int(*sc.RunAsUser), int(*sc.RunAsGroup)
	filepath.Walk(data, func(p string, _ os.FileInfo, _ error) error { return os.Lchown(p, uid, gid) })

	pod := func(command, args []string, env map[string]string) (int, string) {
		cmd := &exec.Cmd{Path: command[0], Args: append(slices.Clone(command), args...), Dir: "/"}
		for k, v := range env {
			cmd.Env = append(cmd.Env, k+"="+v)
		}
		if cmd.Env == nil {
			cmd.Env = []string{} // not the test's environment
		}
		cmd.SysProcAttr = &syscall.SysProcAttr{Chroot: root, Credential: &syscall.Credential{Uid: uint32(uid), Gid: uint32(gid)}}
		var out bytes.Buffer
		cmd.Stdout, cmd.Stderr = &out, &out
		err := cmd.Run()
		if ee, ok := err.(*exec.ExitError); ok {
			return ee.ExitCode(), out.String()
		} else if err != nil {
			t.Fatalf("%s: %v", command[0], err)
		}
		return 0, out.String()
	}
	n := int(*m.job.Spec.Completions)
	failed := 0
	for i := range n {
		env := envOf(c)
		env["JOB_COMPLETION_INDEX"] = strconv.Itoa(i)
		code, out := pod(c.Command, c.Args, env)
		// The sorted inputs are corrupt.png, nuclei-0.png, ...: share 0 has
		// the corrupt one.
		want := 0
		if i == 0 {
			want = 1
		}
		if code != want || !strings.Contains(out, fmt.Sprintf("shard %d/%d", i, n)) {
			t.Errorf("index %d: exit %d (want %d):\n%s", i, code, want, out)
		}
		if code != 0 {
			failed++
			if a := policyAction(m.job.Spec.PodFailurePolicy, c.Name, int32(code), ""); a != batchv1.PodFailurePolicyActionFailIndex {
				t.Errorf("index %d exit %d: policy action %q, want FailIndex", i, code, a)
			}
		}
	}
	if failed != 1 {
		t.Errorf("%d indexes failed, want 1", failed)
	}
	rc := m.rebuild.Spec.Template.Spec.Containers[0]
	code, out := pod(rc.Command, rc.Args, envOf(rc))
	if code != 1 {
		t.Errorf("rebuild: exit %d, want 1 (a failed image):\n%s", code, out)
	}
	f, err := os.Open(filepath.Join(data, "results", "manifest.csv"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	status := map[string]string{}
	for _, r := range rows[1:] {
		status[r[0]] = r[1]
	}
	for _, g := range good {
		if status[g] != "ok" {
			t.Errorf("%s: status %q, want ok", g, status[g])
		}
	}
	if status["corrupt.png"] != "failed" || len(status) != len(good)+1 {
		t.Errorf("manifest statuses %v: want the corrupt file failed and %d ok", status, len(good))
	}
}

// k8s-wait.sh returns on Failed as on Complete (a fake kubectl answers
// with the conditions a Job gets; kubectl itself is not run here).
func TestWaitScript(t *testing.T) {
	script, _ := filepath.Abs("k8s-wait.sh")
	for _, tc := range []struct {
		name  string
		after string // the conditions the Job has once it has ended
		code  int
		want  string
	}{
		{"complete", "SuccessCriteriaMet Complete", 0, "job/j: Complete"},
		{"failed index", "FailureTarget Failed", 1, "job/j: Failed; failed indexes: 0,3"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			bin := t.TempDir()
			// Two polls with the Job running (no true condition), then ended.
			fake := fmt.Sprintf(`#!/bin/sh
case "$*" in
*failedIndexes*) printf '0,3'; exit 0 ;;
esac
n=$(cat %[1]s/n 2>/dev/null || echo 0); echo $((n+1)) > %[1]s/n
if [ "$n" -lt 2 ]; then exit 0; fi
printf '%%s' '%[2]s'
`, bin, tc.after)
			os.WriteFile(filepath.Join(bin, "kubectl"), []byte(fake), 0o755)
			cmd := exec.Command("sh", script, "j", "0")
			cmd.Env = append(os.Environ(), "PATH="+bin+string(os.PathListSeparator)+os.Getenv("PATH"))
			out, err := cmd.CombinedOutput()
			code := 0
			if ee, ok := err.(*exec.ExitError); ok {
				code = ee.ExitCode()
			} else if err != nil {
				t.Fatal(err)
			}
			polls, _ := os.ReadFile(filepath.Join(bin, "n"))
			if code != tc.code || strings.TrimSpace(string(out)) != tc.want || strings.TrimSpace(string(polls)) != "3" {
				t.Errorf("exit %d, output %q after %s polls; want %d, %q after 3", code, out, polls, tc.code, tc.want)
			}
		})
	}
}
