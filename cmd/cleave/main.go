// Command cleave segments microscopy and inspection images by normalized
// cuts. See `cleave help` and the README.
package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"runtime/debug"
	"slices"
	"strings"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/hugepages"
	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
	"github.com/spf13/pflag"
)

// version is the tool version written into every record. A build may set
// it: go build -ldflags "-X main.version=1.2.3" ./cmd/cleave
var version = "0.1.0"

// Exit codes.
const (
	exitOK    = 0
	exitFail  = 1 // the work failed for at least one file
	exitUsage = 2 // wrong usage: bad flag, bad parameter, bad params file
)

// usageError marks errors caused by how the command was called (exit 2).
type usageError struct{ err error }

func (e *usageError) Error() string { return withFlags(e.err).Error() }
func (e *usageError) Unwrap() error { return e.err }

func usagef(format string, a ...any) error { return &usageError{fmt.Errorf(format, a...)} }

// requestErr is err with an error in what was asked (a
// pipeline.RequestError, which the batch, tuning and scoring packages
// return too) as a usage error; other errors are left as they are.
func requestErr(err error) error {
	var re *pipeline.RequestError
	if errors.As(err, &re) {
		return &usageError{re.Err}
	}
	return err
}

func main() {
	// Only the commands that build graphs and solve eigenproblems may
	// gain from huge pages, and only a build with the tag hugepages
	// advises them (hugepages.AtStart); help, version and score start
	// without the advice (and without its large untouched allocation).
	if hugepages.AtStart && len(os.Args) > 1 && slices.Contains([]string{"segment", "batch", "tune", "demo"}, os.Args[1]) {
		hugepages.Advise()
	}
	os.Exit(runWithSignals(func(ctx context.Context) int {
		return run(ctx, os.Args[1:], os.Stdout, os.Stderr)
	}, os.Stderr, os.Exit))
}

// parseCommand parses the flags of the named command. It prints a usage
// error (exit 2) or the help asked for (exit 0) and reports done; when
// done is false the command goes on.
func parseCommand(fs *pflag.FlagSet, args []string, name string, help *bool, printHelp func(io.Writer), stdout, stderr io.Writer) (code int, done bool) {
	fs.SetOutput(io.Discard)
	if err := fs.Parse(args); err != nil {
		fmt.Fprintf(stderr, "cleave %s: %v (run 'cleave %s --help')\n", name, err, name)
		return exitUsage, true
	}
	if *help {
		printHelp(stdout)
		return exitOK, true
	}
	return exitOK, false
}

// command is one subcommand.
type command struct {
	name, summary string
	run           func(ctx context.Context, args []string, stdout, stderr io.Writer) int
	help          func(w io.Writer)
}

func commands() []command {
	return []command{
		{"segment", "segment images into label maps, overlays, region tables and records", runSegment, segmentHelp},
		{"batch", "segment every image in a folder, resumable, with a manifest and a report", runBatch, batchHelp},
		{"score", "compare label maps with ground truth (ARI, VI, Dice, object F1, boundary F, covering)", runScore, scoreHelp},
		{"tune", "choose parameters from images with ground truth (grid, refinement, cross-validation)", runTune, tuneHelp},
		{"demo", "run the whole workflow (tune, segment, score) on an invented scenario", runDemo, demoHelp},
	}
}

const caution = `Caution: cleave's results are not validated for clinical diagnosis or for
safety-critical acceptance decisions. Validate them against your own ground
truth before relying on them, and defer to local codes and licensed practice.
`

func mainHelp(w io.Writer) {
	fmt.Fprintf(w, `cleave %s: segment images by normalized cuts

Usage:
  cleave COMMAND [flags] [arguments]

Commands:
`, version)
	for _, c := range commands() {
		fmt.Fprintf(w, "  %-9s %s\n", c.name, c.summary)
	}
	fmt.Fprintf(w, `  help      show help for a command
  version   print the version

Run 'cleave help COMMAND' or 'cleave COMMAND --help' for a command's flags
and a worked example.

%s`, caution)
}

