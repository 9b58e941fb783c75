// Package outlock is the advisory lock batch holds on its output folder
// (flock(2)): exclusive for an unsharded run or a rebuild, shared for the
// shards of one run. The lock file names its holders, so that a refused
// run can say who is in the way.
package outlock

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"time"
)

// Name is the lock file batch keeps at the top of --out. It starts
// with a dot, like the index, so no input's output can take its name. It
// is never removed: removing a lock file while another process waits to
// open it would let two processes lock two different files.
const Name = ".cleave-batch.lock"

// ErrUnsupported is wrapped by tryLock when the system or the file
// system of --out has no advisory file locks.
var ErrUnsupported = errors.New("file locks are not supported here")

// Lock is an advisory lock (flock(2)) on the lock file of a batch output
// folder. An unsharded batch and --rebuild hold it exclusively, since they
// rewrite the manifest and clean up every temporary file; shards hold it
// shared, so that any number of them can write into one folder while no
// unsharded run or rebuild can start. The kernel releases it when the
// process ends, even by kill -9, so a crashed run never leaves the folder
// locked.
type Lock struct {
	f *os.File
	// Unsupported is set when the lock could not be taken because locks
	// are not available; the run goes on unprotected (see Take).
	Unsupported error
}

// LockedError is the refusal when another process holds the lock, with
// the holders the lock file names. Its message names the folder's
// parameter in backquotes (`out`), for the command to word as its flag.
type LockedError struct {
	Dir     string
	Holders []string
}

func (e *LockedError) Error() string {
	who, wait := "another cleave process (it has not yet written who it is)", "it ends (or stop it)"
	if len(e.Holders) == 1 {
		who = e.Holders[0]
	} else if len(e.Holders) > 1 {
		who, wait = strings.Join(e.Holders, "; "), "they end (or stop them)"
	}
	return fmt.Sprintf("`out` %s is in use by %s; wait until %s and run again (a folder takes one batch or rebuild at a time, or any number of shards)", e.Dir, who, wait)
}

// Take takes the lock on dir (which must exist) without waiting:
// exclusive for an unsharded batch or a rebuild, shared for a shard. what
// says who is asking ("cleave batch", "cleave batch --shard 1/4", ...); it
// is written with this process's id, host and start time into the lock
// file, where a refused run reads it to name the holder. A refusal is a
// *LockedError. When the system or the file system
// has no file locks the lock is returned with unsupported set, and the
// caller warns and goes on.
//
// A shard first tries the exclusive lock: when it is the only holder it
// clears the names of earlier holders and then downgrades to shared (not
// atomic in flock(2): a run that takes the exclusive lock in between wins,
// and the shard is refused). When shards already hold it, the shard adds
// its line to theirs; lines of shards that have ended stay until the next
// holder that is alone clears them.
//
// Shards of a job array start together, and one may meet another in the
// moment between its exclusive and its shared lock: a shard that is
// refused tries again every 20 ms for up to shardLockPatience, and only
// then gives up (an unsharded run or a rebuild holds the lock for much
// longer).
func Take(dir string, exclusive bool, what string) (*Lock, error) {
	deadline := time.Now().Add(shardLockPatience)
	for {
		l, err := takeOnce(dir, exclusive, what)
		var le *LockedError
		if exclusive || !errors.As(err, &le) || time.Now().After(deadline) {
			return l, err
		}
		time.Sleep(20 * time.Millisecond)
	}
}

// shardLockPatience bounds how long a shard retries a refused lock.
const shardLockPatience = 5 * time.Second

// takeOnce is one attempt of Take.
func takeOnce(dir string, exclusive bool, what string) (*Lock, error) {
	p := filepath.Join(dir, Name)
	// A link placed at the lock file's name is not followed: the lock file
	// is truncated, and that must never reach a file outside --out.
	f, err := os.OpenFile(p, os.O_RDWR|os.O_CREATE|os.O_APPEND|noFollow, 0o644)
	if err != nil {
		return nil, fmt.Errorf("cannot open the lock file %s (it must be a plain file that cleave made): %v", p, pathErrText(err))
	}
	if st, err := f.Stat(); err != nil || !st.Mode().IsRegular() {
		f.Close()
		return nil, fmt.Errorf("the lock file %s is not a plain file; remove it and run again", p)
	}
	refuse := func() (*Lock, error) {
		data, _ := io.ReadAll(io.LimitReader(f, 1<<16))
		f.Close()
		var holders []string
		for _, line := range strings.Split(string(data), "\n") {
			if line = strings.TrimSpace(line); line != "" {
				holders = append(holders, line)
			}
		}
		return nil, &LockedError{Dir: dir, Holders: holders}
	}
	fail := func(err error) (*Lock, error) {
		if errors.Is(err, ErrUnsupported) {
			return &Lock{f: f, Unsupported: err}, nil
		}
		f.Close()
		return nil, fmt.Errorf("cannot lock %s: %w", p, err)
	}
	alone, err := tryLock(f, true)
	if err != nil {
		return fail(err)
	}
	if !alone && exclusive {
		return refuse()
	}
	if alone {
		if err := f.Truncate(0); err != nil {
			return fail(err)
		}
	}
	if !exclusive {
		ok, err := tryLock(f, false)
		if err != nil {
			return fail(err)
		}
		if !ok {
			return refuse()
		}
	}
	host, _ := os.Hostname()
	if host == "" {
		host = "unknown host"
	}
	line := fmt.Sprintf("%s, pid %d on %s, since %s\n", what, os.Getpid(), host, time.Now().Format(time.RFC3339))
	if _, err := f.WriteString(line); err != nil {
		return fail(err)
	}
	return &Lock{f: f}, nil
}

// Release drops the lock (the process's end would too).
func (l *Lock) Release() {
	if l != nil && l.f != nil {
		unlock(l.f)
		l.f.Close()
		l.f = nil
	}
}

// pathErrText is the error without the path a *fs.PathError repeats.
func pathErrText(err error) string {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return pe.Err.Error()
	}
	return err.Error()
}
