package main

import (
	"bytes"
	"context"
	"crypto/rand"
	"encoding/csv"
	"fmt"
	"io/fs"
	"net"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/batch"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/outlock"
)

// TestClusterSlurmReal runs the shipped examples/cluster/slurm-array.sh and
// slurm-rebuild.sh on a real one-node Slurm cluster started for the test
// on localhost (Debian's slurm-wlm and munge; .ci/run installs them): the
// full array with the rebuild as a dependent job (afterany), the outputs of
// two tasks removed as if they never ran, those two tasks resubmitted
// (--array=3,7) and one finished task resubmitted alone (--array=5), the
// rebuild again, then the whole array and the rebuild once more; every
// output is then compared with one plain
// 'cleave batch' run byte for byte, except what legitimately differs:
// the per-stage "seconds" of each STEM.json record, the seconds column of
// manifest.csv and its cell in report.html (timings), the date report.html
// was written, and the holder line
// in .cleave-batch.lock (pid, host and start time of the last run). The
// three corrupt inputs must fail only their own tasks (exit 1), every
// other task exits 0.
//
// The cluster needs root (slurmd starts the jobs) and no cgroups
// (proctrack/linuxproc, task/none). Where the packages are missing or the
// daemons do not come up, the test is skipped with a message that plain
// 'go test ./...' shows.
func TestClusterSlurmReal(t *testing.T) {
	if testing.Short() {
		t.Skip("starts a Slurm cluster")
	}
	for _, b := range []string{"munged", "slurmctld", "slurmd", "sbatch", "squeue", "scontrol", "sinfo", "bash", "go"} {
		if _, err := exec.LookPath(b); err != nil {
			skipLoudly(t, "%s not found: the Slurm example was NOT run on a real cluster (Debian: apt-get install --no-install-recommends slurm-wlm munge)", b)
		}
	}
	if os.Geteuid() != 0 {
		skipLoudly(t, "not root: slurmd needs root to start jobs; the Slurm example was NOT run on a real cluster")
	}
	dir, err := os.MkdirTemp("", "cleave-slurm-") // short: the munge socket path has a length limit
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { os.RemoveAll(dir) })
	c := startSlurm(t, dir)

	// The real command, built from this package.
	bin := filepath.Join(dir, "bin", "cleave")
	if out, err := exec.Command("go", "build", "-o", bin, ".").CombinedOutput(); err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	in, good := makeBatchFolder(t, 20, true)
	params := filepath.Join(dir, "best.json")
	if err := os.WriteFile(params, []byte(`{"superpixels": 150, "classes": 2}`), 0o644); err != nil {
		t.Fatal(err)
	}
	all := slices.Sorted(slices.Values(append(append([]string{}, good...), brokenInputs...)))
	ref := filepath.Join(dir, "ref")
	refRun := exec.Command(bin, "batch", "-q", "--recursive", "--params", params, "--out", ref, in)
	if msg, err := refRun.CombinedOutput(); processExit(err) != exitFail {
		t.Fatalf("plain batch run: %v (want exit 1 for the corrupt inputs): %s", err, msg)
	}

	script, _ := filepath.Abs(filepath.Join("..", "..", "examples", "cluster", "slurm-array.sh"))
	rebuild, _ := filepath.Abs(filepath.Join("..", "..", "examples", "cluster", "slurm-rebuild.sh"))
	shards := scriptShards(t, script)
	out := filepath.Join(dir, "results")
	logs := filepath.Join(dir, "logs")
	os.MkdirAll(logs, 0o755)
	export := "--export=ALL,IN=" + in + ",OUT=" + out + ",PARAMS=" + params + ",CLEAVE=" + bin

	// 1. As documented: the array, then the rebuild after it.
	full := c.sbatch(t, export, "--output="+logs+"/full-%A_%a.log", script)
	rb1 := c.sbatch(t, "--dependency=afterany:"+full, export, "--output="+logs+"/rebuild1-%j.log", rebuild)
	c.wait(t, full, rb1)
	codes := c.exitCodes(t, full)
	if len(codes) != shards {
		t.Fatalf("%d array tasks ran, want %d (SHARDS of the script): %v", len(codes), shards, codes)
	}
	for task, code := range codes {
		want := 0
		for k, f := range all {
			if k%shards == task && strings.HasPrefix(f, "broken-") {
				want = 1
			}
		}
		if code != want {
			log, _ := os.ReadFile(filepath.Join(logs, fmt.Sprintf("full-%s_%d.log", full, task)))
			t.Errorf("task %d exited %d, want %d: %s", task, code, want, log)
		}
	}
	if code := c.exitCodes(t, rb1)[-1]; code != exitFail {
		t.Errorf("first rebuild exited %d, want 1 (corrupt inputs)", code)
	}

	// 2. Tasks 3 and 7 as if they never ran; resubmit them, and task 5
	// (finished) alone; then the rebuild after both.
	removed := 0
	for k, f := range all {
		if s := k % shards; s == 3 || s == 7 {
			stem := strings.TrimSuffix(f, filepath.Ext(f))
			m, _ := filepath.Glob(filepath.Join(out, filepath.FromSlash(stem)+".*"))
			for _, p := range m {
				os.Remove(p)
				removed++
			}
		}
	}
	if removed == 0 {
		t.Fatal("no outputs of tasks 3 and 7 to remove; the resubmission would prove nothing")
	}
	part := c.sbatch(t, "--array=3,7", export, "--output="+logs+"/part-%A_%a.log", script)
	one := c.sbatch(t, "--array=5", export, "--output="+logs+"/one-%A_%a.log", script)
	rb2 := c.sbatch(t, "--dependency=afterany:"+part+":"+one, export, "--output="+logs+"/rebuild2-%j.log", rebuild)
	c.wait(t, part, one, rb2)
	for _, task := range []int{3, 7, 5} {
		job, prefix := part, "part"
		if task == 5 {
			job, prefix = one, "one"
		}
		log, _ := os.ReadFile(filepath.Join(logs, fmt.Sprintf("%s-%s_%d.log", prefix, job, task)))
		n := 0
		for k := range all {
			if k%shards == task {
				n++
			}
		}
		wantShard := fmt.Sprintf("(shard %d/%d of %d, from SLURM_ARRAY_TASK_ID=%d, CLEAVE_SHARDS=%d)", task, shards, len(all), task, shards)
		wantCount := fmt.Sprintf("%d computed now, 0 already up to date", n)
		if task == 5 {
			wantCount = fmt.Sprintf("0 computed now, %d already up to date", n)
		}
		if !strings.Contains(string(log), wantShard) || !strings.Contains(string(log), wantCount) {
			t.Errorf("resubmitted task %d: log lacks %q or %q:\n%s", task, wantShard, wantCount, log)
		}
	}
	if code := c.exitCodes(t, rb2)[-1]; code != exitFail {
		t.Errorf("second rebuild exited %d, want 1 (corrupt inputs)", code)
	}

	// 3. The whole array again: nothing to compute but the corrupt inputs,
	// which are tried again and fail again.
	again := c.sbatch(t, export, "--output="+logs+"/again-%A_%a.log", script)
	rb3 := c.sbatch(t, "--dependency=afterany:"+again, export, "--output="+logs+"/rebuild3-%j.log", rebuild)
	c.wait(t, again, rb3)
	for task := range shards {
		log, _ := os.ReadFile(filepath.Join(logs, fmt.Sprintf("again-%s_%d.log", again, task)))
		if !strings.Contains(string(log), ": 0 computed now") {
			t.Errorf("task %d of the repeated array computed something:\n%s", task, log)
		}
	}
	if code := c.exitCodes(t, rb3)[-1]; code != exitFail {
		t.Errorf("third rebuild exited %d, want 1 (corrupt inputs)", code)
	}
	compareBatchTrees(t, ref, out)
}

