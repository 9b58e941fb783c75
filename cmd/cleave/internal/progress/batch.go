// Package progress reports how far batch and tune are on stderr: on a
// terminal one line (a bar for batch) rewritten in place, otherwise plain
// lines.
package progress

import (
	"fmt"
	"io"
	"os"
	"time"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"
)

// Batch reports how far a batch is: a bar when stderr is a terminal, a
// plain line on each tick otherwise, nothing when quiet.
type Batch struct {
	w     io.Writer
	total int
	start time.Time
	bar   *progressbar.ProgressBar // nil unless stderr is a terminal
	quiet bool
	last  int // finished count at the last plain line
	// worked is the count of finished images that took work (see
	// rateText).
	worked int
	drawn  time.Time // when the bar was last updated
}

// NewBatch reports on w for total images (quiet: nothing).
func NewBatch(w io.Writer, total int, quiet bool) *Batch {
	p := &Batch{w: w, total: total, start: time.Now(), quiet: quiet, last: -1}
	if quiet || total == 0 {
		return p
	}
	if f, ok := w.(*os.File); ok && term.IsTerminal(int(f.Fd())) {
		p.bar = progressbar.NewOptions(total,
			progressbar.OptionSetWriter(w),
			progressbar.OptionSetDescription("cleave batch"),
			progressbar.OptionShowCount(),
			progressbar.OptionSetPredictTime(false),
			progressbar.OptionClearOnFinish(),
			progressbar.OptionSetWidth(30),
		)
	}
	return p
}

// rateText is the speed and the time left, or "" until they mean
// something: the rate counts only the images that took work (worked:
// segmented or failed, not those found up to date, which finish in
// microseconds and would claim thousands of images a second), over the
// time since the start, and is shown from one second on.
func rateText(total, finished, worked int, elapsed time.Duration) string {
	el := elapsed.Seconds()
	if worked == 0 || el < 1 {
		return ""
	}
	rate := float64(worked) / el
	left := float64(total-finished) / rate
	return fmt.Sprintf("%.2f images/s, about %s left", rate, (time.Duration(left) * time.Second).Round(time.Second))
}

// Add is called each time an image is finished; worked counts those that
// were segmented or failed (not found up to date).
func (p *Batch) Add(finished, failed, worked int) {
	p.worked = worked
	if p.bar != nil {
		// At most ten updates a second (images found up to date finish
		// by the thousand); the description first, then the count, each
		// drawn at once, so the bar shows both for this image.
		if finished < p.total && time.Since(p.drawn) < 100*time.Millisecond {
			return
		}
		p.drawn = time.Now()
		if r := rateText(p.total, finished, worked, time.Since(p.start)); r != "" {
			p.bar.Describe("cleave batch " + r)
		}
		_ = p.bar.Set(finished)
	}
}

// Line prints the plain progress line (non-terminal stderr only), unless
// nothing changed since the last one.
func (p *Batch) Line(finished, failed int) {
	if p.quiet || p.bar != nil || p.total == 0 || finished == p.last {
		return
	}
	p.last = finished
	fmt.Fprintf(p.w, "cleave batch: %d/%d images done, %d failed", finished, p.total, failed)
	if r := rateText(p.total, finished, p.worked, time.Since(p.start)); r != "" {
		fmt.Fprintf(p.w, ", %s", r)
	}
	fmt.Fprintln(p.w)
}

// Clear removes the bar before another line is printed.
func (p *Batch) Clear() {
	if p.bar != nil {
		_ = p.bar.Clear()
	}
}

// Finish ends the bar.
func (p *Batch) Finish() {
	if p.bar != nil {
		_ = p.bar.Finish()
	}
}
