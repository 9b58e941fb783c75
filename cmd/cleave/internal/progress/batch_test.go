package progress

import (
	"bytes"
	"strings"
	"testing"
	"time"
)

// The progress claims no rate before it means something: not when only
// up-to-date images have finished (1000 in 5 ms would read 200000
// images/s), not in the first second; after that it is the worked images
// over the elapsed time, and the time left is the images not finished at
// that rate (worked out by hand: 3 images in 10 s is 0.30 images/s, 7
// left take 23.3 s, shown rounded to 23s).
func TestProgressRate(t *testing.T) {
	for _, c := range []struct {
		total, finished, worked int
		el                      time.Duration
		want                    string
	}{
		{2000, 1000, 0, 5 * time.Millisecond, ""},
		{10, 1, 1, 200 * time.Millisecond, ""},
		{10, 3, 3, 10 * time.Second, "0.30 images/s, about 23s left"},
		{1010, 1003, 3, 10 * time.Second, "0.30 images/s, about 23s left"},
	} {
		if got := rateText(c.total, c.finished, c.worked, c.el); got != c.want {
			t.Errorf("rateText(%d, %d, %d, %v) = %q; want %q", c.total, c.finished, c.worked, c.el, got, c.want)
		}
	}
	// The plain line after a first tick of up-to-date images only.
	var buf bytes.Buffer
	p := NewBatch(&buf, 2000, false)
	p.Add(1000, 0, 0)
	p.Line(1000, 0)
	if got := buf.String(); got != "cleave batch: 1000/2000 images done, 0 failed\n" || strings.Contains(got, "images/s") {
		t.Errorf("first line %q claims a rate", got)
	}
}