// processExit is the exit status in err of exec's Run (0 for nil, -1
// when the command did not run).
func processExit(err error) int {
	if err == nil {
		return 0
	}
	if ee, ok := err.(*exec.ExitError); ok {
		return ee.ExitCode()
	}
	return -1
}

// slurm is a one-node cluster of the test.
type slurm struct {
	env []string // SLURM_CONF set, the caller's SLURM_* variables removed
	dir string
}

// startSlurm starts munged, slurmctld and slurmd in the foreground as
// children of the test, with every file under dir, and stops them at the
// end of the test. It skips the test loudly when they do not come up.
func startSlurm(t *testing.T, dir string) *slurm {
	t.Helper()
	host, err := os.Hostname()
	if err != nil {
		skipLoudly(t, "no host name (%v); the Slurm example was NOT run on a real cluster", err)
	}
	host, _, _ = strings.Cut(host, ".")
	for _, d := range []string{"munge", "state", "spool", "log"} {
		if err := os.MkdirAll(filepath.Join(dir, d), 0o700); err != nil {
			t.Fatal(err)
		}
	}
	// Some of these directories are read by the daemons' user checks and
	// the job's processes: dir itself must be searchable.
	os.Chmod(dir, 0o755)
	os.Chmod(filepath.Join(dir, "munge"), 0o755) // munged wants the socket's folder searchable by all
	key := make([]byte, 1024)
	rand.Read(key)
	keyFile := filepath.Join(dir, "munge", "munge.key")
	if err := os.WriteFile(keyFile, key, 0o600); err != nil {
		t.Fatal(err)
	}
	sock := filepath.Join(dir, "munge", "sock")
	ctldPort, slurmdPort := freePort(t), freePort(t)
	conf := fmt.Sprintf(`ClusterName=cleavetest
SlurmctldHost=%[1]s(127.0.0.1)
SlurmctldPort=%[2]d
SlurmdPort=%[3]d
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
AuthInfo=socket=%[4]s
StateSaveLocation=%[5]s/state
SlurmdSpoolDir=%[5]s/spool
SlurmctldPidFile=%[5]s/slurmctld.pid
SlurmdPidFile=%[5]s/slurmd.pid
SlurmctldLogFile=%[5]s/log/slurmctld.log
SlurmdLogFile=%[5]s/log/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SelectType=select/cons_tres
SelectTypeParameters=CR_CPU
SchedulerType=sched/builtin
MpiDefault=none
ReturnToService=2
MinJobAge=600
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
# The node's size is declared, not measured (config_overrides), so that
# the 16 tasks of the shipped script (2 CPUs, 2G each) run at once; they
# share the machine's real cores.
SlurmdParameters=config_overrides
NodeName=%[1]s NodeAddr=127.0.0.1 CPUs=32 RealMemory=65536 State=UNKNOWN
PartitionName=test Nodes=%[1]s Default=YES MaxTime=INFINITE State=UP
`, host, ctldPort, slurmdPort, sock, dir)
	confFile := filepath.Join(dir, "slurm.conf")
	if err := os.WriteFile(confFile, []byte(conf), 0o644); err != nil {
		t.Fatal(err)
	}
	c := &slurm{dir: dir}
	for _, e := range os.Environ() {
		if !strings.HasPrefix(e, "SLURM_") && !strings.HasPrefix(e, "CLEAVE_") && !strings.HasPrefix(e, "JOB_COMPLETION_INDEX=") {
			c.env = append(c.env, e)
		}
	}
	c.env = append(c.env, "SLURM_CONF="+confFile)

	c.daemon(t, "munged", "-F", "--force", "--key-file="+keyFile, "--socket="+sock,
		"--pid-file="+filepath.Join(dir, "munge", "pid"), "--log-file="+filepath.Join(dir, "log", "munged.log"),
		"--seed-file="+filepath.Join(dir, "munge", "seed"))
	if !pollUntil(10*time.Second, func() bool { _, err := os.Stat(sock); return err == nil }) {
		c.skipWithLogs(t, "munged did not create its socket")
	}
	c.daemon(t, "slurmctld", "-D", "-f", confFile)
	c.daemon(t, "slurmd", "-D", "-f", confFile, "-N", host)
	if !pollUntil(30*time.Second, func() bool {
		out, err := c.cmd("sinfo", "-h", "-o", "%t").Output()
		return err == nil && strings.TrimSpace(string(out)) == "idle"
	}) {
		c.skipWithLogs(t, "the one-node cluster did not become idle within 30 s")
	}
	t.Cleanup(func() {
		// Jobs first (none should be left), then the daemons stop with
		// their processes (daemon's cleanup, in reverse order).
		c.cmd("scancel", "--partition=test").Run()
	})
	return c
}

