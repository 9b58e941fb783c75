package measure

import (
	"bytes"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/segment/labelmap"
)

// WriteTable: the header names the columns asked for and region 1 (two
// pixels of 0.5 um: 0.5 um²) is the first row (worked by hand),
// and a unit that would need CSV quoting or start a formula is refused
// (common practice against CSV injection) instead of written.
func TestWriteTable(t *testing.T) {
	labels := []int32{1, 1, 0, 2}
	regions, err := Regions(labelmap.Map{Pix: labels, Width: 2, Height: 2}, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := WriteTable(&buf, regions, TableOptions{PixelSize: 0.5, Unit: "um"}); err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(buf.String()), "\n")
	if len(lines) != 3 || !strings.HasPrefix(lines[0], "label,area_px,") || !strings.HasSuffix(lines[0], ",feret_max_um") ||
		!strings.HasPrefix(lines[1], "1,2,") || !strings.Contains(lines[1], ",0.5,") {
		t.Errorf("table:\n%s", buf.String())
	}
	for _, bad := range []string{"", "=cmd", "a,b", "m\"", strings.Repeat("m", 17)} {
		if err := WriteTable(&bytes.Buffer{}, regions, TableOptions{PixelSize: 1, Unit: bad}); err == nil {
			t.Errorf("unit %q accepted", bad)
		}
	}
}
