package main

import (
	"fmt"
	"testing"

	"github.com/cleave-seg/cleave/examples/loudskip"
)

// skipLoudly skips t and says so where a plain 'go test ./...' shows it:
// the reason, with the test's name, goes into the banner that TestMain
// prints through loudskip.Main on the go command's standard error.
func skipLoudly(t *testing.T, format string, a ...any) {
	t.Helper()
	loudskip.Skip(t, "%s: %s", t.Name(), fmt.Sprintf(format, a...))
}