// run is main without the process: it returns the exit code.
func run(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		mainHelp(stderr)
		return exitUsage
	}
	switch args[0] {
	case "-h", "--help", "help":
		if len(args) > 1 && args[0] == "help" {
			for _, c := range commands() {
				if c.name == args[1] {
					c.help(stdout)
					return exitOK
				}
			}
			switch args[1] {
			case "help":
				mainHelp(stdout)
				return exitOK
			case "version":
				fmt.Fprintln(stdout, "Usage: cleave version (or cleave --version, cleave -v)\n\nPrint cleave's version and, when the build recorded it, the commit it was\nbuilt from. The version is also kept in every record cleave writes.")
				return exitOK
			}
			fmt.Fprintf(stderr, "cleave: no command %q; run 'cleave help' for the list\n", args[1])
			return exitUsage
		}
		mainHelp(stdout)
		return exitOK
	case "-v", "--version", "version":
		fmt.Fprintf(stdout, "cleave %s%s\n", version, buildSuffix())
		return exitOK
	}
	for _, c := range commands() {
		if c.name == args[0] {
			return c.run(ctx, args[1:], stdout, stderr)
		}
	}
	fmt.Fprintf(stderr, "cleave: unknown command %q; run 'cleave help' for the list\n", args[0])
	return exitUsage
}

// buildSuffix adds the VCS revision when the binary was built from a
// checkout.
func buildSuffix() string {
	bi, ok := debug.ReadBuildInfo()
	if !ok {
		return ""
	}
	var rev, dirty string
	for _, s := range bi.Settings {
		switch s.Key {
		case "vcs.revision":
			rev = s.Value
		case "vcs.modified":
			if s.Value == "true" {
				dirty = "+modified"
			}
		}
	}
	if len(rev) > 12 {
		rev = rev[:12]
	}
	if rev == "" {
		return ""
	}
	return " (" + rev + dirty + ")"
}

// exitCode maps an error to the exit code.
func exitCode(err error) int {
	var u *usageError
	switch {
	case err == nil:
		return exitOK
	case errors.As(err, &u):
		return exitUsage
	default:
		return exitFail
	}
}

// flagUsages is the flag list of a command's help, wrapped to 100
// columns, with boolean flags shown as they are used (--force, not
// pflag's --force[=true|false]) and the description column moved left by
// the width that suffix took, so descriptions stay aligned.
func flagUsages(fs *pflag.FlagSet) string {
	const suffix = "[=true|false]"
	text := fs.FlagUsagesWrapped(100)
	lines := strings.Split(text, "\n")
	// col: where descriptions start; the narrowest space before it on
	// flag lines, with the suffix and without.
	col, gapBefore, gapAfter := -1, -1, -1
	for _, l := range lines {
		if !strings.HasPrefix(strings.TrimLeft(l, " "), "-") {
			continue
		}
		name, _, _ := strings.Cut(strings.TrimLeft(l, " "), " ")
		end := strings.Index(l, name) + len(name)
		rest := l[end:]
		c := end + len(rest) - len(strings.TrimLeft(rest, " "))
		if col < 0 {
			col = c
		}
		trimmed := end - strings.Count(name, suffix)*len(suffix)
		if gapBefore < 0 || c-end < gapBefore {
			gapBefore = c - end
		}
		if gapAfter < 0 || c-trimmed < gapAfter {
			gapAfter = c - trimmed
		}
	}
	k := gapAfter - gapBefore
	for i, l := range lines {
		l = strings.Replace(l, suffix, strings.Repeat(" ", len(suffix)), 1)
		if k > 0 && col >= k && len(l) >= col && strings.TrimSpace(l[col-k:col]) == "" {
			l = l[:col-k] + l[col:]
		}
		lines[i] = l
	}
	return strings.Join(lines, "\n")
}
