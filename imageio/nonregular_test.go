//go:build unix

package imageio

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
)

// Paths that are not regular files are refused before they are opened:
// a FIFO with no writer (opening it would block for ever), a character
// device that never ends, a folder.
func TestOpenRefusesNonRegular(t *testing.T) {
	dir := t.TempDir()
	fifo := filepath.Join(dir, "pipe.png")
	cases := map[string]string{"/dev/zero": "character device", dir: "folder"}
	if err := syscall.Mkfifo(fifo, 0o644); err == nil {
		cases[fifo] = "named pipe"
	} else {
		t.Logf("no FIFO on this system: %v", err)
	}
	for path, kind := range cases {
		if _, err := os.Stat(path); err != nil {
			continue
		}
		_, err := Load(path, LoadOptions{})
		if !errors.Is(err, ErrNotRegular) || !strings.Contains(err.Error(), kind) || !strings.HasPrefix(err.Error(), path+": ") {
			t.Errorf("%s: %v; want ErrNotRegular naming the file and %q", path, err, kind)
		}
		if _, err := ReadLabels(path); !errors.Is(err, ErrNotRegular) {
			t.Errorf("ReadLabels(%s): %v; want ErrNotRegular", path, err)
		}
	}
}