// daemon starts a daemon in the foreground; the test's cleanup sends it
// SIGTERM, then SIGKILL after 10 s.
func (c *slurm) daemon(t *testing.T, name string, args ...string) {
	t.Helper()
	cmd := c.cmd(name, args...)
	var out bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &out
	// A test binary killed by 'go test -timeout' takes its daemons along:
	// Pdeathsig fires when the thread that started the daemon ends, so
	// that thread is kept, locked to the goroutine that waits for the
	// daemon, for as long as the daemon runs.
	cmd.SysProcAttr = &syscall.SysProcAttr{Pdeathsig: syscall.SIGKILL, Setpgid: true}
	started, done := make(chan error), make(chan struct{})
	go func() {
		runtime.LockOSThread()
		defer runtime.UnlockOSThread()
		if err := cmd.Start(); err != nil {
			started <- err
			return
		}
		started <- nil
		cmd.Wait()
		close(done)
	}()
	if err := <-started; err != nil {
		skipLoudly(t, "%s did not start (%v); the Slurm example was NOT run on a real cluster", name, err)
	}
	t.Cleanup(func() {
		cmd.Process.Signal(syscall.SIGTERM)
		select {
		case <-done:
		case <-time.After(10 * time.Second):
			cmd.Process.Kill()
			<-done
		}
		if t.Failed() && out.Len() > 0 {
			// munged logs every uid-restricted credential Slurm checks
			// ("Unauthorized credential for client"): routine, left out.
			var keep []string
			for _, l := range strings.Split(out.String(), "\n") {
				if !strings.Contains(l, "Unauthorized credential") {
					keep = append(keep, l)
				}
			}
			t.Logf("%s output (end):\n%s", name, logTail(strings.Join(keep, "\n"), 4000))
		}
	})
}

