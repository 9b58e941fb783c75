package loudskip

import (
	"os/exec"
	"strings"
	"testing"
)

// Plain 'go test' (no -v) on a package with a skipped reference check
// prints the banner with the reason beside its "ok" line, and a second
// run prints it again instead of a silent cached result.
func TestSkipIsLoud(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the go command")
	}
	goCmd, err := exec.LookPath("go")
	if err != nil {
		t.Skip("no go command on PATH")
	}
	for run := range 2 {
		out, err := exec.Command(goCmd, "test", "./testdata/skipper").CombinedOutput()
		if err != nil {
			t.Fatalf("go test: %v\n%s", err, out)
		}
		s := string(out)
		for _, want := range []string{"skipper: 1 reference check(s) SKIPPED, so NOT run:", "  - the reference package is missing (planted by loudskip's test)", "ok  \t"} {
			if !strings.Contains(s, want) {
				t.Errorf("run %d: output lacks %q:\n%s", run+1, want, s)
			}
		}
		if strings.Contains(s, "(cached)") {
			t.Errorf("run %d: a cached result hides the skip:\n%s", run+1, s)
		}
	}
}
