//go:build linux

package hugepages

import (
	"os"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/examples/loudskip"
)

func TestMain(m *testing.M) { loudskip.Main(m, "cmd/cleave/internal/hugepages") }

// After Advise some mapping of the process carries the huge-page advice:
// the kernel lists it as "hg" in the VmFlags of /proc/self/smaps
// (proc(5)). Skipped when the kernel offers no transparent huge pages.
func TestAdviseMarksHeap(t *testing.T) {
	mode, err := os.ReadFile("/sys/kernel/mm/transparent_hugepage/enabled")
	if err != nil || strings.Contains(string(mode), "[never]") {
		loudskip.Skip(t, "transparent huge pages unavailable here (%v, %q)", err, strings.TrimSpace(string(mode)))
	}
	Advise()
	smaps, err := os.ReadFile("/proc/self/smaps")
	if err != nil {
		loudskip.Skip(t, "no /proc/self/smaps: %v", err)
	}
	for _, l := range strings.Split(string(smaps), "\n") {
		if strings.HasPrefix(l, "VmFlags:") && strings.Contains(l+" ", " hg ") {
			return
		}
	}
	t.Error("no mapping carries the huge-page advice (VmFlags hg) after Advise")
}
