package batch

import (
	"fmt"
	"strconv"
	"strings"
)

// Environment variables read by a shard of auto (ShardFromEnv). The index comes from the
// scheduler: Slurm sets SLURM_ARRAY_TASK_ID in every task of a job array
// (sbatch(1), OUTPUT ENVIRONMENT VARIABLES), Kubernetes sets
// JOB_COMPLETION_INDEX in every pod of an Indexed Job (Kubernetes
// documentation, Jobs, completion mode). The number of shards comes from
// the submitter in shardCountVar: neither scheduler gives the size of the
// whole job to a task of a resubmitted subset (SLURM_ARRAY_TASK_COUNT
// counts only the tasks of that submission; a pod does not see
// completions).
const (
	slurmIndexVar = "SLURM_ARRAY_TASK_ID"
	slurmMaxVar   = "SLURM_ARRAY_TASK_MAX"
	k8sIndexVar   = "JOB_COMPLETION_INDEX"
	shardCountVar = "CLEAVE_SHARDS"
	ShardAuto     = "auto"
)

// ShardFromEnv returns the share I of N of a shard given as auto: I is the task
// index set by the scheduler (slurmIndexVar or k8sIndexVar, exactly one of
// them), N is shardCountVar. Empty variables count as unset. Missing,
// malformed or inconsistent values (both indices set, I outside 0..N-1, a
// Slurm array whose highest task id is N or more) are RequestErrors, so
// that a task never quietly processes a share other than its own. from
// names the variables used, for the log.
func ShardFromEnv(lookup func(string) (string, bool)) (i, n int, from string, err error) {
	get := func(name string) string {
		v, _ := lookup(name)
		return v
	}
	nv := get(shardCountVar)
	if nv == "" {
		return 0, 0, "", requestf("`shard` auto needs %s, the number of shards (the size of the whole array, %s 0 to N-1, or the Job's completions): it is not set", shardCountVar, slurmIndexVar)
	}
	n, err = strconv.Atoi(nv)
	if err != nil || n < 1 {
		return 0, 0, "", requestf("`shard` auto: %s must be a whole number of shards, 1 or more, got %q", shardCountVar, nv)
	}
	sv, kv := get(slurmIndexVar), get(k8sIndexVar)
	var name, v string
	switch {
	case sv != "" && kv != "":
		return 0, 0, "", requestf("`shard` auto: both %s=%s (Slurm) and %s=%s (Kubernetes) are set; unset one, or give `shard` I/N", slurmIndexVar, sv, k8sIndexVar, kv)
	case sv != "":
		name, v = slurmIndexVar, sv
	case kv != "":
		name, v = k8sIndexVar, kv
	default:
		return 0, 0, "", requestf("`shard` auto: neither %s (a Slurm job array task) nor %s (a Kubernetes Indexed Job pod) is set; run it as an array task or give `shard` I/N", slurmIndexVar, k8sIndexVar)
	}
	i, err = strconv.Atoi(v)
	if err != nil {
		return 0, 0, "", requestf("`shard` auto: %s must be a whole number, got %q", name, v)
	}
	if i < 0 || i >= n {
		return 0, 0, "", requestf("`shard` auto: %s=%d is outside 0 to %d (%s=%d): number the tasks from 0 to %d", name, i, n-1, shardCountVar, n, n-1)
	}
	if name == slurmIndexVar {
		if mv := get(slurmMaxVar); mv != "" {
			if m, err := strconv.Atoi(mv); err == nil && m >= n {
				return 0, 0, "", requestf("`shard` auto: the array reaches task %d (%s) but %s=%d: every task must be 0 to %d", m, slurmMaxVar, shardCountVar, n, n-1)
			}
		}
	}
	return i, n, fmt.Sprintf("%s=%d, %s=%d", name, i, shardCountVar, n), nil
}

// Shard reads the share of a run: "" for the whole list (0 of 1), I/N
// with 0 <= I < N, or auto (ShardFromEnv, reading the variables through
// lookup). from names the variables auto used. Errors are RequestErrors
// naming `shard`.
func Shard(spec string, lookup func(string) (string, bool)) (i, n int, from string, err error) {
	switch spec {
	case "":
		return 0, 1, "", nil
	case ShardAuto:
		return ShardFromEnv(lookup)
	}
	a, b, ok := strings.Cut(strings.TrimSpace(spec), "/")
	if ok {
		var e1, e2 error
		i, e1 = strconv.Atoi(a)
		n, e2 = strconv.Atoi(b)
		if e1 == nil && e2 == nil && n >= 1 && i >= 0 && i < n {
			return i, n, "", nil
		}
	}
	return 0, 0, "", requestf("`shard` must be I/N with 0 <= I < N (e.g. 0/4 for the first of four tasks), got %q", spec)
}