func (c *slurm) cmd(name string, args ...string) *exec.Cmd {
	cmd := exec.Command(name, args...)
	cmd.Env, cmd.Dir = c.env, c.dir
	return cmd
}

func (c *slurm) skipWithLogs(t *testing.T, why string) {
	t.Helper()
	for _, f := range []string{"munged.log", "slurmctld.log", "slurmd.log"} {
		if data, err := os.ReadFile(filepath.Join(c.dir, "log", f)); err == nil {
			t.Logf("%s:\n%s", f, logTail(string(data), 2000))
		}
	}
	skipLoudly(t, "%s; the Slurm example was NOT run on a real cluster (daemon logs in the -v output)", why)
}

func logTail(s string, n int) string {
	if len(s) > n {
		return "..." + s[len(s)-n:]
	}
	return s
}

// sbatch submits and returns the job id.
func (c *slurm) sbatch(t *testing.T, args ...string) string {
	t.Helper()
	out, err := c.cmd("sbatch", append([]string{"--parsable"}, args...)...).CombinedOutput()
	if err != nil {
		t.Fatalf("sbatch %s: %v: %s", strings.Join(args, " "), err, out)
	}
	id, _, _ := strings.Cut(strings.TrimSpace(string(out)), ";")
	return id
}

// wait returns when no job of ids is queued or running, at most 3 minutes.
func (c *slurm) wait(t *testing.T, ids ...string) {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 3*time.Minute)
	defer cancel()
	for ctx.Err() == nil {
		out, err := c.cmd("squeue", "-h", "-o", "%i %T %r", "-j", strings.Join(ids, ",")).Output()
		if err == nil && strings.TrimSpace(string(out)) == "" {
			return
		}
		time.Sleep(250 * time.Millisecond)
	}
	out, _ := c.cmd("squeue", "-o", "%i %T %r").CombinedOutput()
	t.Fatalf("jobs %v still queued after 3 minutes:\n%s", ids, out)
}

var (
	taskIDRe   = regexp.MustCompile(`\bArrayTaskId=(\d+)\b`)
	exitCodeRe = regexp.MustCompile(`\bExitCode=(\d+):(\d+)\b`)
)

// exitCodes returns the exit status of every task of a job (key -1 for a
// job that is not an array) from 'scontrol show job', which keeps ended
// jobs for MinJobAge.
func (c *slurm) exitCodes(t *testing.T, id string) map[int]int {
	t.Helper()
	out, err := c.cmd("scontrol", "-o", "show", "job", id).CombinedOutput()
	if err != nil {
		t.Fatalf("scontrol show job %s: %v: %s", id, err, out)
	}
	codes := map[int]int{}
	for _, line := range strings.Split(strings.TrimSpace(string(out)), "\n") {
		task := -1
		if m := taskIDRe.FindStringSubmatch(line); m != nil {
			task, _ = strconv.Atoi(m[1])
		}
		m := exitCodeRe.FindStringSubmatch(line)
		if m == nil {
			t.Fatalf("no ExitCode in %q", line)
		}
		code, _ := strconv.Atoi(m[1])
		if m[2] != "0" {
			code = 128 + mustAtoi(strconv.Atoi(m[2])) // killed by a signal
		}
		codes[task] = code
	}
	return codes
}

