package main

import (
	"fmt"
	"os"
	"strings"
	"testing"
)

// skipLoudly skips t and says so where a plain 'go test ./...' shows it.
// The go command prints a passing package's output only with -v, so
// without -v the message also goes to the standard error of the process
// that started the test binary (the go command), through
// /proc/PPID/fd/2, when that is a pipe or a terminal. On a regular file it
// is not written there: the go command's own offset would overwrite it.
func skipLoudly(t *testing.T, format string, a ...any) {
	t.Helper()
	msg := fmt.Sprintf(format, a...)
	if !testing.Verbose() {
		line := fmt.Sprintf("cmd/cleave: SKIPPED %s: %s\n", t.Name(), msg)
		if !writeToParentStderr(line) {
			fmt.Fprint(os.Stderr, line)
		}
	}
	t.Skip("SKIPPED: " + msg)
}

func writeToParentStderr(line string) bool {
	p := fmt.Sprintf("/proc/%d/fd/2", os.Getppid())
	st, err := os.Stat(p)
	if err != nil || st.Mode()&(os.ModeNamedPipe|os.ModeCharDevice|os.ModeSocket) == 0 {
		return false
	}
	f, err := os.OpenFile(p, os.O_WRONLY, 0)
	if err != nil {
		return false
	}
	defer f.Close()
	_, err = f.WriteString(strings.TrimRight(line, "\n") + "\n")
	return err == nil
}
