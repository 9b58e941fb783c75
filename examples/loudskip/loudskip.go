// Package loudskip makes the reference checks that could not run (a
// Debian package missing) visible in plain 'go test ./...' output, where
// t.Skip and t.Log say nothing: for a package that passes, the go command
// shows only its "ok" line and drops what the test binary printed.
//
// A test calls Skip instead of t.Skip; the package's TestMain calls Main,
// which, after the tests, prints every recorded reason in a banner on the
// go command's own standard error (the parent process's, on Linux through
// /proc, when it is a pipe, terminal or socket; os.Stderr elsewhere and
// under -v, where output is shown anyway).
// It imports package testing and is meant for tests only.
package loudskip

import (
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"sync"
	"testing"
	"time"
)

var (
	mu      sync.Mutex
	reasons []string
	once    sync.Once
)

// Skip records why a reference check did not run and skips t with the
// same message.
func Skip(t testing.TB, format string, args ...any) {
	t.Helper()
	msg := fmt.Sprintf(format, args...)
	mu.Lock()
	if !slices.Contains(reasons, msg) {
		reasons = append(reasons, msg)
	}
	mu.Unlock()
	once.Do(uncacheable)
	t.Skip("SKIPPED: " + msg)
}

// Main runs the tests of package pkg and exits with their status, after
// printing the recorded skips. A run with skips is kept out of the go
// command's test cache (see uncacheable), so that a rerun prints them
// again instead of a silent "(cached)".
func Main(m *testing.M, pkg string) {
	code := m.Run()
	mu.Lock()
	list := slices.Clone(reasons)
	mu.Unlock()
	if len(list) > 0 {
		w, closeW := destination()
		bar := strings.Repeat("*", 72)
		fmt.Fprintf(w, "%s\n%s: %d reference check(s) SKIPPED, so NOT run:\n", bar, pkg, len(list))
		for _, r := range list {
			fmt.Fprintf(w, "  - %s\n", r)
		}
		fmt.Fprintf(w, "%s\n", bar)
		closeW()
	}
	os.Exit(code)
}

// destination is the go command's standard error when the tests run
// under it without -v, else os.Stderr.
func destination() (io.Writer, func()) {
	if v := flag.Lookup("test.v"); v != nil && v.Value.String() != "false" {
		return os.Stderr, func() {}
	}
	if runtime.GOOS == "linux" {
		// Only a pipe, terminal or socket: on a regular file the go
		// command's own offset would later overwrite what is written here.
		p := fmt.Sprintf("/proc/%d/fd/2", os.Getppid())
		if st, err := os.Stat(p); err == nil && st.Mode()&(os.ModeNamedPipe|os.ModeCharDevice|os.ModeSocket) != 0 {
			if f, err := os.OpenFile(p, os.O_WRONLY, 0); err == nil {
				return f, func() { f.Close() }
			}
		}
	}
	return os.Stderr, func() {}
}

// uncacheable keeps this run out of the go command's test cache: the go
// command records the files inside the module that a test opens while
// tests run, and neither caches a run nor reuses a cached one when such a
// file was modified less than two seconds before it looks (cmd/go's test
// cache, modTimeCutoff). The file opened here, .loudskip-stamp in the
// package's folder (ignored by git), is stamped a day ahead, so it always
// looks that new.
func uncacheable() {
	p, err := filepath.Abs(stampName)
	if err != nil {
		return
	}
	if err := os.WriteFile(p, []byte("a reference check was skipped; see examples/loudskip\n"), 0o644); err != nil {
		return
	}
	ahead := time.Now().Add(24 * time.Hour)
	_ = os.Chtimes(p, ahead, ahead)
	if f, err := os.Open(p); err == nil {
		f.Close()
	}
}

// stampName is the file uncacheable opens, in the test's working folder
// (the package's folder under go test).
const stampName = ".loudskip-stamp"