func mustAtoi(v int, err error) int {
	if err != nil {
		panic(err)
	}
	return v
}

func freePort(t *testing.T) int {
	t.Helper()
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	return l.Addr().(*net.TCPAddr).Port
}

func pollUntil(d time.Duration, ok func() bool) bool {
	for end := time.Now().Add(d); time.Now().Before(end); time.Sleep(200 * time.Millisecond) {
		if ok() {
			return true
		}
	}
	return false
}

// compareBatchTrees compares every file of two batch output folders byte
// for byte, except the fields that hold timings or the last holder (see
// TestClusterSlurmReal), and fails when the two hold different files.
func compareBatchTrees(t *testing.T, want, got string) {
	t.Helper()
	a, b := readTree(t, want), readTree(t, got)
	if len(a) < 10 {
		t.Fatalf("only %d files in %s", len(a), want)
	}
	for name := range b {
		if _, ok := a[name]; !ok {
			t.Errorf("%s: not in the plain run's output", name)
		}
	}
	secondsJSON := regexp.MustCompile(`(?s)\n  "seconds": \{[^}]*\},?`)
	secondsCell := regexp.MustCompile(`<td class="n">[0-9.]*</td><td>`)
	reportDate := regexp.MustCompile(`Report written \d{4}-\d\d-\d\d \d\d:\d\d UTC`)
	compared := 0
	for name, x := range a {
		y, ok := b[name]
		switch {
		case !ok:
			t.Errorf("%s: missing", name)
			continue
		case name == outlock.Name:
			continue // the holder: pid, host and start time of the last run
		case strings.HasSuffix(name, ".json") && name != batch.IndexName:
			x, y = mustReplace(t, name, secondsJSON, x, ""), mustReplace(t, name, secondsJSON, y, "")
		case name == "manifest.csv":
			x, y = blankColumn(t, x, "seconds"), blankColumn(t, y, "seconds")
		case name == "report.html":
			x, y = mustReplace(t, name, secondsCell, x, "<td>"), mustReplace(t, name, secondsCell, y, "<td>")
			x, y = mustReplace(t, name, reportDate, x, "Report written"), mustReplace(t, name, reportDate, y, "Report written")
		}
		compared++
		if !bytes.Equal(x, y) {
			t.Errorf("%s differs from the plain run's", name)
		}
	}
	t.Logf("%d files compared", compared)
}

func readTree(t *testing.T, root string) map[string][]byte {
	t.Helper()
	m := map[string][]byte{}
	err := filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		data, err := os.ReadFile(p)
		rel, _ := filepath.Rel(root, p)
		m[filepath.ToSlash(rel)] = data
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// mustReplace replaces every match of re, and fails when there is none:
// a field that was never there is not excluded, it is missing.
func mustReplace(t *testing.T, name string, re *regexp.Regexp, data []byte, with string) []byte {
	t.Helper()
	if !re.Match(data) {
		t.Errorf("%s: no match of %s", name, re)
	}
	return re.ReplaceAll(data, []byte(with))
}

// blankColumn empties the named column of a CSV file (encoding/csv,
// written back the same way for both sides).
func blankColumn(t *testing.T, data []byte, col string) []byte {
	t.Helper()
	recs, err := csv.NewReader(bytes.NewReader(data)).ReadAll()
	if err != nil || len(recs) < 2 {
		t.Fatalf("manifest: %d rows, %v", len(recs), err)
	}
	k := slices.Index(recs[0], col)
	if k < 0 {
		t.Fatalf("no %s column in %q", col, recs[0])
	}
	for _, r := range recs[1:] {
		r[k] = ""
	}
	var b bytes.Buffer
	w := csv.NewWriter(&b)
	w.WriteAll(recs)
	return b.Bytes()
}
